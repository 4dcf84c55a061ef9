"""Plain-text rendering of results for the command line (client types only)."""

from __future__ import annotations

import textwrap

import time

from cohop_client import Assessment, Plan, Replan


def _pct(p: float) -> str:
    if p == 0:
        return "0"
    if p < 1e-4:
        return f"{100 * p:.1e}%"
    return f"{100 * p:.2f}%"


def _systems_table(result: Assessment) -> list[str]:
    head = ("system", "chans", "hit/hop", "loss/try", "after retries", "tries", "compliance", "main source")
    rows = [head]
    for s in result.systems:
        rows.append((s.id, str(len(s.hop_set)), _pct(s.collision_probability), _pct(s.attempt_loss_probability),
                     _pct(s.residual_loss_probability), f"{s.expected_attempts:.2f}", s.compliance_status,
                     s.worst_source or "-"))
    widths = [max(len(r[i]) for r in rows) for i in range(len(head))]
    lines = ["  ".join(c.ljust(w) if i in (0, 6, 7) else c.rjust(w) for i, (c, w) in enumerate(zip(r, widths))).rstrip()
             for r in rows]
    lines.insert(1, "  ".join("-" * w for w in widths))
    return lines


def _cautions(cautions) -> list[str]:
    return ["", "cautions:"] + [textwrap.fill(c, 100, initial_indent="  - ", subsequent_indent="    ")
                                for c in cautions]


def assessment_table(result: Assessment) -> str:
    out = [f"profile {result.profile_id}; priority-weighted hit/hop sum {result.weighted_collision_probability:.4f}; "
           f"worst system {result.worst_system}", ""] + _systems_table(result)
    flagged = [(s.id, f) for s in result.systems for f in s.findings if f.status in ("fail", "warning")]
    if flagged:
        out += ["", "compliance failures and warnings (each with its reason):"]
        out += [f"  {sid}: {f.status} {f.rule}: {f.message} [{f.citation}; {f.certainty}]" for sid, f in flagged]
    if result.simulation:
        out += ["", _simulation_lines(result)]
    out += traffic_lines(result.raw.get("traffic"))
    return "\n".join(out + _cautions(result.cautions))


def _ms(x: float | None) -> str:
    return "never" if x is None else f"{1e3 * x:.1f}"


def _verdict(flag: bool | None) -> str:
    return "" if flag is None else ": met" if flag else ": NOT met"


def _clear(ratio: float | None) -> str:
    return "" if ratio is None else f"; clearance {ratio:.3g}"


def traffic_lines(traffic: list | None) -> list[str]:
    """The traffic figures (`cohop.traffic`), one paragraph per system, with their model and caution."""
    if not traffic:
        return []
    out = ["", "traffic (" + traffic[0]["caution"] + "):", "  model: " + traffic[0]["model"]]
    for t in traffic:
        req = t["requirement"]
        quant = "/".join(_ms(q["latency_s"]) for q in t["latency_quantiles"])
        levels = "/".join(f"{100 * q['level']:g}" for q in t["latency_quantiles"])
        how = "exact" if t["exact"] else f"{t['phase_samples']} phase samples, 95 % interval"
        parts = [f"order {t['order_origin']} ({t['order_length']} hops), a message every "
                 f"{t['message_interval_s']:.3g} s, {how}",
                 f"latency {levels} %: {quant} ms; never delivered {_pct(t['undelivered']['value'])}"]
        if t["deadline"] is not None:
            d = t["deadline_missed"]
            need = "" if req["deadline_probability"] is None else f"; may miss {_pct(1 - req['deadline_probability'])}"
            parts.append(f"miss the {req['deadline_s']:g} s deadline: {_pct(d['value'])} (<= "
                         f"{_pct(d['interval'][1])}{need}{_verdict(t['meets_deadline'])}; main source "
                         f"{d['dominant_source'] or '-'}{_clear(t['deadline_clearance'])})")
        if t["stops_per_hour"] is not None:
            st = t["stops_per_hour"]
            limit = "" if req["max_stops_per_hour"] is None else f"; limit {req['max_stops_per_hour']:g}"
            parts.append(f"watchdog {req['watchdog_s']:g} s = {t['watchdog_messages']} messages: {st['value']:.3g} "
                         f"stops/h (<= {st['interval'][1]:.3g}{limit}{_verdict(t['meets_stops'])}; main source "
                         f"{st['dominant_source'] or '-'}{_clear(t['stops_clearance'])})")
        out.append(textwrap.fill(f"{t['id']}: " + "; ".join(parts), 100, initial_indent="  ",
                                 subsequent_indent="      "))
    return out


def plan_table(result: Plan) -> str:
    r = result.solver
    gap = "n/a" if r.gap is None else f"{100 * r.gap:.1f}%"
    out = [f"plan: {r.status}; objective {r.objective:.5f} (evaluated {r.evaluated_objective:.5f}), proven bound "
           f"{r.bound:.5f}, gap {gap}, {r.time_s:.1f} s", f"method: {r.method}", ""]
    out += _systems_table(result.assessment)
    out += ["", "hop sets:"]
    out += [textwrap.fill(f"{p.id}: {_ranges(p.hop_set)}", 100, initial_indent="  ", subsequent_indent="      ")
            for p in result.systems]
    out += _sequence_lines(result.raw.get("sequences"))
    out += traffic_lines((result.raw.get("assessment") or {}).get("traffic"))
    if result.baselines:
        out += ["", "against what a practitioner might do (evaluated objective; lower is better):"]
        for b in sorted(result.baselines, key=lambda b: (b.objective is None, b.objective or 0.0)):
            value = "-" if b.objective is None else f"{b.objective:.5f}"
            ok = "" if b.meets_requirements else "  (misses requirements)"
            out.append(f"  {b.name:12s} {value}{ok}")
        if result.ratio_to_best_baseline is not None:
            out.append(f"  plan / best baseline: {result.ratio_to_best_baseline:.3f}")
    if r.binding:
        out += ["", "binding requirements: " + "; ".join(r.binding)]
    out += ["", "notes:"] + [f"  - {n}" for n in r.notes]
    return "\n".join(out + _cautions(result.cautions))


