"""Python client for the cohop planning service.

Depends on `requests` and the standard library only.
"""

from cohop_client.errors import (CohopError, FieldError, InvalidRequest, RequestTimeout, ServerError,
                                 TransportError)
from cohop_client.results import Assessment, Finding, Health, Profile, Rule, SystemResult
from cohop_client.session import Client

__all__ = [
    "Client", "CohopError", "TransportError", "RequestTimeout", "InvalidRequest", "ServerError", "FieldError",
    "Assessment", "SystemResult", "Finding", "Health", "Profile", "Rule",
]
