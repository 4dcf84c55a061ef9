"""The client: a small session-like object with one method per endpoint."""

from __future__ import annotations

import json
import time
from typing import Any, Callable, TypeVar
from urllib.parse import quote

import requests
from requests.adapters import HTTPAdapter, Retry  # urllib3's Retry, as requests exposes it

from cohop_client.errors import (CohopError, InvalidRequest, NoFeasiblePlan, RequestTimeout, ServerError,
                                 TransportError)
from cohop_client.results import Assessment, Health, Plan, Profile, Replan

DEFAULT_TIMEOUT_S = 60.0
T = TypeVar("T")


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
                 session: requests.Session | None = None, retries: int = 3, backoff_s: float = 0.25,
                 max_wait_s: float = 30.0):
        """`retries`: how often to repeat a request that got 503 (service busy) or could not connect;
        every endpoint is a pure computation, so repeating is safe. Waits follow the server's
        Retry-After, else exponential backoff from `backoff_s` with jitter, each at most `max_wait_s`.
        The retrying is urllib3's `Retry`, mounted for `base_url` on the session unless the caller's
        session already has its own transport for it (an in-process one, say)."""
        self.base_url = base_url.rstrip("/")
        self.timeout_s = timeout_s
        self.retries = max(0, retries)
        self._sleep = time.sleep
        self._own_session = session is None
        self._session = session or requests.Session()
        if not _has_own_transport(self._session, self.base_url):
            retry = _retry_policy(self, self.retries, backoff_s, max_wait_s)
            self._session.mount(self.base_url + "/", HTTPAdapter(max_retries=retry))
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
        return self._typed(Health.from_json, self._call("GET", "/v1/health"))

    def profiles(self) -> list[Profile]:
        return self._typed(lambda body: [Profile.from_json(p) for p in body], self._call("GET", "/v1/profiles"))

    def profile(self, profile_id: str) -> Profile:
        path = "/v1/profiles/" + quote(profile_id, safe="")
        return self._typed(Profile.from_json, self._call("GET", path))

    def assess(self, site: dict, *, simulation: dict | None = None, detail: str | None = None) -> Assessment:
        """Evaluate the site's hop sets. `simulation`: {"trials_per_system": n, "seed": s}."""
        body: dict[str, Any] = {"site": site}
        if simulation is not None:
            body["simulation"] = simulation
        if detail is not None:
            body["detail"] = detail
        return self._typed(Assessment.from_json, self._call("POST", "/v1/assessments", body))

    def plan(self, site: dict, *, requirements: dict | None = None, search: dict | None = None,
             baselines: list[str] | None = None, detail: str | None = None) -> Plan:
        """Plan every system's hop set. `search`: {"time_limit_s": s, "seed": n}; `baselines`: names or ["all"].

        Raises NoFeasiblePlan (with the conflicting requirements) when no plan meets them."""
        body: dict[str, Any] = {"site": site}
        for key, value in (("requirements", requirements), ("search", search), ("baselines", baselines),
                           ("detail", detail)):
            if value is not None:
                body[key] = value
        return self._typed(Plan.from_json, self._call("POST", "/v1/plans", body))

    def replan(self, site: dict, current: dict, *, mode: dict | None = None, requirements: dict | None = None,
               search: dict | None = None, detail: str | None = None) -> Replan:
        """Re-plan after the site changed. `current`: {"systems": [{"system", "hop_set", "sequence"}]};
        `mode`: {"kind": "tolerance", "tolerance": 0.05} or {"kind": "budget", "max_changes": n}."""
        body: dict[str, Any] = {"site": site, "current": current}
        for key, value in (("mode", mode), ("requirements", requirements), ("search", search), ("detail", detail)):
            if value is not None:
                body[key] = value
        return self._typed(Replan.from_json, self._call("POST", "/v1/replans", body))

    def hop_tables(self, site: dict, plan: Any) -> dict:
        """The hop tables (README, "Hop tables") of a plan or re-plan (typed, or its JSON answer) on `site`."""
        answer = getattr(plan, "raw", plan)
        return self._call("POST", "/v1/hop-tables", {"site": site, "answer": answer})

    # --- transport ---------------------------------------------------------

    def _typed(self, build: Callable[[Any], T], body: Any) -> T:
        try:
            return build(body)
        except (KeyError, TypeError, ValueError, AttributeError) as err:
            raise TransportError(f"the answer from {self.base_url} does not have the expected shape "
                                 f"({type(err).__name__}: {err}); is this a cohop service of a matching "
                                 "version?", url=self.base_url) from err

    def _call(self, method: str, path: str, body: dict | None = None) -> Any:
        return _decode(self._send(method, path, body), self.base_url + path)

    def _send(self, method: str, path: str, body: dict | None) -> requests.Response:
        url = self.base_url + path
        try:
            resp = self._session.request(method, url, json=body, headers=self._headers, timeout=self.timeout_s)
        except requests.Timeout as err:
            raise RequestTimeout(f"no answer from {url} within {self.timeout_s:g} s", url=url) from err
        except requests.RequestException as err:
            if _caused_by_timeout(err):  # requests reports a stall while reading the body this way
                raise RequestTimeout(f"the answer from {url} stalled beyond {self.timeout_s:g} s", url=url) from err
            raise TransportError(f"could not reach {url}: {err}", url=url) from err
        return resp