def _sequence_lines(seqs: dict | None) -> list[str]:
    if not seqs:
        return []
    out = ["", f"hop sequences (delay spread {seqs['delay_spread_s'] * 1e9:.0f} ns; residual loss after retries: "
               "simulated with these orders / independent attempts / same channels in ascending order / "
               "every system in one common pattern):"]
    for s in seqs["systems"]:
        r = s["retries"]
        sp = s["spacing"]
        out.append(f"  {s['id']}: {s['construction']}, {s['period_hops']} hops = {s['period_s']:.2f} s; closest step "
                   f"{sp['min_channels']} ch (want {sp['required_channels']}), fading corr <= "
                   f"{sp['fading_correlation_max']:.2f}; {_pct(r['residual_loss_probability'])} / "
                   f"{_pct(r['independent_residual_probability'])} / "
                   f"{_pct(r['ascending_order']['residual_loss_probability'])} / "
                   f"{_pct(r['common_pattern']['residual_loss_probability'])}")
    if seqs["alignment"]["depends_on_alignment"]:
        out.append("  note: " + seqs["alignment"]["note"])
    out += [f"  note: {n}" for n in seqs["notes"]]
    return out


def _ranges(chans) -> str:
    parts, start, prev = [], None, None
    for c in sorted(chans):
        if start is None:
            start = prev = c
        elif c == prev + 1:
            prev = c
        else:
            parts.append(str(start) if start == prev else f"{start}-{prev}")
            start = prev = c
    if start is not None:
        parts.append(str(start) if start == prev else f"{start}-{prev}")
    return ", ".join(parts)


class ProgressLine:
    """A live line on a terminal (or a line a second elsewhere) with the solver's progress."""

    def __init__(self, stream):
        self.stream = stream
        self.live = hasattr(stream, "isatty") and stream.isatty()
        self.last = 0.0
        self.shown = False

    def update(self, p) -> None:
        now = time.monotonic()
        if not self.live and now - self.last < 1.0:
            return
        self.last = now
        obj = "-" if p.objective is None else f"{p.objective:.5f}"
        bound = "-" if p.bound is None else f"{p.bound:.5f}"
        gap = "-" if p.gap is None else f"{100 * p.gap:.1f}%"
        text = f"{p.elapsed_s:6.1f} s  best {obj}  bound {bound}  gap {gap}  ({p.phase})"
        if self.live:
            self.stream.write("\r" + text.ljust(78))
        else:
            self.stream.write(text + "\n")
        self.stream.flush()
        self.shown = True

    def finish(self) -> None:
        if self.live and self.shown:
            self.stream.write("\n")
            self.stream.flush()


def _simulation_lines(result: Assessment) -> str:
    sim = result.simulation
    lines = [f"Monte Carlo check ({sim['trials_per_system']} attempts per system, seed {sim['seed']}, "
             f"95% intervals):"]
    for s in sim["systems"]:
        lo, hi = s["interval"]
        mark = "" if s["within_interval"] else "  <- outside the interval"
        lines.append(f"  {s['id']}: simulated {_pct(s['probability'])} [{_pct(lo)}, {_pct(hi)}], "
                     f"analytic {_pct(s['analytic_probability'])}{mark}")
    lines.append("  (at 95 %, about one figure in twenty falls outside its interval by chance)")
    return "\n".join(lines)


def profiles_table(profiles) -> str:
    lines = []
    for p in profiles:
        band = "band from request" if p.band_hz is None else f"{p.band_hz[0] / 1e6:g}-{p.band_hz[1] / 1e6:g} MHz"
        lines.append(f"{p.id:22s} {p.name} ({band})")
        for r in p.rules:
            lines.append(f"    {r.title}: {r.summary} [{r.citation}; {r.certainty}]")
    return "\n".join(lines)


def replan_table(result: Replan) -> str:
    proven = "proven minimal" if result.proven_minimal else f"lower bound {result.change_lower_bound}"
    out = [f"re-plan: {result.change_count} channel change(s) ({proven}); objective {result.objective:.5f} "
           f"against a fresh plan's {result.fresh_objective:.5f}", ""]
    out += _systems_table(result.assessment)
    out += ["", "changes:"]
    for c in result.changes:
        if c.status == "kept":
            out.append(f"  {c.id}: unchanged")
        elif c.status == "new system":
            out.append(f"  {c.id}: new system, {len(c.added)} channels")
        else:
            seq = ", new sequence" if c.sequence_changed else ""
            out.append(f"  {c.id}: drop {_ranges(c.dropped)}; add {_ranges(c.added)}{seq}")
    out += ["", "predicted per-hop collision, now -> after the re-plan:"]
    for d in result.raw["diff"]:
        if d["before"]:
            out.append(f"  {d['id']}: {_pct(d['before']['collision_probability'])} -> "
                       f"{_pct(d['after']['collision_probability'])}")
    out += [f"  note: {n}" for n in result.raw.get("notes", [])]
    out += traffic_lines((result.raw.get("assessment") or {}).get("traffic"))
    return "\n".join(out + _cautions(result.cautions))
