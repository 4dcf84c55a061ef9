"""Run the service in-process behind a `requests` transport adapter.

The command line uses this when no server address is given, so that the
client, its errors and its output are exactly those of the HTTP path.
"""

from __future__ import annotations

from urllib.parse import urlsplit

import requests
from requests.adapters import BaseAdapter
from requests.structures import CaseInsensitiveDict
from werkzeug.test import Client as WsgiClient

EMBEDDED_URL = "http://cohop.embedded"


class WsgiAdapter(BaseAdapter):
    """Sends a prepared `requests` request to a WSGI app and returns its answer."""

    def __init__(self, app):
        super().__init__()
        self._client = WsgiClient(app)

    def send(self, request, stream=False, timeout=None, verify=True, cert=None, proxies=None):
        parts = urlsplit(request.url)
        answer = self._client.open(parts.path, method=request.method, query_string=parts.query,
                                   headers=dict(request.headers), data=request.body or b"")
        resp = requests.Response()
        resp.status_code = answer.status_code
        resp.headers = CaseInsensitiveDict(answer.headers)
        resp._content = answer.get_data()
        resp.url = request.url
        resp.request = request
        resp.encoding = "utf-8"
        return resp

    def close(self):
        pass


def embedded_session(app) -> requests.Session:
    session = requests.Session()
    session.mount(EMBEDDED_URL, WsgiAdapter(app))
    return session
