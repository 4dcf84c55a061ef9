"""The report's sections, each built from the request and answer JSON (plain dicts)."""

from __future__ import annotations

import json

from cohop.charts.data import assessment_of, kind_of, pct
from cohop.report.html import bullets, esc, para, section, table, tag

#: Said in every report besides the answer's own cautions.
REPORT_CAUTION = ("Every figure here is a planning estimate. A site survey confirms it; local regulations, the "
                  "regulator, licensed practice and the machine's safety assessment prevail over anything this "
                  "report says.")
KIND_TITLE = {"assessment": "Assessment", "plan": "Plan", "replan": "Re-plan"}


def ranges(channels) -> str:
    """Channel numbers as runs: [0, 1, 2, 5] -> '0-2, 5'."""
    out, run = [], []
    for c in sorted(channels):
        if run and c == run[-1] + 1:
            run.append(c)
            continue
        if run:
            out.append(f"{run[0]}-{run[-1]}" if len(run) > 1 else f"{run[0]}")
        run = [c]
    if run:
        out.append(f"{run[0]}-{run[-1]}" if len(run) > 1 else f"{run[0]}")
    return ", ".join(out) or "none"


def _mhz(hz) -> str:
    return "" if hz is None else f"{hz / 1e6:.4f}"


def _num(v, fmt="{:.1f}") -> str:
    return "" if v is None else fmt.format(v)


def header(body: dict, answer: dict) -> str:
    site = body["site"]
    kind = kind_of(answer)
    profile = assessment_of(answer).get("profile") or {}
    title = f"{KIND_TITLE[kind]} report: {site.get('name') or 'site'}"
    sub = f"profile {profile.get('id', site.get('profile'))} ({profile.get('name', '')}); " \
          f"{len(site['systems'])} systems; {len(site.get('interferers', []))} interferers given"
    cautions = [REPORT_CAUTION, *answer.get("cautions", [])]
    nav = tag("nav", "".join(tag("a", esc(t), href=f"#{a}") for a, t in (
        ("charts", "Charts"), ("plan", "Plan"), ("figures", "Figures"), ("compliance", "Compliance"),
        ("baselines", "Baselines"), ("inputs", "Inputs"), ("assumptions", "Assumptions"))))
    return (tag("h1", esc(title)) + para(sub, class_="sub") + nav +
            tag("div", tag("strong", "Cautions") + bullets(cautions), class_="cautions", id="cautions"))


def summary(answer: dict) -> str:
    kind = kind_of(answer)
    s = assessment_of(answer)["summary"]
    # a sum over the systems (priority-weighted), not a probability: written as a number, not a percentage
    rows = [["priority-weighted sum of per-hop hit probabilities", _num(s["weighted_collision_probability"],
                                                                         "{:.4f}")],
            ["worst per-hop hit probability", f"{pct(s['worst_collision_probability'])} ({s['worst_system']})"]]
    if kind == "plan":
        solver = answer["solver"]
        rows += [["coordination", answer.get("coordination", "")], ["solver status", solver["status"]],
                 ["objective (evaluated)", _num(solver.get("evaluated_objective"), "{:.5g}")],
                 ["proven lower bound", _num(solver.get("bound"), "{:.5g}")],
                 ["gap", _num(solver.get("gap"), "{:.3g}")],
                 ["search time [s]", _num(solver.get("time_s"), "{:.2f}")]]
        comparison = answer.get("comparison") or {}
        if comparison.get("best_baseline"):
            rows.append(["against the best baseline",
                         f"{comparison['best_baseline']}: {_num(comparison['best_baseline_objective'], '{:.5g}')}; "
                         f"plan / baseline = {_num(comparison.get('ratio'), '{:.3f}')}"])
    if kind == "replan":
        changes = answer["changes"]
        rows += [["mode", json.dumps(answer["mode"])], ["channel changes", changes["count"]],
                 ["fewest changes proven", "yes" if changes.get("proven_minimal") else "no"],
                 ["systems removed", ", ".join(changes.get("removed_systems") or []) or "none"],
                 ["objective (evaluated)", _num(answer["evaluated_objective"], "{:.5g}")],
                 ["fresh plan objective", _num((answer.get("fresh") or {}).get("evaluated_objective"), "{:.5g}")]]
    return section("summary", "Summary", table(["figure", "value"], rows))


