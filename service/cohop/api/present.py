"""Turn domain results into the response shape (formatting only, no physics)."""

from __future__ import annotations

import math

from cohop.assess import Assessment, SourceFigures, SystemFigures
from cohop.cautions import MODEL_ASSUMPTIONS, cautions_for
from cohop.montecarlo import SimulatedRate, SiteSimulation
from cohop.regulatory.rules import FAIL, PASS, WARNING, Finding


def _finding(f: Finding) -> dict:
    return {"rule": f.rule.id, "title": f.rule.title, "citation": f.rule.citation, "certainty": f.rule.certainty,
            "status": f.status, "message": f.message, "measured": f.measured, "limit": f.limit, "unit": f.unit}


def compliance_status(findings) -> str:
    statuses = {f.status for f in findings}
    return FAIL if FAIL in statuses else WARNING if WARNING in statuses else PASS


def _source(s: SourceFigures) -> dict:
    link = s.link
    overlap = None
    if link.overlap is not None:
        overlap = {"aligned": link.aligned, "base_count": link.overlap.k0, "extra_probability": link.overlap.r,
                   "mean_count": link.overlap.mean}
    return {"id": s.source_id, "kind": s.kind, "level_dbm": link.level_dbm, "excess_db": link.excess_db,
            "harm_bound_hz": None if math.isinf(link.bound_hz) else link.bound_hz,
            "window_channels": s.window_channels,
            "channel_range": list(s.channel_range) if s.channel_range is not None else None,
            "activity_fraction": link.activity_fraction, "overlap": overlap,
            "collision_probability": s.collision_probability}


def _system(f: SystemFigures, assessment: Assessment) -> dict:
    site_system = assessment.prepared.site.systems[f.index]
    channels = []
    for c in f.channels:
        row = {"channel": c.channel, "centre_hz": c.centre_hz, "collision_probability": c.collision_probability,
               "hop_loss_probability": c.hop_loss_probability, "dominant_source": c.dominant_source}
        if c.by_source is not None:
            row["by_source"] = c.by_source
        channels.append(row)
    return {
        "id": f.id, "label": site_system.label, "priority_weight": site_system.priority_weight,
        "hop_set": list(f.hop_set), "hop_set_origin": f.hop_set_origin, "channel_count": len(f.hop_set),
        "link": {"wanted_signal_dbm": f.wanted_dbm, "fade_margin_db": f.fade_margin_db,
                 "noise_floor_dbm": f.noise_floor_dbm},
        "per_hop": {"collision_probability": f.collision_probability, "fade_probability": f.fade_probability},
        "per_attempt": {"hops": site_system.hops_per_attempt, "collision_probability": f.attempt_collision_probability,
                        "fade_probability": f.attempt_fade_probability, "loss_probability": f.attempt_loss_probability},
        "retries": {"retry_limit": site_system.retry_limit, "residual_loss_probability": f.residual_loss_probability,
                    "expected_attempts": f.expected_attempts},
        "sources": [_source(s) for s in f.sources],
        "channels": channels,
        "compliance": {"profile": assessment.prepared.profile.id, "status": compliance_status(f.compliance),
                       "findings": [_finding(x) for x in f.compliance]},
    }


def _rate(sid: str, r: SimulatedRate, analytic: float) -> dict:
    lo, hi = r.interval()
    return {"id": sid, "probability": r.probability, "interval": [lo, hi], "hits": r.hits, "trials": r.trials,
            "analytic_probability": analytic, "within_interval": lo <= analytic <= hi}


def simulation_dict(sim: SiteSimulation, assessment: Assessment) -> dict:
    systems = []
    for s, f in zip(sim.systems, assessment.systems):
        row = _rate(s.id, s.collision, f.collision_probability)
        analytic = {src.source_id: src.collision_probability for src in f.sources}
        row["by_source"] = [_rate(sid, r, analytic[sid]) for sid, r in s.by_source.items()]
        systems.append(row)
    return {"seed": sim.seed, "trials_per_system": sim.trials_per_system, "confidence": 0.95, "systems": systems}


def assessment_dict(assessment: Assessment, simulation: SiteSimulation | None = None) -> dict:
    prep = assessment.prepared
    return {
        "cautions": cautions_for(prep.profile.coordination_caution),
        "profile": {"id": prep.profile.id, "name": prep.profile.name},
        "band": {"low_hz": prep.band.low_hz, "high_hz": prep.band.high_hz},
        "assumptions": list(MODEL_ASSUMPTIONS),
        "notes": list(assessment.notes),
        "summary": {"weighted_collision_probability": assessment.weighted_collision,
                    "worst_collision_probability": assessment.worst_collision,
                    "worst_system": assessment.worst_system},
        "systems": [_system(f, assessment) for f in assessment.systems],
        "simulation": simulation_dict(simulation, assessment) if simulation is not None else None,
    }