class _Retry(Retry):
    """urllib3's Retry whose waits go through the client's sleeper (tests replace it) and never exceed
    the client's `max_wait_s`, Retry-After included."""

    client: "Client | None" = None
    max_wait_s: float = 30.0

    def sleep(self, response=None) -> None:
        wait = self.get_retry_after(response) if response is not None and self.respect_retry_after_header else None
        if wait is None:
            wait = self.get_backoff_time()
        sleeper = self.client._sleep if self.client is not None else time.sleep
        sleeper(min(max(0.0, wait), self.max_wait_s))


def _retry_policy(client: "Client", retries: int, backoff_s: float, max_wait_s: float) -> Retry:
    """503 and connection failures retried on every method (all endpoints are pure computations); a read
    that times out is not (the server may still be working on it)."""
    policy = type("ClientRetry", (_Retry,), {"client": client, "max_wait_s": max_wait_s})
    return policy(total=retries, connect=retries, read=0, status=retries, other=0, allowed_methods=None,
                  status_forcelist=(503,), backoff_factor=backoff_s, backoff_jitter=backoff_s,
                  backoff_max=max_wait_s, respect_retry_after_header=True, raise_on_status=False,
                  raise_on_redirect=False)


def _has_own_transport(session: requests.Session, base_url: str) -> bool:
    """True if the session already routes base_url through an adapter of the caller's (not the default)."""
    return any(base_url.startswith(prefix) for prefix in session.adapters if prefix not in ("http://", "https://"))


def _caused_by_timeout(err: BaseException) -> bool:
    """True if a timeout (of requests or of the library beneath it) is among the error's causes."""
    seen = set()
    stack = [err]
    while stack:
        e = stack.pop()
        if id(e) in seen:
            continue
        seen.add(id(e))
        if isinstance(e, (requests.Timeout, TimeoutError)) or "Timeout" in type(e).__name__:
            return True
        stack.extend(a for a in getattr(e, "args", ()) if isinstance(a, BaseException))
        stack.extend(c for c in (e.__cause__, e.__context__) if c is not None)
    return False


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
    if problem.get("type") in NoFeasiblePlan.PROBLEM_TYPES:
        cls = NoFeasiblePlan
    raise cls(message, status=resp.status_code, problem=problem, url=url)


def _describe(status: int, problem: dict) -> str:
    title = problem.get("title") or f"HTTP {status}"
    detail = problem.get("detail")
    text = f"{status} {title}" + (f": {detail}" if detail else "")
    errors = problem.get("errors") or problem.get("conflicts") or []
    if errors:
        shown = "; ".join(f"{e.get('pointer', e.get('requirement', ''))}: {e.get('detail', '')}" for e in errors[:5])
        more = f" (and {len(errors) - 5} more)" if len(errors) > 5 else ""
        text += f" [{shown}{more}]"
    return text


__all__ = ["Client", "CohopError"]
