"""Gunicorn settings for cohop, from the COHOP_ settings (`cohop.config`).

`cohop.server` (what `cohop serve` and the image run) loads `options()`; the
module-level names make the same settings usable as
`gunicorn -c python:cohop.gunicorn_conf` (same workers, limits and error
bodies, but gunicorn's own arbiter: no drain delay after SIGTERM).

- Workers times CP-SAT threads stay within the cores the service is given.
- `cohop.server.CohopWorker` is gunicorn's threaded worker with a client
  timeout: a request's headers must arrive within COHOP_CLIENT_TIMEOUT_S,
  each body read and each write must progress within it, and a connection
  that has sent nothing waits in the poller, not in a thread.
- The worker timeout (the heartbeat of the worker's main loop) exceeds the
  longest solve; `max_requests` with jitter recycles workers against slow
  growth; in-flight requests get COHOP_GRACEFUL_TIMEOUT_S to finish.
- Gunicorn's request limits (below) are set so that no request this API
  accepts comes near them; what they refuse is answered with problem details.
"""

from __future__ import annotations

import os
import shutil
import sys
import tempfile

from cohop.config import ConfigError, Settings, from_env

#: The request line: method, path and version. The API's paths are short and take no query, so 4094 bytes
#: (gunicorn's default) leaves a wide margin; longer lines get 414.
LIMIT_REQUEST_LINE = 4094
#: Header fields per request: clients send under 10, proxies add a handful (X-Forwarded-*, tracing); more get 431.
LIMIT_REQUEST_FIELDS = 100
#: Bytes of one header field (name and value): a bearer token or a trace header is well under it; longer get 431.
LIMIT_REQUEST_FIELD_SIZE = 8190


def options(settings: Settings) -> dict:
    """Gunicorn's settings (its names) for these COHOP_ settings."""
    return {
        "bind": [settings.bind],
        "workers": settings.gunicorn_workers,
        "worker_class": "cohop.server.CohopWorker",
        "threads": settings.threads,
        "timeout": int(settings.request_timeout_s),
        "graceful_timeout": int(settings.graceful_timeout_s),
        "keepalive": 5,
        "limit_request_line": LIMIT_REQUEST_LINE,
        "limit_request_fields": LIMIT_REQUEST_FIELDS,
        "limit_request_field_size": LIMIT_REQUEST_FIELD_SIZE,
        "max_requests": settings.max_requests,
        "max_requests_jitter": settings.max_requests_jitter,
        "wsgi_app": "cohop.api.app:create_app_from_env()",
        "accesslog": None,  # the app writes JSON access lines itself
        "errorlog": "-",
        "loglevel": settings.log_level.lower(),
        "proc_name": "cohop",
        "control_socket_disable": True,  # its shutdown command would skip the drain; nothing here uses it
        "on_starting": on_starting,
        "post_worker_init": warm_solver_fork_server if settings.isolate_solves else no_warm_up,
        "child_exit": child_exit,
    }


def on_starting(server):
    """A fresh directory for the Prometheus client's multiprocess files."""
    path = os.environ.get("PROMETHEUS_MULTIPROC_DIR")
    if not path:
        path = tempfile.mkdtemp(prefix="cohop-metrics-")
        os.environ["PROMETHEUS_MULTIPROC_DIR"] = path
    else:
        shutil.rmtree(path, ignore_errors=True)
        os.makedirs(path, exist_ok=True)


def warm_solver_fork_server(worker):
    """The solver fork server starts with the worker, so memory is steady from the first request."""
    from cohop.isolation import warm

    warm()


def no_warm_up(worker):
    """Solves run in the worker itself (COHOP_ISOLATE_SOLVES=false): nothing to start."""


def child_exit(server, worker):
    from prometheus_client import multiprocess

    multiprocess.mark_process_dead(worker.pid)


try:
    _settings = from_env()
except ConfigError as _err:
    sys.exit(f"cohop: bad configuration: {_err}")

globals().update(options(_settings))
