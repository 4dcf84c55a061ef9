"""Service configuration from environment variables (prefix COHOP_), validated at start.

Every setting has a default that suits one small host; the cores the service
may use come from COHOP_CPUS, else from the cgroup CPU limit, else from the
CPUs this process may run on (never from the host's core count alone).
Gunicorn workers times CP-SAT threads per solve must not exceed those cores.
"""

from __future__ import annotations

import math
import os
from dataclasses import asdict, dataclass, field
from pathlib import Path

PREFIX = "COHOP_"
MAX_DRAIN_S = 300.0  # a longer drain only delays every rollout
MAX_CLIENT_TIMEOUT_S = 600.0


class ConfigError(ValueError):
    """A bad setting; the message names the variable and what it accepts."""


def cgroup_cpus(root: Path = Path("/sys/fs/cgroup")) -> float | None:
    """CPUs granted by the cgroup limit (v2 cpu.max, or v1 cfs quota/period); None if unlimited."""
    v2 = root / "cpu.max"
    try:
        if v2.exists():
            quota, period = v2.read_text().split()[:2]
            return None if quota == "max" else int(quota) / int(period)
        q, p = root / "cpu" / "cpu.cfs_quota_us", root / "cpu" / "cpu.cfs_period_us"
        if q.exists() and p.exists():
            quota, period = int(q.read_text()), int(p.read_text())
            return None if quota <= 0 else quota / period
    except (OSError, ValueError):
        return None
    return None


def available_cpus() -> int:
    """Cores the service may use: the cgroup limit or the affinity mask, whichever is smaller."""
    affinity = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)
    limit = cgroup_cpus()
    return max(1, min(affinity, math.floor(limit)) if limit else affinity)


