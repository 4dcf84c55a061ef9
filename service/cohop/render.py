"""Plain-text rendering of results for the command line (client types only)."""

from __future__ import annotations

import textwrap

from cohop_client import Assessment


def _pct(p: float) -> str:
    if p == 0:
        return "0"
    if p < 1e-4:
        return f"{100 * p:.1e}%"
    return f"{100 * p:.2f}%"


def assessment_table(result: Assessment) -> str:
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
    out = [f"profile {result.profile_id}; priority-weighted hit/hop sum {result.weighted_collision_probability:.4f}; "
           f"worst system {result.worst_system}", ""] + lines
    failing = [(s.id, f) for s in result.systems for f in s.findings if f.status == "fail"]
    if failing:
        out += ["", "compliance failures:"]
        out += [f"  {sid}: {f.message} [{f.citation}; {f.certainty}]" for sid, f in failing]
    if result.simulation:
        out += ["", _simulation_lines(result)]
    out += ["", "cautions:"] + [textwrap.fill(c, 100, initial_indent="  - ", subsequent_indent="    ")
                                for c in result.cautions]
    return "\n".join(out)


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
