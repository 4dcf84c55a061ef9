"""Plain-text rendering of results for the command line (client types only)."""

from __future__ import annotations

import math
import textwrap
import time
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # the client's types, for annotations only (profiles and samples start without requests)
    from cohop_client import Assessment, Plan, Replan


SMALLEST_PCT = 1e-6  # below this a percentage reads "<0.000001%" (never scientific notation)


def _harm_text(source: dict) -> str:
    """How far a source's harm reaches and what one transmission costs co-channel (fading-aware)."""
    by_offset, reach = source.get("harm_by_offset"), source.get("harm_reach_channels")
    if not by_offset or reach is None or reach < 0:
        return ""
    far = "every offset" if by_offset[-1] > 0 else f"{reach} ch"  # the last value holds beyond the list
    return f"  harm {by_offset[0]:.3g} co-channel, reaches {far}"


def _pct(p: float) -> str:
    """A probability as a percentage in plain decimals: two significant digits below 1 %, two decimals above."""
    pct = 100 * p
    if pct == 0:
        return "0%"
    if pct < SMALLEST_PCT:
        return f"<{SMALLEST_PCT:.6f}%"
    decimals = 2 if pct >= 1 else min(7, 1 - math.floor(math.log10(pct)))
    return f"{pct:.{decimals}f}%"


def _pct_interval(p: float, interval) -> str:
    """A simulated probability always with its 95 % interval (a 0 from few packets says little alone)."""
    if not interval:
        return _pct(p)
    lo, hi = interval
    return f"{_pct(p)} [{_pct(lo)}, {_pct(hi)}]"


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


def _channel_row(c: dict) -> str:
    row = f"  {c['channel']:5d} {c['centre_hz'] / 1e6:12.6f} {_pct(c['collision_probability']):>12s}  "
    if c.get("by_source"):
        shares = sorted(c["by_source"].items(), key=lambda kv: -kv[1])
        return row + ", ".join(f"{sid} {_pct(p)}" for sid, p in shares)
    return row + (c.get("dominant_source") or "-")


def _detail_lines(result: Assessment, detail: str | None) -> list[str]:
    """Each system's sources and every channel's figures ('channel'), with each channel's breakdown by
    source ('source'); 'system' (the service's default) shows the systems table alone."""
    if detail not in ("channel", "source"):
        return []
    out = []
    for s in result.systems:
        sources = sorted(s.raw.get("sources") or [], key=lambda x: -x["collision_probability"])
        out += ["", f"{s.id}: hit/hop by source"]
        out += [f"  {x['id']:24s} {x['kind']:10s} {_pct(x['collision_probability']):>12s}"
                + ("" if x.get("window_channels") is None else f"  window {x['window_channels']} ch")
                + _harm_text(x)
                for x in sources] or ["  (no source reaches it)"]
        channels = s.raw.get("channels") or []
        if channels:
            what = "its sources" if detail == "source" else "dominant source"
            out.append(f"{s.id}: per channel (channel, centre MHz, hit/hop, {what})")
            out += [_channel_row(c) for c in channels]
    return out


def assessment_table(result: Assessment, detail: str | None = None) -> str:
    out = [f"profile {result.profile_id}; priority-weighted hit/hop sum {result.weighted_collision_probability:.4f}; "
           f"worst system {result.worst_system}", ""] + _systems_table(result)
    out += _detail_lines(result, detail)
    flagged = [(s.id, f) for s in result.systems for f in s.findings if f.status in ("fail", "warning")]
    if flagged:
        out += ["", "compliance failures and warnings (each with its reason):"]
        out += [f"  {sid}: {f.status} {f.rule}: {f.message} [{f.citation}; {f.certainty}]" for sid, f in flagged]
    if result.simulation:
        out += ["", _simulation_lines(result)]
    out += mobility_lines(result.raw.get("systems"))
    out += traffic_lines(result.raw.get("traffic"))
    return "\n".join(out + _cautions(result.cautions))


def _ms(x: float | None) -> str:
    return "never" if x is None else f"{1e3 * x:.1f}"


def _verdict(flag: bool | None) -> str:
    return "" if flag is None else ": met" if flag else ": NOT met"


def _clear(ratio: float | None) -> str:
    return "" if ratio is None else f"; clearance {ratio:.3g}"


def _place(p: dict) -> str:
    return f"x {p['x_m']:g} m, y {p['y_m']:g} m, floor {p['floor']}"


def mobility_lines(systems: list | None) -> list[str]:
    """Systems that move (more than one sampled position): the site's policy, where each is worst off, and
    under the mean policy the mean over its positions (answer field `systems[].mobility`)."""
    moving = [(s["id"], s["mobility"]) for s in systems or () if (s.get("mobility") or {}).get("positions_sampled",
                                                                                              0) > 1]
    if not moving:
        return []
    policy = moving[0][1]["policy"]
    headline = ("each pair coupled at its worst positions" if policy == "worst"
                else "the mean over each moving system's positions")
    out = ["", f"moving systems (policy {policy}: the table shows {headline}):"]
    for sid, m in moving:
        w = m.get("worst_position")
        line = f"  {sid}: {m['positions_sampled']} positions"
        if w:
            line += (f"; worst at {_place(w['position'])} (position {w['index']}): hit/hop "
                     f"{_pct(w['collision_probability'])}, after retries {_pct(w['residual_loss_probability'])}")
        if m.get("mean"):
            line += (f"; mean over positions: hit/hop {_pct(m['mean']['collision_probability'])}, after retries "
                     f"{_pct(m['mean']['residual_loss_probability'])}")
        out.append(textwrap.fill(line, 100, subsequent_indent="      "))
    return out


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