@dataclass(frozen=True)
class Settings:
    """Every setting, under one name: COHOP_<NAME> in the environment, `Settings.<name>` here, the Flask
    config key COHOP_<NAME> in the app, and the same name in `SolveSettings`. The defaults here are the
    only ones; `create_app()` (tests, the command line) uses them too, with the two differences noted
    in `IN_PROCESS`."""

    cpus: int = field(default_factory=available_cpus)
    solver_threads: int = 2  # CP-SAT threads per solve
    workers: int | None = None  # gunicorn workers (default: cpus // solver_threads)
    threads: int = 16  # gunicorn threads per worker: evaluations and health run beside a solve and slow clients
    max_concurrent_solves: int = 1  # solves per worker at once; more answer 503
    isolate_solves: bool = True  # run each solve in its own process
    max_solve_s: float = 60.0  # cap on a request's time limit
    max_body_bytes: int = 16 * 1024 * 1024
    max_simulated_attempts: int = 50_000_000
    max_products: int = 30_000  # largest full CP-SAT model (pair booleans); larger sites use local search
    deterministic: bool = True  # same request and seed, same plan (when no wall-clock stop intervenes)
    #: Calibrated seconds of planner work per wall second: 0 measures it at start-up (cohop.planning.calibration),
    #: > 0 fixes it (1: the calibration as written).
    work_speed: float = 0.0
    retry_after_s: int = 5
    tokens: tuple[str, ...] = ()
    metrics_public: bool = False
    log_level: str = "INFO"
    bind: str = "0.0.0.0:8080"
    graceful_timeout_s: float = 90.0
    drain_s: float = 5.0  # from SIGTERM: readiness answers 503 while the server keeps serving, then it stops
    client_timeout_s: float = 10.0  # a request's headers must arrive within it; each body read and write too
    max_requests: int = 2000
    max_requests_jitter: int = 200

    def __post_init__(self):
        if self.solver_threads < 1:
            raise ConfigError(f"{PREFIX}SOLVER_THREADS must be at least 1, not {self.solver_threads}")
        if self.solver_threads > self.cpus:
            raise ConfigError(f"{PREFIX}SOLVER_THREADS={self.solver_threads} exceeds the {self.cpus} CPU(s) the "
                              f"service is given ({PREFIX}CPUS or the cgroup limit)")
        if self.gunicorn_workers * self.solver_threads > self.cpus:
            raise ConfigError(f"{PREFIX}WORKERS={self.gunicorn_workers} x {PREFIX}SOLVER_THREADS="
                              f"{self.solver_threads} exceeds the {self.cpus} CPU(s) the service is given")
        if self.max_solve_s <= 0 or self.graceful_timeout_s <= self.max_solve_s:
            raise ConfigError(f"{PREFIX}GRACEFUL_TIMEOUT_S ({self.graceful_timeout_s:g}) must exceed "
                              f"{PREFIX}MAX_SOLVE_S ({self.max_solve_s:g}) so in-flight solves can finish")
        if not 0 <= self.drain_s <= MAX_DRAIN_S:
            raise ConfigError(f"{PREFIX}DRAIN_S must be between 0 and {MAX_DRAIN_S:g} seconds, not {self.drain_s:g}")
        if not 0 < self.client_timeout_s <= MAX_CLIENT_TIMEOUT_S:
            raise ConfigError(f"{PREFIX}CLIENT_TIMEOUT_S must be above 0 and at most {MAX_CLIENT_TIMEOUT_S:g} "
                              f"seconds, not {self.client_timeout_s:g}")
        if not 0 <= self.work_speed <= 10:
            raise ConfigError(f"{PREFIX}WORK_SPEED must be between 0 (measure at start-up) and 10, not "
                              f"{self.work_speed:g}")
        if self.log_level.upper() not in ("DEBUG", "INFO", "WARNING", "ERROR"):
            raise ConfigError(f"{PREFIX}LOG_LEVEL must be DEBUG, INFO, WARNING or ERROR, not {self.log_level!r}")
        if any(len(t) < 16 for t in self.tokens):
            raise ConfigError(f"{PREFIX}TOKENS: every token must have at least 16 characters")

    @property
    def gunicorn_workers(self) -> int:
        return self.workers if self.workers is not None else max(1, self.cpus // self.solver_threads)

    @property
    def request_timeout_s(self) -> float:
        """Gunicorn's worker timeout: above the longest solve plus its evaluation."""
        return self.max_solve_s * 2 + 30

    def flask_config(self) -> dict:
        """The app's settings: COHOP_<NAME> for each field the app reads, and Flask's own body cap."""
        return flask_config({name: getattr(self, name) for name in APP_SETTINGS})

    def public(self) -> dict:
        """The settings without secrets, for the start-up log line."""
        out = asdict(self)
        out["tokens"] = f"{len(self.tokens)} configured"
        out["gunicorn_workers"] = self.gunicorn_workers
        return out


#: The settings the Flask app reads (the others size gunicorn).
APP_SETTINGS = ("solver_threads", "max_concurrent_solves", "isolate_solves", "max_solve_s", "max_body_bytes",
                "max_simulated_attempts", "max_products", "deterministic", "work_speed", "retry_after_s",
                "tokens", "metrics_public")

#: Where the in-process app (`create_app()`: tests, the command line) differs from the defaults, and why:
#: it runs solves in its own process, so that the command line's live progress line can follow the
#: solver (a callback cannot cross a process boundary) and a test needs no fork server; and it keeps the
#: work calibration as written, since a one-shot process would spend about a second measuring the machine
#: (`cohop.planning.calibration`; the server measures once, in its fork server).
IN_PROCESS = {"isolate_solves": False, "work_speed": 1.0}


def default_of(name: str):
    """The default of one setting (the single place defaults are written)."""
    f = Settings.__dataclass_fields__[name]
    return f.default_factory() if callable(f.default_factory) else f.default


def flask_config(values: dict) -> dict:
    out = {PREFIX + name.upper(): value for name, value in values.items()}
    out["MAX_CONTENT_LENGTH"] = values["max_body_bytes"]
    return out


def in_process_config() -> dict:
    """The in-process app's settings: the defaults, with `IN_PROCESS` applied; nothing read from the environment."""
    return flask_config({name: IN_PROCESS.get(name, default_of(name)) for name in APP_SETTINGS})


_TYPES = {"cpus": int, "solver_threads": int, "workers": int, "threads": int, "max_concurrent_solves": int,
          "isolate_solves": bool, "max_solve_s": float, "max_body_bytes": int, "max_simulated_attempts": int,
          "max_products": int, "deterministic": bool, "work_speed": float, "retry_after_s": int, "metrics_public": bool, "log_level": str,
          "bind": str, "graceful_timeout_s": float, "drain_s": float, "client_timeout_s": float, "max_requests": int,
          "max_requests_jitter": int}
_POSITIVE = {"cpus", "workers", "threads", "max_concurrent_solves", "max_body_bytes", "max_simulated_attempts",
             "max_products", "retry_after_s", "max_requests"}


def _parse(name: str, kind, raw: str):
    var = PREFIX + name.upper()
    if kind is bool:
        value = raw.strip().lower()
        if value in ("1", "true", "yes", "on"):
            return True
        if value in ("0", "false", "no", "off"):
            return False
        raise ConfigError(f"{var} must be true or false, not {raw!r}")
    if kind is str:
        return raw.strip()
    try:
        value = kind(raw)
    except ValueError:
        raise ConfigError(f"{var} must be {'an integer' if kind is int else 'a number'}, not {raw!r}") from None
    if name in _POSITIVE and value <= 0:
        raise ConfigError(f"{var} must be positive, not {raw!r}")
    if name == "max_requests_jitter" and value < 0:
        raise ConfigError(f"{var} must not be negative, not {raw!r}")
    return value


def _tokens(env) -> tuple[str, ...]:
    tokens = [t.strip() for t in env.get(PREFIX + "TOKENS", "").split(",") if t.strip()]
    path = env.get(PREFIX + "TOKENS_FILE")
    if path:
        try:
            text = Path(path).read_text(encoding="utf-8")
        except OSError as err:
            raise ConfigError(f"{PREFIX}TOKENS_FILE {path}: {err.strerror}") from None
        tokens += [line.strip() for line in text.splitlines() if line.strip() and not line.startswith("#")]
    return tuple(dict.fromkeys(tokens))


def from_env(env=None) -> Settings:
    """Settings from COHOP_* variables; unknown COHOP_ variables are an error (a typo would be silent)."""
    env = os.environ if env is None else env
    known = {PREFIX + n.upper() for n in _TYPES} | {PREFIX + "TOKENS", PREFIX + "TOKENS_FILE", PREFIX + "TOKEN"}
    unknown = sorted(k for k in env if k.startswith(PREFIX) and k not in known)
    if unknown:
        raise ConfigError(f"unknown setting(s) {', '.join(unknown)}; see DEVELOPERS.md for the COHOP_ variables")
    values = {name: _parse(name, kind, env[PREFIX + name.upper()]) for name, kind in _TYPES.items()
              if PREFIX + name.upper() in env}
    return Settings(tokens=_tokens(env), **values)
