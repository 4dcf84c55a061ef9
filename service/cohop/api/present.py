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


def assessment_dict(assessment: Assessment, simulation: SiteSimulation | None = None,
                    coordination_caution: bool | None = None, sequences=None) -> dict:
    prep = assessment.prepared
    caution = prep.profile.coordination_caution if coordination_caution is None else coordination_caution
    return {
        "cautions": cautions_for(caution),
        "profile": {"id": prep.profile.id, "name": prep.profile.name},
        "band": {"low_hz": prep.band.low_hz, "high_hz": prep.band.high_hz},
        "assumptions": list(MODEL_ASSUMPTIONS),
        "notes": list(assessment.notes),
        "summary": {"weighted_collision_probability": assessment.weighted_collision,
                    "worst_collision_probability": assessment.worst_collision,
                    "worst_system": assessment.worst_system},
        "systems": [_system(f, assessment) for f in assessment.systems],
        "simulation": simulation_dict(simulation, assessment) if simulation is not None else None,
        "sequences": sequences_dict(sequences, assessment) if sequences is not None else None,
        "derived_interferers": [_derived(d) for d in prep.derived],
    }


def _derived(d) -> dict:
    itf = d.interferer
    return {"id": itf.id, "survey": d.survey, "system": d.system, "low_hz": itf.low_hz, "high_hz": itf.high_hz,
            "channels": list(d.channels), "channel_level_dbm": d.channel_level_dbm, "floor_dbm": d.floor_dbm,
            "activity_fraction": itf.activity_fraction}


def _baseline(b) -> dict:
    systems = []
    if b.assessment is not None:
        systems = [{"id": f.id, "channel_count": len(f.hop_set), "collision_probability": f.collision_probability,
                    "residual_loss_probability": f.residual_loss_probability} for f in b.assessment.systems]
    return {"name": b.name, "objective": b.objective, "meets_requirements": not b.violations,
            "violations": [{"requirement": v.requirement, "systems": list(v.systems), "detail": v.detail}
                           for v in b.violations], "systems": systems}


def _comparison(result) -> dict:
    plan = result.report.evaluated_objective
    scored = [b for b in result.baselines if b.objective is not None]
    best = min(scored, key=lambda b: b.objective) if scored else None
    ratio = None
    if best is not None and best.objective > 0:
        ratio = plan / best.objective
    return {"best_baseline": best.name if best else None, "best_baseline_objective": best.objective if best else None,
            "plan_objective": plan, "ratio": ratio}


def plan_dict(result, detail: str = "channel") -> dict:
    """The plan response: hop sets, solver report, the full assessment, baselines and comparison."""
    prep = result.assessment.prepared
    r = result.report
    inst = result.instance
    coordination = inst.req.coordination
    plan = [{"id": s.id, "hop_set": [int(c) for c in hs], "centres_hz": [float(prep.centres_hz[c]) for c in hs],
             "channel_count": int(hs.size)} for s, hs in zip(prep.site.systems, result.hop_sets)]
    solver = {"status": r.status, "objective": r.objective, "bound": r.bound, "gap": r.gap, "bounds": r.bounds,
              "evaluated_objective": r.evaluated_objective, "linearisation_error": r.linearisation_error,
              "objective_kind": inst.req.objective, "time_s": r.time_s, "time_limit_s": r.time_limit_s,
              "method": r.method, "scale_factor": r.scale_factor, "max_relative_rounding": r.rounding,
              "workers": r.workers, "deterministic": r.deterministic,
              "requested_time_limit_s": r.requested_time_limit_s, "stopped_by_wall_clock": r.stopped_by_wall_clock,
              "work": dict(r.work), "binding": r.binding, "notes": r.notes}
    caution = prep.profile.coordination_caution and (coordination == "joint" or (
        result.sequences is not None and result.sequences.depends_on_alignment))
    seqs = sequences_dict(result.sequences, result.assessment) if result.sequences is not None else None
    return {"cautions": cautions_for(caution), "coordination": coordination, "plan": plan, "solver": solver,
            "sequences": seqs,
            "assessment": assessment_dict(result.assessment, coordination_caution=caution), "baselines": [_baseline(b) for b in result.baselines],
            "comparison": _comparison(result)}


def _retry(r) -> dict:
    lo, hi = r.residual_interval
    return {"packets": r.packets, "attempt_loss_probability": r.attempt_loss, "residual_loss_probability": r.residual_loss,
            "residual_interval": [lo, hi], "independent_residual_probability": r.independent_residual}