def plan(body: dict, answer: dict) -> str:
    kind = kind_of(answer)
    grid = body["site"]["grid"]
    centre = lambda c: grid["first_centre_hz"] + c * grid["spacing_hz"]  # noqa: E731
    hop_sets = ({p["id"]: p["hop_set"] for p in answer["plan"]} if kind != "assessment"
                else {s["id"]: s["hop_set"] for s in answer["systems"]})
    intro = para(f"Channel numbers are grid indices: channel k is centred at {_mhz(grid['first_centre_hz'])} MHz "
                 f"+ k x {grid['spacing_hz'] / 1e3:g} kHz.")
    rows = [[sid, len(hs), (ranges(hs), "channels"), f"{_mhz(centre(min(hs)))} - {_mhz(centre(max(hs)))}"]
            for sid, hs in hop_sets.items()]
    out = intro + table(["system", "channels", "hop set (channel numbers)", "lowest - highest centre [MHz]"], rows,
                        numeric={1})
    if kind == "replan":
        out += tag("h3", "Changes against the current plan") + table(
            ["system", "status", "dropped", "added", "hit per hop before", "after", "lost after retries before",
             "after"],
            [[d["id"], d["status"], (ranges(d["dropped"]), "channels"), (ranges(d["added"]), "channels"),
              pct((d.get("before") or {}).get("collision_probability", 0)) if d.get("before") else "",
              pct(d["after"]["collision_probability"]),
              pct(d["before"]["residual_loss_probability"]) if d.get("before") else "",
              pct(d["after"]["residual_loss_probability"])] for d in answer["diff"]], numeric={4, 5, 6, 7})
    title = {"assessment": "Hop sets assessed", "plan": "The plan", "replan": "The re-plan"}[kind]
    return section("plan", title, out)


def figures(answer: dict) -> str:
    systems = assessment_of(answer)["systems"]
    rows = [[s["id"], s.get("label", ""), s["channel_count"], _num(s["link"]["wanted_signal_dbm"]),
             _num(s["link"]["fade_margin_db"]), pct(s["per_hop"]["collision_probability"]),
             pct(s["per_hop"]["fade_probability"]), pct(s["per_attempt"]["loss_probability"]),
             s["retries"]["retry_limit"], pct(s["retries"]["residual_loss_probability"]),
             _num(s["retries"]["expected_attempts"], "{:.3f}")] for s in systems]
    out = table(["system", "label", "channels", "wanted [dBm]", "fade margin [dB]", "hit per hop",
                 "fade per hop", "loss per attempt", "retries", "lost after retries", "attempts (mean)"], rows,
                numeric={2, 3, 4, 5, 6, 7, 8, 9, 10})
    for s in systems:
        sources = sorted((x for x in s.get("sources") or [] if x["collision_probability"] > 0),
                         key=lambda x: -x["collision_probability"])
        if sources:
            out += tag("h3", esc(f"{s['id']}: who hits it (each source alone)")) + table(
                ["source", "kind", "level [dBm]", "above the SIR limit [dB]", "over the limit within [channels]",
                 "harm of one transmission co-channel", "hit per hop"],
                [[x["id"], x["kind"], _num(x["level_dbm"]), _num(x["excess_db"]), x.get("window_channels", ""),
                  _num((x.get("harm_by_offset") or [None])[0], "{:.3g}"), pct(x["collision_probability"])] for x in sources],
                numeric={2, 3, 4, 5, 6})
    sim = assessment_of(answer).get("simulation")
    if sim:
        out += tag("h3", "Monte Carlo check") + tag("pre", esc(json.dumps(sim, indent=1)[:4000]))
    return section("figures", "Figures", out)


def _with_interval(figure: dict | None, fmt) -> str:
    if figure is None:
        return ""
    lo, hi = figure["interval"]
    return f"{fmt(figure['value'])} ({fmt(lo)} to {fmt(hi)})"


def _rate(x: float) -> str:
    return f"{x:.3g}"


def traffic(answer: dict) -> str:
    """The traffic figures of the systems that state requirements (`traffic[]`), with their intervals, model
    and caution; empty when none does."""
    items = assessment_of(answer).get("traffic") or []
    if not items:
        return ""
    rows = []
    for t in items:
        req = t.get("requirement") or {}
        quantiles = "/".join("never" if q["latency_s"] is None else f"{1000 * q['latency_s']:.1f}"
                             for q in t.get("latency_quantiles") or [])
        deadline = "" if req.get("deadline_s") is None else (
            f"{req['deadline_s']:g} s, may miss {pct(1 - req['deadline_probability'])}: "
            + ("met" if t.get("meets_deadline") else "NOT met"))
        watchdog = "" if req.get("watchdog_s") is None else (
            f"{req['watchdog_s']:g} s, at most {req['max_stops_per_hour']:g}/h: "
            + ("met" if t.get("meets_stops") else "NOT met"))
        rows.append([t["id"], f"{t['message_interval_s']:g}", quantiles, _with_interval(t.get("deadline_missed"), pct),
                     deadline, _with_interval(t.get("stops_per_hour"), _rate), watchdog,
                     (t.get("deadline_missed") or t.get("stops_per_hour") or {}).get("dominant_source", "")])
    out = para(esc(items[0]["caution"].capitalize() + "."))
    out += para(esc("Model: " + items[0]["model"] + "."))
    out += table(["system", "message every [s]", "latency 50/90/99/99.9 % [ms]", "misses its deadline (95 %)",
                  "deadline", "watchdog stops per hour (95 %)", "watchdog", "main source"], rows)
    return section("traffic", "Traffic: deadlines and watchdog stops", out)


