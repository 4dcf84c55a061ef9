"""Prometheus metrics with the official client; multiprocess-aware under gunicorn.

Each app has its own registry (tests build many apps). Under gunicorn,
PROMETHEUS_MULTIPROC_DIR makes the client write values to shared files and
the endpoint aggregates every worker's (`cohop.gunicorn_conf.on_starting` sets it up).
"""

from __future__ import annotations

import os
import time

from flask import Flask, Response, g, request
from prometheus_client import CONTENT_TYPE_LATEST, CollectorRegistry, Counter, Gauge, Histogram, generate_latest

LATENCY_BUCKETS = (0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30, 60, 120)


class Metrics:
    def __init__(self):
        self.registry = CollectorRegistry(auto_describe=True)
        self.requests = Counter("cohop_requests_total", "HTTP requests by route, method and status",
                                ["route", "method", "status"], registry=self.registry)
        self.latency = Histogram("cohop_request_duration_seconds", "HTTP request latency by route", ["route"],
                                 buckets=LATENCY_BUCKETS, registry=self.registry)
        self.solve_seconds = Histogram("cohop_solve_duration_seconds", "Solve time by kind and status",
                                       ["kind", "status"], buckets=LATENCY_BUCKETS, registry=self.registry)
        self.solves_in_progress = Gauge("cohop_solves_in_progress", "Solves running now",
                                        multiprocess_mode="livesum", registry=self.registry)
        self.rejections = Counter("cohop_rejections_total", "Requests turned away, by reason", ["reason"],
                                  registry=self.registry)

    def exposition(self) -> bytes:
        if os.environ.get("PROMETHEUS_MULTIPROC_DIR"):
            from prometheus_client import multiprocess

            registry = CollectorRegistry()
            multiprocess.MultiProcessCollector(registry)
            return generate_latest(registry)
        return generate_latest(self.registry)


def register(app: Flask) -> Metrics:
    metrics = Metrics()
    app.extensions.setdefault("cohop", {})["metrics"] = metrics

    @app.before_request
    def _start():
        g.cohop_started = time.monotonic()

    @app.after_request
    def _count(response):
        rule = request.url_rule.rule if request.url_rule is not None else "unmatched"
        metrics.requests.labels(route=rule, method=request.method, status=str(response.status_code)).inc()
        metrics.latency.labels(route=rule).observe(time.monotonic() - g.get("cohop_started", time.monotonic()))
        if response.status_code in (401, 413, 503):
            reason = {401: "unauthorised", 413: "body too large", 503: "unavailable"}[response.status_code]
            if response.status_code != 503 or "Retry-After" not in response.headers:
                metrics.rejections.labels(reason=reason).inc()
        return response

    @app.get("/metrics")
    def _metrics():
        return Response(metrics.exposition(), mimetype=CONTENT_TYPE_LATEST)

    return metrics
