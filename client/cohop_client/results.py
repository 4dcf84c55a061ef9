"""Typed views of the service's answers. Each keeps the full JSON in `raw`."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any


@dataclass(frozen=True)
class Health:
    status: str
    version: str

    @classmethod
    def from_json(cls, body: dict) -> "Health":
        return cls(status=body["status"], version=body["version"])


@dataclass(frozen=True)
class Rule:
    id: str
    title: str
    citation: str
    certainty: str
    summary: str


@dataclass(frozen=True)
class Profile:
    id: str
    name: str
    region: str
    band_hz: tuple[float, float] | None
    coordination_caution: bool
    rules: tuple[Rule, ...]

    @classmethod
    def from_json(cls, body: dict) -> "Profile":
        band = body.get("band")
        return cls(id=body["id"], name=body["name"], region=body["region"],
                   band_hz=None if band is None else (band["low_hz"], band["high_hz"]),
                   coordination_caution=body["coordination_caution"],
                   rules=tuple(Rule(**r) for r in body["rules"]))


@dataclass(frozen=True)
class Finding:
    rule: str
    citation: str
    certainty: str
    status: str
    message: str


@dataclass(frozen=True)
class SystemResult:
    id: str
    label: str
    hop_set: tuple[int, ...]
    collision_probability: float
    attempt_loss_probability: float
    residual_loss_probability: float
    expected_attempts: float
    compliance_status: str
    findings: tuple[Finding, ...]
    worst_source: str | None
    raw: dict = field(repr=False)

    @classmethod
    def from_json(cls, body: dict) -> "SystemResult":
        sources = sorted(body["sources"], key=lambda s: s["collision_probability"], reverse=True)
        worst = sources[0]["id"] if sources and sources[0]["collision_probability"] > 0 else None
        findings = tuple(Finding(f["rule"], f["citation"], f["certainty"], f["status"], f["message"])
                         for f in body["compliance"]["findings"])
        return cls(id=body["id"], label=body["label"], hop_set=tuple(body["hop_set"]),
                   collision_probability=body["per_hop"]["collision_probability"],
                   attempt_loss_probability=body["per_attempt"]["loss_probability"],
                   residual_loss_probability=body["retries"]["residual_loss_probability"],
                   expected_attempts=body["retries"]["expected_attempts"],
                   compliance_status=body["compliance"]["status"], findings=findings, worst_source=worst, raw=body)


@dataclass(frozen=True)
class Assessment:
    profile_id: str
    cautions: tuple[str, ...]
    systems: tuple[SystemResult, ...]
    weighted_collision_probability: float
    worst_system: str
    simulation: dict[str, Any] | None
    raw: dict = field(repr=False)

    @classmethod
    def from_json(cls, body: dict) -> "Assessment":
        return cls(profile_id=body["profile"]["id"], cautions=tuple(body["cautions"]),
                   systems=tuple(SystemResult.from_json(s) for s in body["systems"]),
                   weighted_collision_probability=body["summary"]["weighted_collision_probability"],
                   worst_system=body["summary"]["worst_system"], simulation=body.get("simulation"), raw=body)

    def system(self, system_id: str) -> SystemResult:
        for s in self.systems:
            if s.id == system_id:
                return s
        raise KeyError(system_id)


@dataclass(frozen=True)
class PlannedSystem:
    id: str
    hop_set: tuple[int, ...]
    centres_hz: tuple[float, ...]


@dataclass(frozen=True)
class SolverReport:
    status: str
    objective: float
    bound: float
    gap: float | None
    time_s: float
    method: str
    evaluated_objective: float
    binding: tuple[str, ...]
    notes: tuple[str, ...]
    time_limit_s: float | None = None  # the effective limit (the server's cap may clamp the request's)
    requested_time_limit_s: float | None = None
    stopped_by_wall_clock: bool = False  # a busy server cut a phase short: the plan may not repeat exactly

    @classmethod
    def from_json(cls, body: dict) -> "SolverReport":
        return cls(status=body["status"], objective=body["objective"], bound=body["bound"], gap=body["gap"],
                   time_s=body["time_s"], method=body["method"], evaluated_objective=body["evaluated_objective"],
                   binding=tuple(body["binding"]), notes=tuple(body["notes"]),
                   time_limit_s=body.get("time_limit_s"), requested_time_limit_s=body.get("requested_time_limit_s"),
                   stopped_by_wall_clock=bool(body.get("stopped_by_wall_clock", False)))


@dataclass(frozen=True)
class BaselineResult:
    name: str
    objective: float | None
    meets_requirements: bool


@dataclass(frozen=True)
class Plan:
    systems: tuple[PlannedSystem, ...]
    solver: SolverReport
    assessment: Assessment
    baselines: tuple[BaselineResult, ...]
    ratio_to_best_baseline: float | None
    cautions: tuple[str, ...]
    raw: dict = field(repr=False)

    def sequence(self, system_id: str) -> tuple[int, ...]:
        """The hop order (grid channel indices, one period) planned for a system."""
        for s in (self.raw.get("sequences") or {}).get("systems", []):
            if s["id"] == system_id:
                return tuple(s["channels"])
        raise KeyError(system_id)

    @classmethod
    def from_json(cls, body: dict) -> "Plan":
        return cls(systems=tuple(PlannedSystem(p["id"], tuple(p["hop_set"]), tuple(p["centres_hz"]))
                                 for p in body["plan"]),
                   solver=SolverReport.from_json(body["solver"]), assessment=Assessment.from_json(body["assessment"]),
                   baselines=tuple(BaselineResult(b["name"], b["objective"], b["meets_requirements"])
                                   for b in body["baselines"]),
                   ratio_to_best_baseline=body["comparison"]["ratio"], cautions=tuple(body["cautions"]), raw=body)

    def hop_set(self, system_id: str) -> tuple[int, ...]:
        for p in self.systems:
            if p.id == system_id:
                return p.hop_set
        raise KeyError(system_id)


@dataclass(frozen=True)
class SystemChange:
    id: str
    status: str  # "kept", "changed", "new system"
    dropped: tuple[int, ...]
    added: tuple[int, ...]
    sequence_changed: bool


@dataclass(frozen=True)
class Replan:
    systems: tuple[PlannedSystem, ...]
    changes: tuple[SystemChange, ...]
    change_count: int
    change_lower_bound: int
    proven_minimal: bool
    objective: float
    fresh_objective: float
    assessment: Assessment
    cautions: tuple[str, ...]
    raw: dict = field(repr=False)

    @classmethod
    def from_json(cls, body: dict) -> "Replan":
        return cls(systems=tuple(PlannedSystem(p["id"], tuple(p["hop_set"]), tuple(p["centres_hz"]))
                                 for p in body["plan"]),
                   changes=tuple(SystemChange(d["id"], d["status"], tuple(d["dropped"]), tuple(d["added"]),
                                              d["sequence_changed"]) for d in body["diff"]),
                   change_count=body["changes"]["count"], change_lower_bound=body["changes"]["lower_bound"],
                   proven_minimal=body["changes"]["proven_minimal"], objective=body["objective"],
                   fresh_objective=body["fresh"]["objective"], assessment=Assessment.from_json(body["assessment"]),
                   cautions=tuple(body["cautions"]), raw=body)