def compliance(answer: dict) -> str:
    out = ""
    for s in assessment_of(answer)["systems"]:
        c = s.get("compliance") or {}
        status = c.get("status", "not checked")
        out += tag("h3", esc(f"{s['id']}: ") + tag("span", esc(status), class_=status))
        out += table(["rule", "status", "finding", "citation", "certainty"],
                     [[f["title"], (f["status"], f["status"]), f["message"], f["citation"], f["certainty"]]
                      for f in c.get("findings", [])])
    return section("compliance", "Compliance (profile checks, with citations)", out or para("not checked"))


def baselines(answer: dict) -> str:
    items = answer.get("baselines") or []
    if not items:
        return section("baselines", "Baselines", para("No baselines were evaluated for this answer "
                                                      "(a plan request with \"baselines\" gives them)."))
    rows = [[b["name"], _num(b["objective"], "{:.5g}"), "yes" if b["meets_requirements"] else "no",
             "; ".join(f"{v['requirement']} ({', '.join(v['systems'])})" for v in b.get("violations", []))[:300]]
            for b in items]
    out = para("The plan's evaluated objective against common practitioner choices, on the same model.")
    out += table(["baseline", "objective", "meets the requirements", "requirements missed"], rows, numeric={1})
    return section("baselines", "Baselines", out)


def _without_traces(body: dict) -> dict:
    """The request with survey traces summarised (their points would swamp the report)."""
    copy = json.loads(json.dumps(body))
    for s in copy.get("site", {}).get("surveys", []):
        n = len(s.get("frequencies_hz", []))
        for key in ("frequencies_hz", "levels_dbm", "occupancy_fraction"):
            if key in s:
                s[key] = f"({n} points)"
    return copy


def inputs(body: dict) -> str:
    site = body["site"]
    grid = site["grid"]
    out = para(f"Profile {site['profile']}; grid of {grid['count']} channels from "
               f"{_mhz(grid['first_centre_hz'])} MHz every {grid['spacing_hz'] / 1e3:g} kHz.")
    out += tag("h3", "Hopping systems") + table(
        ["id", "label", "power [dBm]", "antenna [dBi]", "bandwidth [kHz]", "dwell [ms]", "packet [ms]", "activity",
         "SIR needed [dB]", "retries", "position x, y [m]"],
        [[s["id"], s.get("label", ""), _num(s["tx_power_dbm"]), _num(s.get("antenna_gain_dbi", 0.0)),
          _num(s["bandwidth_hz"] / 1e3, "{:g}"), _num(s["dwell_s"] * 1e3, "{:g}"),
          _num(s["packet_airtime_s"] * 1e3, "{:g}"), _num(s["activity_fraction"], "{:g}"),
          _num(s["required_sir_db"]), s["retry_limit"],
          f"{s['position']['x_m']:g}, {s['position']['y_m']:g}" if s.get("position") else ""]
         for s in site["systems"]], numeric={2, 3, 4, 5, 6, 7, 8, 9})
    itfs = site.get("interferers", [])
    if itfs:
        out += tag("h3", "Fixed interferers") + table(
            ["id", "label", "span [MHz]", "activity", "level", "position x, y [m]"],
            [[i["id"], i.get("label", ""), _span(i), _num(i.get("activity_fraction", 1.0), "{:g}"),
              f"EIRP {i['eirp_dbm']:g} dBm" if i.get("eirp_dbm") is not None else
              f"given at {len(i.get('levels', []))} systems",
              f"{i['position']['x_m']:g}, {i['position']['y_m']:g}" if i.get("position") else ""] for i in itfs])
    out += tag("details", tag("summary", "The request as sent (survey traces summarised)") +
               tag("pre", esc(json.dumps(_without_traces(body), indent=1))))
    return section("inputs", "Inputs", out)


def _span(i: dict) -> str:
    if "low_hz" in i:
        return f"{_mhz(i['low_hz'])} - {_mhz(i['high_hz'])}"
    half = i["width_hz"] / 2
    return f"{_mhz(i['centre_hz'] - half)} - {_mhz(i['centre_hz'] + half)}"


def assumptions(answer: dict) -> str:
    a = assessment_of(answer)
    notes = list(dict.fromkeys([*a.get("notes", []), *answer.get("notes", []),
                                *(answer.get("solver") or {}).get("notes", [])]))
    out = tag("h3", "Model assumptions") + bullets(a.get("assumptions", []))
    if notes:
        out += tag("h3", "Notes") + bullets(notes)
    return section("assumptions", "Assumptions and notes", out)
