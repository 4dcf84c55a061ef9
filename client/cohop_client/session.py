"""The client: a small session-like object with one method per endpoint."""

from __future__ import annotations

import json
from typing import Any

import requests

from cohop_client.errors import CohopError, InvalidRequest, RequestTimeout, ServerError, TransportError
from cohop_client.results import Assessment, Health, Profile

DEFAULT_TIMEOUT_S = 60.0


class Client:
    """Talks to one cohop service.

    >>> with Client("http://127.0.0.1:8080") as api:   # doctest: +SKIP
    ...     result = api.assess(site)
    ...     print(result.worst_system)

    `session` lets a caller supply its own `requests.Session` (proxies,
    certificates, or an in-process transport); the client closes only a
    session it created itself.
    """

    def __init__(self, base_url: str, *, timeout_s: float = DEFAULT_TIMEOUT_S, token: str | None = None,
                 session: requests.Session | None = None):
        self.base_url = base_url.rstrip("/")
        self.timeout_s = timeout_s
        self._own_session = session is None
        self._session = session or requests.Session()
        self._headers = {"Accept": "application/json, application/problem+json"}
        if token:
            self._headers["Authorization"] = f"Bearer {token}"

    def __enter__(self) -> "Client":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        if self._own_session:
            self._session.close()

    # --- endpoints ---------------------------------------------------------

    def health(self) -> Health:
        return Health.from_json(self._call("GET", "/v1/health"))

    def profiles(self) -> list[Profile]:
        return [Profile.from_json(p) for p in self._call("GET", "/v1/profiles")]

    def profile(self, profile_id: str) -> Profile:
        return Profile.from_json(self._call("GET", f"/v1/profiles/{profile_id}"))

    def assess(self, site: dict, *, simulation: dict | None = None, detail: str | None = None) -> Assessment:
        """Evaluate the site's hop sets. `simulation`: {"trials_per_system": n, "seed": s}."""
        body: dict[str, Any] = {"site": site}
        if simulation is not None:
            body["simulation"] = simulation
        if detail is not None:
            body["detail"] = detail
        return Assessment.from_json(self._call("POST", "/v1/assessments", body))

    # --- transport ---------------------------------------------------------

    def _call(self, method: str, path: str, body: dict | None = None) -> Any:
        url = self.base_url + path
        try:
            resp = self._session.request(method, url, json=body, headers=self._headers, timeout=self.timeout_s)
        except requests.Timeout as err:
            raise RequestTimeout(f"no answer from {url} within {self.timeout_s:g} s", url=url) from err
        except requests.RequestException as err:
            raise TransportError(f"could not reach {url}: {err}", url=url) from err
        return _decode(resp, url)


def _decode(resp: requests.Response, url: str) -> Any:
    try:
        payload = resp.json()
    except (ValueError, json.JSONDecodeError):
        payload = None
    if resp.status_code < 400:
        if payload is None:
            raise TransportError(f"{url} answered {resp.status_code} without a JSON body", status=resp.status_code,
                                 url=url)
        return payload
    problem = payload if isinstance(payload, dict) else {}
    message = _describe(resp.status_code, problem)
    cls = ServerError if resp.status_code >= 500 else InvalidRequest
    raise cls(message, status=resp.status_code, problem=problem, url=url)


def _describe(status: int, problem: dict) -> str:
    title = problem.get("title") or f"HTTP {status}"
    detail = problem.get("detail")
    text = f"{status} {title}" + (f": {detail}" if detail else "")
    errors = problem.get("errors") or []
    if errors:
        shown = "; ".join(f"{e.get('pointer', '')}: {e.get('detail', '')}" for e in errors[:5])
        more = f" (and {len(errors) - 5} more)" if len(errors) > 5 else ""
        text += f" [{shown}{more}]"
    return text


__all__ = ["Client", "CohopError"]
