"""HTTP layer: app factory, views, schemas, problem details."""

from cohop.api.app import create_app

__all__ = ["create_app"]