def sequences_dict(outcome, assessment: Assessment) -> dict:
    """Hop orders, what they do, and the sequence-driven retry figures."""
    from cohop.sequences.theory import coherence_bandwidth_hz

    prep = assessment.prepared
    rep = outcome.report
    ids = [s.id for s in prep.site.systems]
    required_hz = coherence_bandwidth_hz(outcome.delay_spread_s)
    systems = []
    for seq, order, retry, poor, step, fig in zip(rep.sequences, rep.orders, outcome.retries, outcome.poor_order,
                                                  outcome.common_pattern, assessment.systems):
        entry = {
            "id": ids[seq.system], "construction": seq.construction, "group": seq.group,
            "family": None if seq.prime is None else {"component": seq.component, "prime": seq.prime,
                                                      "member": seq.member},
            "channels": [int(c) for c in seq.channels],
            "centres_hz": [float(prep.centres_hz[c]) for c in seq.channels],
            "period_hops": order.period_hops, "dwell_s": prep.site.systems[seq.system].dwell_s,
            "period_s": order.period_s, "uses": {"min": order.uses_min, "max": order.uses_max},
            "spacing": {"min_channels": order.min_spacing_channels, "min_hz": order.min_spacing_hz,
                        "required_channels": order.required_spacing_channels, "required_hz": required_hz,
                        "fading_correlation_max": order.fading_correlation_max,
                        "fading_correlation_mean": order.fading_correlation_mean},
            "order": {"reversal_share": order.reversal_share, "distinct_steps": order.distinct_steps,
                      "looks_random": order.looks_random},
            "retries": {**_retry(retry), "analytic_residual_probability": fig.residual_loss_probability,
                        "ascending_order": _retry(poor), "common_pattern": _retry(step)},
        }
        systems.append(entry)
    pairs = [{"victim": ids[p.a], "source": ids[p.b], "shared_channels": p.shared_channels,
              "coincidences_max": p.coincidences_max, "common_period_hops": p.common_period_hops,
              "longest_run_hops": p.longest_run, "aligned": p.aligned, "aligned_hit_rate": p.aligned_hit_rate,
              "unaligned_hit_rate": p.unaligned_hit_rate} for p in rep.pairs]
    families = []
    for comp, fam in rep.family_bounds.items():
        members = {s.system for s in rep.sequences if s.component == comp}
        measured = [p.coincidences_max for p in rep.pairs if p.a in members and p.b in members
                    and p.coincidences_max is not None]
        families.append({"component": comp, "prime": fam["prime"], "members": fam["members"],
                         "peng_fan_bound": fam["peng_fan_bound"],
                         "measured_max_coincidences": max(measured) if measured else None})
    groups = sorted({s.group for s in rep.sequences if s.group})
    note = ("figures of slot-aligned systems depend on keeping alignment: see unaligned_hit_rate for what "
            "the same sequences give when it is lost" if outcome.depends_on_alignment else "")
    return {"delay_spread_s": outcome.delay_spread_s, "systems": systems, "pairs": pairs, "families": families,
            "alignment": {"depends_on_alignment": outcome.depends_on_alignment, "groups": groups, "note": note},
            "notes": list(rep.notes)}


def _plan_rows(prep, hop_sets) -> list[dict]:
    return [{"id": s.id, "hop_set": [int(c) for c in hs], "centres_hz": [float(prep.centres_hz[c]) for c in hs],
             "channel_count": int(len(hs))} for s, hs in zip(prep.site.systems, hop_sets)]


def _figures(f) -> dict:
    return {"collision_probability": f.collision_probability, "residual_loss_probability": f.residual_loss_probability}


def replan_dict(result, mode) -> dict:
    from cohop.planning.engine import evaluated_objective

    prep = result.assessment.prepared
    before = {f.id: f for f in result.before.systems}
    after = {f.id: f for f in result.assessment.systems}
    diff = [{"id": d.id, "status": d.status, "dropped": d.dropped, "added": d.added,
             "sequence_changed": d.sequence_changed,
             "before": _figures(before[d.id]) if d.status != "new system" else None, "after": _figures(after[d.id])}
            for d in result.diffs]
    fresh = result.fresh
    joint = result.instance.req.coordination == "joint"
    caution = prep.profile.coordination_caution and (joint or result.sequences.depends_on_alignment)
    return {
        "cautions": cautions_for(caution),
        "mode": {"kind": mode.kind, "tolerance": mode.tolerance, "max_changes": mode.max_changes},
        "objective": result.objective, "target_objective": result.target,
        "evaluated_objective": evaluated_objective(result.instance, result.assessment),
        "changes": {"count": result.changes, "lower_bound": result.lower_bound, "proven_minimal": result.proven_minimal,
                    "removed_systems": result.removed},
        "plan": _plan_rows(prep, result.hop_sets), "diff": diff,
        "fresh": {"objective": fresh.report.objective, "evaluated_objective": fresh.report.evaluated_objective,
                  "bound": fresh.report.bound, "status": fresh.report.status,
                  "plan": _plan_rows(prep, fresh.hop_sets),
                  "systems": [{"id": f.id, "channel_count": len(f.hop_set),
                               "collision_probability": f.collision_probability,
                               "residual_loss_probability": f.residual_loss_probability}
                              for f in fresh.assessment.systems]},
        "sequences": sequences_dict(result.sequences, result.assessment),
        "assessment": assessment_dict(result.assessment, coordination_caution=caution),
        "notes": list(result.notes),
        "time": {"time_s": result.time_s, "time_limit_s": result.time_limit_s,
                 "requested_time_limit_s": result.requested_time_limit_s,
                 "stopped_by_wall_clock": result.stopped_by_wall_clock, "work": dict(result.work)},
    }
