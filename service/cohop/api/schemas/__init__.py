"""marshmallow schemas: requests load into cohop.site dataclasses; responses dump."""
