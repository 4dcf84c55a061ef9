"""Gunicorn configuration (used by `cohop serve` as `python:cohop.gunicorn_conf`, and by deploy/).

Everything comes from the COHOP_ settings (`cohop.config`): workers times
CP-SAT threads stay within the cores the service is given; the worker
timeout exceeds the longest solve; `max_requests` with jitter recycles
workers against slow growth; SIGTERM lets in-flight requests finish within
the graceful timeout (readiness fails meanwhile).
"""

import os
import shutil
import signal
import sys
import tempfile

from cohop.config import ConfigError, from_env

try:
    _settings = from_env()
except ConfigError as _err:
    sys.exit(f"cohop: bad configuration: {_err}")

bind = os.environ.get("COHOP_BIND", _settings.bind)
workers = _settings.gunicorn_workers
worker_class = "gthread"
threads = _settings.threads
timeout = int(_settings.request_timeout_s)
graceful_timeout = int(_settings.graceful_timeout_s)
keepalive = 5
max_requests = _settings.max_requests
max_requests_jitter = _settings.max_requests_jitter
wsgi_app = "cohop.api.app:create_app_from_env()"
accesslog = None  # the app writes JSON access lines itself
errorlog = "-"
loglevel = _settings.log_level.lower()
proc_name = "cohop"


def on_starting(server):
    """A fresh directory for the Prometheus client's multiprocess files."""
    path = os.environ.get("PROMETHEUS_MULTIPROC_DIR")
    if not path:
        path = tempfile.mkdtemp(prefix="cohop-metrics-")
        os.environ["PROMETHEUS_MULTIPROC_DIR"] = path
    else:
        shutil.rmtree(path, ignore_errors=True)
        os.makedirs(path, exist_ok=True)


def post_worker_init(worker):
    """Readiness fails from SIGTERM on, while gunicorn lets in-flight requests finish."""
    from cohop.api.lifecycle import mark_draining

    previous = signal.getsignal(signal.SIGTERM)

    def draining(signum, frame):
        mark_draining()
        if callable(previous):
            previous(signum, frame)

    signal.signal(signal.SIGTERM, draining)
    if _settings.isolate_solves:
        from cohop.isolation import warm

        warm()  # the solver fork server starts with the worker, so memory is steady from the first request


def child_exit(server, worker):
    from prometheus_client import multiprocess

    multiprocess.mark_process_dead(worker.pid)