def plan_table(result: Plan, detail: str | None = None) -> str:
    r = result.solver
    gap = "n/a" if r.gap is None else f"{100 * r.gap:.1f}%"
    out = [f"plan: {r.status}; objective {r.objective:.5f} (evaluated {r.evaluated_objective:.5f}), proven bound "
           f"{r.bound:.5f}, gap {gap}, {r.time_s:.1f} s", f"method: {r.method}", ""]
    out += _systems_table(result.assessment)
    out += _detail_lines(result.assessment, detail)
    out += ["", "hop sets:"]
    out += [textwrap.fill(f"{p.id}: {_ranges(p.hop_set)}", 100, initial_indent="  ", subsequent_indent="      ")
            for p in result.systems]
    out += _sequence_lines(result.raw.get("sequences"))
    out += mobility_lines((result.raw.get("assessment") or {}).get("systems"))
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
    if r.notes:
        out += ["", "notes:"] + [f"  - {n}" for n in r.notes]
    return "\n".join(out + _cautions(result.cautions))


def _simulated(r: dict) -> str:
    return _pct_interval(r["residual_loss_probability"], r.get("residual_interval"))


def _sequence_lines(seqs: dict | None) -> list[str]:
    if not seqs:
        return []
    out = ["", f"hop sequences (delay spread {seqs['delay_spread_s'] * 1e9:.0f} ns; residual loss after retries: "
               "simulated with these orders / independent attempts / same channels in ascending order / "
               "every system in one common pattern; simulated figures with their 95% intervals):"]
    for s in seqs["systems"]:
        r = s["retries"]
        sp = s["spacing"]
        out.append(f"  {s['id']}: {s['construction']}, {s['period_hops']} hops = {s['period_s']:.2f} s; closest step "
                   f"{sp['min_channels']} ch (want {sp['required_channels']}), fading corr <= "
                   f"{sp['fading_correlation_max']:.2f}; {r['packets']} packets: {_simulated(r)} / "
                   f"{_pct(r['independent_residual_probability'])} / {_simulated(r['ascending_order'])} / "
                   f"{_simulated(r['common_pattern'])}")
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
        self._write(f"{p.elapsed_s:6.1f} s  best {obj}  bound {bound}  gap {gap}  ({p.phase})")

    def tick(self, what: str, elapsed_s: float, limit_s: float | None) -> None:
        """Elapsed time of a solve that reports nothing else."""
        of = "" if limit_s is None else f" of at most {limit_s:g} s"
        self._write(f"{elapsed_s:6.1f} s{of}  ({what})")

    def _write(self, text: str) -> None:
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


def replan_table(result: Replan, detail: str | None = None) -> str:
    proven = "proven minimal" if result.proven_minimal else f"lower bound {result.change_lower_bound}"
    out = [f"re-plan: {result.change_count} channel change(s) ({proven}); objective {result.objective:.5f} "
           f"against a fresh plan's {result.fresh_objective:.5f}", ""]
    out += _systems_table(result.assessment)
    out += _detail_lines(result.assessment, detail)
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
    out += mobility_lines((result.raw.get("assessment") or {}).get("systems"))
    out += traffic_lines((result.raw.get("assessment") or {}).get("traffic"))
    return "\n".join(out + _cautions(result.cautions))


def _cell(figures: dict | None) -> str:
    if not figures:
        return "-"
    return f"{_pct(figures['collision_probability'])} ({figures['compliance']})"


def diff_table(diff: dict, name_a: str, name_b: str) -> str:
    """`cohop diff`: systems added and removed, channels dropped and added, figures before and after."""
    out = [f"from {name_a} ({diff['from']}) to {name_b} ({diff['to']})"]
    out += [f"  system added: {s}" for s in diff["systems_added"]]
    out += [f"  system removed: {s}" for s in diff["systems_removed"]]
    out += [f"  interferer added: {i}" for i in diff.get("interferers_added", [])]
    out += [f"  interferer removed: {i}" for i in diff.get("interferers_removed", [])]
    out += ["", "system: channels dropped; added; hit/hop (compliance) before -> after"]
    for s in diff["systems"]:
        if s["dropped"] is None:
            change = "hop set not given on both sides"
        elif not s["dropped"] and not s["added"]:
            change = "same channels"
        else:
            change = f"drop {_ranges(s['dropped']) or '-'}; add {_ranges(s['added']) or '-'}"
        figures = "" if s["before"] is None and s["after"] is None else \
            f"; {_cell(s['before'])} -> {_cell(s['after'])}"
        out.append(f"  {s['id']}: {change}{figures}")
    return "\n".join(out)


def compare_table(rows) -> str:
    """`cohop compare`: one row per system, one column per scenario (hit/hop, after retries, compliance)."""
    names = [name for name, _ in rows]
    systems: list[str] = []
    for _, result in rows:
        systems += [s.id for s in result.systems if s.id not in systems]
    table = [["system"] + names]
    for sid in systems:
        line = [sid]
        for _, result in rows:
            found = [s for s in result.systems if s.id == sid]
            line.append("-" if not found else f"{_pct(found[0].collision_probability)} / "
                        f"{_pct(found[0].residual_loss_probability)} {found[0].compliance_status}")
        table.append(line)
    table.append(["weighted sum"] + [f"{r.weighted_collision_probability:.5f}" for _, r in rows])
    table.append(["worst system"] + [r.worst_system for _, r in rows])
    widths = [max(len(r[i]) for r in table) for i in range(len(table[0]))]
    lines = ["  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip() for r in table]
    lines.insert(1, "  ".join("-" * w for w in widths))
    head = "each cell: predicted hit/hop / loss after retries, compliance status"
    return "\n".join([head, ""] + lines + _cautions(rows[0][1].cautions))
