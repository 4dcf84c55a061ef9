"""The `cohop` command line.

Without --server it runs the service in-process (no server needed); with
--server URL it talks HTTP through the same client. Commands that need no
solver (`profiles`, `samples`, `--version`, `apply`, `diff`) import neither
the service stack nor the client until they need it.

Exit codes (README, "Exit codes"): EXIT_OK .. EXIT_EXTRA below.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import threading
import time
from pathlib import Path
from types import SimpleNamespace

from cohop import __version__

EXIT_OK = 0
EXIT_REJECTED = 1     # the service rejected the request (problem details with field pointers)
EXIT_USAGE = 2        # bad command line or unreadable input files (argparse uses 2 too)
EXIT_INFEASIBLE = 3   # no plan meets the requirements, or none found in time
EXIT_COMPLIANCE = 4   # a system fails a profile check (only with --fail-on-compliance)
EXIT_SERVICE = 5      # the service failed, or could not be reached (transport, timeout, 5xx)
EXIT_EXTRA = 6        # an optional extra is missing (the service extra, matplotlib for charts)

SERVICE_PACKAGES = {"flask", "flask_smorest", "marshmallow", "numpy", "scipy", "ortools", "werkzeug", "webargs",
                    "apispec", "gunicorn", "prometheus_client"}
PROBLEM_BASE = "urn:cohop:problem:cli:"
STDIO = "-"


class CliFailure(Exception):
    """A failure the command line reports itself: exit code, message and (with --json) problem details."""

    def __init__(self, code: int, message: str, kind: str, problem: dict | None = None):
        super().__init__(message)
        self.code = code
        self.kind = kind
        self.problem = problem


def fail(code: int, message: str, kind: str = "usage") -> CliFailure:
    return CliFailure(code, message, kind)


# --- input and output --------------------------------------------------------------------------------------

def _read_text(path: str, what: str) -> str:
    if path == STDIO:
        try:
            return sys.stdin.read()
        except UnicodeDecodeError as err:
            raise fail(EXIT_USAGE, f"cohop: standard input is not UTF-8 text: {err.reason} at byte {err.start}")
    try:
        return Path(path).read_text(encoding="utf-8")
    except OSError as err:
        raise fail(EXIT_USAGE, f"cohop: cannot read {what} {path}: {err.strerror}")
    except UnicodeDecodeError as err:
        raise fail(EXIT_USAGE, f"cohop: {path} is not UTF-8 text: {err.reason} at byte {err.start}")


def read_json(path: str, what: str):
    text = _read_text(path, what)
    name = "standard input" if path == STDIO else path
    try:
        return json.loads(text)
    except json.JSONDecodeError as err:
        raise fail(EXIT_USAGE, f"cohop: {name} is not valid JSON: {err}")


def write_text(path: str, text: str) -> None:
    """Write to a file, or to standard output for '-'."""
    if path == STDIO:
        sys.stdout.write(text)
        sys.stdout.flush()
        return
    try:
        Path(path).write_text(text, encoding="utf-8")
    except OSError as err:
        raise fail(EXIT_USAGE, f"cohop: could not write {path}: {err.strerror}")


def _dumps(data) -> str:
    return json.dumps(data, indent=2) + "\n"


def _service_missing(err: ImportError) -> CliFailure:
    if (err.name or "").split(".")[0] not in SERVICE_PACKAGES:
        raise err
    return fail(EXIT_EXTRA, f"cohop: the embedded service needs the service extra ({err.name} is missing): "
                "pip install 'cohop[service]', or give --server URL", "missing-extra")


def _client(args, config: dict | None = None):
    from cohop_client import Client

    token = args.token or os.environ.get("COHOP_TOKEN")
    if args.server:
        return Client(args.server, timeout_s=args.timeout, token=token)
    try:
        from cohop.api import create_app
        from cohop.embedded import EMBEDDED_URL, embedded_session
    except ImportError as err:
        raise _service_missing(err)
    return Client(EMBEDDED_URL, timeout_s=args.timeout, token=token,
                  session=embedded_session(create_app(config)))


def _add_surveys(args, body: dict) -> None:
    if not getattr(args, "survey", None):
        return
    from cohop.survey_csv import SurveyFileError, read_survey

    for path in args.survey:
        try:
            survey = read_survey(path)
        except SurveyFileError as err:
            raise fail(EXIT_USAGE, f"cohop: survey {err}")
        except OSError as err:
            raise fail(EXIT_USAGE, f"cohop: cannot read survey {path}: {err.strerror}")
        body["site"].setdefault("surveys", []).append(survey)


def _chart(args, body: dict, raw: dict) -> None:
    """--chart FILE: the channel map, at --chart-size."""
    if not getattr(args, "chart", None):
        return
    from cohop import charts

    try:
        width, height = (float(v) for v in args.chart_size.lower().split("x"))
    except ValueError:
        raise fail(EXIT_USAGE, f"cohop: --chart-size wants WIDTHxHEIGHT in inches, not {args.chart_size!r}")
    _picture(args.chart, "chart", lambda path: charts.channel_map(body["site"], raw, path, width, height,
                                                                  dominant=getattr(args, "dominant", False)))


def _picture(path: str | None, what: str, draw) -> None:
    """Draw one picture to `path` (when the option was given) with `draw(path)`; a missing matplotlib is
    EXIT_EXTRA, a picture the answer has nothing for (ValueError) a usage error."""
    if not path:
        return
    from cohop.charts import PlotUnavailable

    try:
        draw(path)
    except PlotUnavailable as err:
        raise fail(EXIT_EXTRA, f"cohop: {err}", "missing-extra")
    except ValueError as err:
        raise fail(EXIT_USAGE, f"cohop: no {what}: {err}")
    print(f"{what} written to {path}", file=sys.stderr)


def _site_map(args, body: dict, raw: dict) -> None:
    """--site-map FILE: systems and interferers by position, harmful pairs drawn."""
    from cohop import charts

    _picture(getattr(args, "site_map", None), "site map", lambda path: charts.site_map(body["site"], raw, path))


def _traffic_chart(args, body: dict, raw: dict) -> None:
    """--traffic-chart FILE: deadline misses and watchdog stops against each system's limits."""
    from cohop import charts

    _picture(getattr(args, "traffic_chart", None), "traffic chart",
             lambda path: charts.traffic_chart(body["site"], raw, path))


def _write_report(args, body: dict, raw: dict) -> None:
    """--report FILE.html: the self-contained HTML report of this answer."""
    if not getattr(args, "report", None):
        return
    from cohop.report import write_report

    try:
        write_report(args.report, body, raw)
    except OSError as err:
        raise fail(EXIT_USAGE, f"cohop: could not write {args.report}: {err.strerror}")
    print(f"report written to {args.report}", file=sys.stderr)


def _pictures_detail(args) -> str | None:
    """Charts and reports shade each channel: without a --detail, ask for the per-channel figures."""
    wanted = (getattr(args, name, None) for name in ("chart", "report", "site_map"))
    return "channel" if any(wanted) else None


def _load_request(args, own_file_hint: str) -> dict:
    if args.site is not None:
        body = read_json(args.site, "site")
    else:
        from cohop import samples

        try:
            body = samples.load(args.sample)
        except KeyError as err:
            raise fail(EXIT_USAGE, f"cohop: {err.args[0]}")
        print(f"(embedded sample site '{args.sample}'; {own_file_hint})", file=sys.stderr)
    if not isinstance(body, dict):
        raise fail(EXIT_USAGE, "cohop: the site file must hold a JSON object")
    body = body if "site" in body else {"site": body}
    if not isinstance(body["site"], dict):
        raise fail(EXIT_USAGE, "cohop: the request's 'site' must be a JSON object")
    _add_surveys(args, body)
    return body


def _emit(args, raw: dict, table: str) -> int:
    """Print the table (or the JSON), save the answer, export hop tables, and choose the exit code."""
    if args.json:
        print(json.dumps(raw, indent=2))
    else:
        print(table)
    if args.save:
        write_text(args.save, _dumps(raw))
        if not args.json and args.save != STDIO:
            print(f"\nfull answer written to {args.save}")
    return _compliance_code(args, raw)


def _compliance_code(args, raw: dict) -> int:
    if not getattr(args, "fail_on_compliance", False):
        return EXIT_OK
    assessment = raw.get("assessment", raw)
    failing = [s["id"] for s in assessment.get("systems", []) if s.get("compliance", {}).get("status") == "fail"]
    if failing:
        print(f"cohop: compliance fails for {', '.join(failing)} (--fail-on-compliance)", file=sys.stderr)
        return EXIT_COMPLIANCE
    return EXIT_OK


def _export(args, body: dict, raw: dict) -> None:
    if not getattr(args, "export", None):
        return
    from cohop.exports import ExportError, write_hop_tables

    try:
        paths = write_hop_tables(args.export, body["site"], raw, per=args.export_per)
    except (KeyError, TypeError, AttributeError) as err:
        raise _misshapen("the site or the answer", err)
    except ExportError as err:
        raise fail(EXIT_USAGE, f"cohop: {err}")
    except OSError as err:
        raise fail(EXIT_USAGE, f"cohop: could not write hop tables to {args.export}: {err.strerror}")
    print(f"hop tables written to {args.export} ({len(paths)} files)", file=sys.stderr)


def _misshapen(what: str, err: Exception) -> CliFailure:
    """A document that parsed as JSON but lacks what the step reads (a hand-edited file, say)."""
    return fail(EXIT_USAGE, f"cohop: {what} does not have the expected shape ({type(err).__name__}: {err}); "
                "give a site, a request, or an answer saved with --save")


# --- assess ------------------------------------------------------------------------------------------------

def _with_current_plan(body: dict) -> dict:
    """A re-plan request given to assess: assess its current plan (its hop sets and sequences) on its site."""
    current = body.get("current")
    if not current:
        return body
    from cohop.workflow import WorkflowError, apply_current

    try:
        site = apply_current(body["site"], current)
    except WorkflowError as err:
        raise fail(EXIT_USAGE, f"cohop: {err}")
    print("(the request holds a current plan: assessing its hop sets and sequences on its site)", file=sys.stderr)
    return {**body, "site": site}


def _cmd_assess(args) -> int:
    from cohop.cli_text import assessment_table

    body = _with_current_plan(_load_request(args, "give a site file (or '-') to assess your own"))
    simulation = body.get("simulation")
    if args.trials is not None:
        simulation = {"trials_per_system": args.trials, "seed": args.seed}
    detail = args.detail or body.get("detail") or _pictures_detail(args)
    with _client(args) as api:
        if simulation:
            print("simulating...", file=sys.stderr, flush=True)
        result = api.assess(body["site"], simulation=simulation, detail=detail)
    _chart(args, body, result.raw)
    _write_report(args, body, result.raw)
    _site_map(args, body, result.raw)
    _traffic_chart(args, body, result.raw)
    return _emit(args, result.raw, assessment_table(result, detail=args.detail))


# --- plan --------------------------------------------------------------------------------------------------

def _search(args, body: dict) -> dict | None:
    search = dict(body.get("search") or {})
    if args.time_limit is not None:
        search["time_limit_s"] = args.time_limit
    if args.seed is not None:
        search["seed"] = args.seed
    return search or None


def _cmd_plan(args) -> int:
    from cohop.cli_text import ProgressLine, plan_table

    body = _load_request(args, "give a site file (or '-') to plan your own")
    requirements = dict(body.get("requirements") or {})
    if args.objective:
        requirements["objective"] = args.objective
    if args.coordination:
        requirements["coordination"] = args.coordination
    baselines = ["all"] if args.compare else body.get("baselines")
    line = ProgressLine(sys.stderr)
    config = {"COHOP_PROGRESS_HOOK": line.update, "COHOP_SOLVER_THREADS": args.workers}
    if args.server:
        print(f"planning on {args.server} ...", file=sys.stderr, flush=True)
    with _client(args, config) as api:
        try:
            result = api.plan(body["site"], requirements=requirements or None, search=_search(args, body),
                              baselines=baselines, detail=args.detail or body.get("detail") or _pictures_detail(args))
        finally:
            line.finish()
    _chart(args, body, result.raw)
    _write_report(args, body, result.raw)
    _site_map(args, body, result.raw)
    _traffic_chart(args, body, result.raw)
    _export(args, body, result.raw)
    return _emit(args, result.raw, plan_table(result, detail=args.detail))


# --- replan ------------------------------------------------------------------------------------------------

def _current_from(path: str) -> dict:
    """A current plan: {"systems": [...]}, or a saved plan or re-plan answer."""
    from cohop.workflow import WorkflowError, current_plan

    try:
        return current_plan(read_json(path, "current plan"))
    except WorkflowError as err:
        raise fail(EXIT_USAGE, f"cohop: {path}: {err}")


class _Ticker:
    """Elapsed-time progress for a solve whose service reports none (re-plans): a line a second on stderr."""

    def __init__(self, stream, what: str, limit_s: float | None):
        from cohop.cli_text import ProgressLine

        self.line = ProgressLine(stream)
        self.what = what
        self.limit_s = limit_s
        self.stop = threading.Event()
        self.thread = threading.Thread(target=self._run, daemon=True)

    def _run(self) -> None:
        start = time.monotonic()
        while not self.stop.wait(1.0):
            self.line.tick(self.what, time.monotonic() - start, self.limit_s)

    def __enter__(self):
        self.thread.start()
        return self

    def __exit__(self, *exc) -> None:
        self.stop.set()
        self.thread.join()
        self.line.finish()


def _cmd_replan(args) -> int:
    from cohop.cli_text import replan_table

    body = _load_request(args, "give the changed site file (or '-') and --current to re-plan your own")
    current = _current_from(args.current) if args.current else body.get("current")
    if current is None:
        raise fail(EXIT_USAGE, "cohop: give the current plan with --current FILE (or a 'current' key in the request)")
    mode = body.get("mode") or {}
    if args.max_changes is not None:
        mode = {"kind": "budget", "max_changes": args.max_changes}
    elif args.tolerance is not None:
        mode = {"kind": "tolerance", "tolerance": args.tolerance}
    search = _search(args, body)
    with _client(args, {"COHOP_SOLVER_THREADS": args.workers}) as api:
        with _Ticker(sys.stderr, "re-planning", (search or {}).get("time_limit_s")):
            result = api.replan(body["site"], current, mode=mode or None, requirements=body.get("requirements"),
                                search=search, detail=args.detail or body.get("detail") or _pictures_detail(args))
    _chart(args, body, result.raw)
    _write_report(args, body, result.raw)
    _site_map(args, body, result.raw)
    _traffic_chart(args, body, result.raw)
    _export(args, body, result.raw)
    return _emit(args, result.raw, replan_table(result, detail=args.detail))


# --- apply, diff, compare ----------------------------------------------------------------------------------

def _cmd_apply(args) -> int:
    from cohop.workflow import WorkflowError, apply_plan

    body = read_json(args.site, "site")
    answer = read_json(args.plan, "plan")
    if not isinstance(body, dict) or not isinstance(answer, dict):
        raise fail(EXIT_USAGE, "cohop: the site and the plan must each hold a JSON object")
    try:
        site = apply_plan(body["site"] if "site" in body else body, answer)
    except WorkflowError as err:
        raise fail(EXIT_USAGE, f"cohop: {err}")
    except (KeyError, TypeError, AttributeError) as err:
        raise _misshapen(args.plan, err)
    out = {**body, "site": site} if "site" in body else site
    write_text(args.out, _dumps(out))
    if args.out != STDIO:
        print(f"site with the plan's hop sets and sequences written to {args.out}", file=sys.stderr)
    return EXIT_OK


def _cmd_diff(args) -> int:
    from cohop.cli_text import diff_table
    from cohop.workflow import WorkflowError, diff_documents

    try:
        diff = diff_documents(read_json(args.a, "first file"), read_json(args.b, "second file"))
    except WorkflowError as err:
        raise fail(EXIT_USAGE, f"cohop: {err}")
    except (KeyError, TypeError, AttributeError) as err:
        raise _misshapen(f"{args.a} or {args.b}", err)
    print(json.dumps(diff, indent=2) if args.json else diff_table(diff, args.a, args.b))
    return EXIT_OK


def _cmd_compare(args) -> int:
    from cohop.cli_text import compare_table

    rows = []
    with _client(args) as api:
        for path in args.scenarios:
            body = read_json(path, "scenario")
            if not isinstance(body, dict):
                raise fail(EXIT_USAGE, f"cohop: {path} must hold a JSON object")
            body = _with_current_plan(body if "site" in body else {"site": body})
            rows.append((path, api.assess(body["site"])))
    names = [Path(p).name for p, _ in rows]
    if len(set(names)) == len(names):  # short column heads unless two files share a name
        rows = [(name, result) for name, (_, result) in zip(names, rows)]
    if args.json:
        print(json.dumps([{"scenario": p, "answer": r.raw} for p, r in rows], indent=2))
    else:
        print(compare_table(rows))
    return max(_compliance_code(args, r.raw) for _, r in rows)


# --- profiles, samples, chart, serve -----------------------------------------------------------------------

def _profile_view(body: dict) -> SimpleNamespace:
    """What cohop_client.Profile.from_json gives, without importing the client (and requests)."""
    band = body["band"]
    return SimpleNamespace(id=body["id"], name=body["name"], region=body["region"],
                           band_hz=None if band is None else (band["low_hz"], band["high_hz"]),
                           coordination_caution=body["coordination_caution"],
                           rules=tuple(SimpleNamespace(**r) for r in body["rules"]))


def _cmd_profiles(args) -> int:
    from cohop.cli_text import profiles_table

    if args.server:
        with _client(args) as api:
            profiles = api.profiles()
    else:  # static data: no app, no solver stack, no HTTP client
        from cohop.workflow import profiles_json

        profiles = [_profile_view(p) for p in profiles_json()]
    print(json.dumps([p.__dict__ for p in profiles], default=lambda o: o.__dict__, indent=2) if args.json
          else profiles_table(profiles))
    return EXIT_OK


def _cmd_samples(args) -> int:
    from cohop import samples

    for name in samples.all_names():
        kind = " (re-plan request)" if name in samples.replan_names() else ""
        print(f"{name}: {samples.load(name)['site'].get('name', '')}{kind}")
    return EXIT_OK


def _cmd_chart(args) -> int:
    body = read_json(args.request, "request")
    body = body if "site" in body else {"site": body}
    args.chart = args.out
    _chart(args, body, read_json(args.answer, "answer"))
    return EXIT_OK


def _cmd_serve(args) -> int:
    if args.dev:
        from cohop.api import create_app

        print(f"cohop development server on http://{args.host}:{args.port} (not for production)", file=sys.stderr)
        from cohop.report import install

        install(create_app()).run(host=args.host, port=args.port)
        return EXIT_OK
    try:
        from cohop.server import main as serve
    except ImportError as err:
        raise _service_missing(err)
    return serve(bind=f"{args.host}:{args.port}")


# --- the parser --------------------------------------------------------------------------------------------

DETAIL_HELP = ("per-system figures only ('system', the default), plus each source's share and every channel's hit "
               "probability and dominant source ('channel'), or plus each channel's breakdown by source ('source'); "
               "the table shows what is asked")
OBJECTIVE_HELP = ("what the planner minimises: 'weighted_sum' (the priority-weighted sum of per-hop collision "
                  "probabilities), 'worst_system' (the worst system's), 'residual_loss' (the priority-weighted "
                  "residual loss after retries) or 'worst_margin' (the largest share of a loss ceiling)")
COORDINATION_HELP = ("'joint' plans every system's hop set together; 'independent' lets each system choose from "
                     "what it observes (see README on 47 CFR 15.247(h))")


def _outputs(p: argparse.ArgumentParser) -> None:
    p.add_argument("--survey", action="append", metavar="CSV", help="add a spectrum survey from a CSV file "
                   "(columns frequency_hz, level_dbm[, occupancy_fraction]; '# key: value' lines for its fields)")
    p.add_argument("--chart", metavar="FILE", help="also draw a channel map to FILE (.png or .svg)")
    p.add_argument("--chart-size", default="11x6", metavar="WxH", help="chart size in inches (default 11x6)")
    p.add_argument("--dominant", action="store_true", help="in the chart, also show under each row the source "
                   "that hits each channel most")
    p.add_argument("--site-map", metavar="FILE", help="also draw the site map (systems and interferers by "
                   "position, harmful source -> victim pairs) to FILE (.png or .svg)")
    p.add_argument("--traffic-chart", metavar="FILE", help="also draw, for the systems with traffic requirements, "
                   "deadline misses and watchdog stops against their limits to FILE (.png or .svg)")
    p.add_argument("--report", metavar="FILE.html", help="also write a self-contained HTML report (inputs, plan, "
                   "figures, traffic, compliance, baselines, charts, cautions) to FILE.html")


def _common(p: argparse.ArgumentParser) -> None:
    p.add_argument("--server", metavar="URL", help="use this service over HTTP instead of running it in-process")
    p.add_argument("--token", help="bearer token (default: $COHOP_TOKEN)")
    p.add_argument("--timeout", type=float, default=120.0, metavar="S", help="seconds to wait for an answer")
    p.add_argument("--json", action="store_true", help="print the JSON answer instead of the table (errors too: "
                   "problem details on standard output)")


def _site_command(sub, name: str, help_: str, site_help: str, sample: str) -> argparse.ArgumentParser:
    """A command that sends a site (a file, '-', or an embedded sample); its own options follow, then _answered."""
    p = sub.add_parser(name, help=help_, description=help_)
    p.add_argument("site", nargs="?", help=f"{site_help}; '-' reads standard input; default: a sample")
    p.add_argument("--sample", default=sample, help=f"embedded sample to use when no file is given (default "
                   f"{sample}; `cohop samples` lists them)")
    p.add_argument("--detail", choices=("system", "channel", "source"), help=DETAIL_HELP)
    return p


def _answered(p: argparse.ArgumentParser, func, solves: bool = False) -> None:
    """The options every site command shares: solver budget (when it solves), saving, charts, transport."""
    if solves:
        p.add_argument("--time-limit", type=float, metavar="S", help="search budget in seconds (server-capped)")
        p.add_argument("--seed", type=int, help="search seed (same request and seed, same plan)")
        p.add_argument("--workers", type=int, default=2, help="solver threads when running in-process (default 2)")
        p.add_argument("--export", metavar="DIR", help="write each system's hop set and hop order as CSV and JSON "
                       "to DIR (README, 'Hop tables')")
        p.add_argument("--export-per", choices=("system", "site"), default="system",
                       help="one pair of hop-table files per system (default) or one pair for the whole site")
    p.add_argument("--save", metavar="FILE", help="write the full JSON answer to FILE ('-': standard output)")
    p.add_argument("--fail-on-compliance", action="store_true",
                   help=f"exit {EXIT_COMPLIANCE} when any system fails a profile check")
    _outputs(p)
    _common(p)
    p.set_defaults(func=func)


def _add_site_commands(sub) -> None:
    p = _site_command(sub, "assess", "predict collisions, losses and compliance of each system's hop set",
                      "site JSON (a request body, a bare site, or a re-plan request: its current plan)",
                      "water_works")
    p.add_argument("--trials", type=int, metavar="N", help="also run a Monte Carlo check with N attempts per system")
    p.add_argument("--seed", type=int, default=0, help="Monte Carlo seed (default 0)")
    _answered(p, _cmd_assess)
    p = _site_command(sub, "plan", "assign hop sets to every system, with a proven bound and baselines",
                      "site or plan request JSON", "water_works")
    p.add_argument("--objective", choices=("weighted_sum", "worst_system", "residual_loss", "worst_margin"),
                   help=OBJECTIVE_HELP)
    p.add_argument("--coordination", choices=("joint", "independent"), help=COORDINATION_HELP)
    p.add_argument("--compare", action="store_true", help="also evaluate every practitioner's baseline")
    _answered(p, _cmd_plan, solves=True)
    p = _site_command(sub, "replan", "re-plan after the site changed, changing as few channels as possible",
                      "the changed site (or a re-plan request)", "water_works_replan")
    p.add_argument("--current", metavar="FILE", help="the current plan, a saved plan or re-plan answer, or a site "
                   "whose systems carry hop sets ('-': standard input)")
    p.add_argument("--tolerance", type=float, help="fewest changes within this share of a fresh plan (default 0.05)")
    p.add_argument("--max-changes", type=int, help="best plan changing at most this many channels")
    _answered(p, _cmd_replan, solves=True)


def _add_workflow_commands(sub) -> None:
    p = sub.add_parser("apply", help="write a plan's hop sets and sequences into a site file",
                       description="write a saved plan or re-plan answer's hop sets and hop orders into the site")
    p.add_argument("site", help="the site (or request) JSON; '-' reads standard input")
    p.add_argument("plan", help="a saved plan or re-plan answer (cohop plan --save FILE)")
    p.add_argument("-o", "--out", required=True, metavar="FILE", help="the new site file ('-': standard output)")
    p.set_defaults(func=_cmd_apply)
    p = sub.add_parser("diff", help="what changed between two sites or two plans",
                       description="systems added and removed, channels dropped and added, and (for saved "
                       "answers) the figures before and after")
    p.add_argument("a", help="the earlier site, request, or saved answer")
    p.add_argument("b", help="the later one")
    p.add_argument("--json", action="store_true", help="print the differences as JSON")
    p.set_defaults(func=_cmd_diff)
    p = sub.add_parser("compare", help="assess several scenario files and show them side by side",
                       description="assess each scenario (a site or request file) and print one table: a row "
                       "per system, a column per scenario")
    p.add_argument("scenarios", nargs="+", metavar="SCENARIO", help="site or request JSON files")
    p.add_argument("--fail-on-compliance", action="store_true",
                   help=f"exit {EXIT_COMPLIANCE} when any system of any scenario fails a profile check")
    _common(p)
    p.set_defaults(func=_cmd_compare)


def _add_other_commands(sub) -> None:
    p = sub.add_parser("chart", help="draw a channel map from a saved request and answer")
    p.add_argument("request", help="the request (or site) JSON")
    p.add_argument("answer", help="the answer JSON (assessment, plan or re-plan)")
    p.add_argument("--out", required=True, metavar="FILE", help=".png or .svg")
    p.add_argument("--chart-size", default="11x6", metavar="WxH", help="chart size in inches (default 11x6)")
    p.add_argument("--dominant", action="store_true", help="also show the source that hits each channel most")
    p.set_defaults(func=_cmd_chart, json=False)
    p = sub.add_parser("profiles", help="list the regulatory profiles and their rules")
    _common(p)
    p.set_defaults(func=_cmd_profiles)
    p = sub.add_parser("samples", help="list the embedded sample sites")
    p.set_defaults(func=_cmd_samples, json=False)
    p = sub.add_parser("serve", help="run the service (gunicorn; settings from COHOP_ variables)")
    p.add_argument("--host", default="127.0.0.1", help="address to listen on (default 127.0.0.1)")
    p.add_argument("--port", type=int, default=8080, help="port (default 8080)")
    p.add_argument("--dev", action="store_true", help="Flask's development server instead (single process)")
    p.set_defaults(func=_cmd_serve, json=False)


class _Parser(argparse.ArgumentParser):
    """argparse, whose usage errors become CliFailure (exit 2; problem details with --json)."""

    def error(self, message: str):
        self.print_usage(sys.stderr)
        where = self.prog.removeprefix("cohop").strip()
        raise CliFailure(EXIT_USAGE, f"cohop: {where + ': ' if where else ''}{message}", "usage")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="cohop", description="Channel planning for co-located FHSS networks. "
                                     "Every figure is a planning estimate: confirm with a site survey.",
                                     epilog=f"exit codes: {EXIT_OK} ok, {EXIT_REJECTED} request rejected, "
                                     f"{EXIT_USAGE} usage, {EXIT_INFEASIBLE} no feasible plan, {EXIT_COMPLIANCE} "
                                     f"compliance fails (--fail-on-compliance), {EXIT_SERVICE} service or "
                                     f"transport error, {EXIT_EXTRA} missing optional extra")
    parser.add_argument("--version", action="version", version=f"cohop {__version__}")
    sub = parser.add_subparsers(dest="command", required=True)
    _add_site_commands(sub)
    _add_workflow_commands(sub)
    _add_other_commands(sub)
    return parser


# --- running a command -------------------------------------------------------------------------------------

def _failure_from(err: Exception) -> CliFailure:
    """Translate the client's errors into the command line's exit codes and messages."""
    from cohop_client import CohopError, InvalidRequest, NoFeasiblePlan

    if isinstance(err, NoFeasiblePlan):
        head = "no plan meets the requirements" if err.proven else "no plan was found in time"
        lines = [f"cohop: {head}; conflicting requirements:"]
        for c in err.conflicts:
            cite = f" [{c.citation}]" if c.citation else ""
            lines.append(f"  - {c.detail}{cite}\n    relax: {c.relax}")
        return CliFailure(EXIT_INFEASIBLE, "\n".join(lines), "no-feasible-plan", err.problem or None)
    if isinstance(err, InvalidRequest):
        lines = [f"cohop: the service rejected the request: {err}"]
        lines += [f"  {fe.pointer or '/'}: {fe.detail}" for fe in err.field_errors]
        return CliFailure(EXIT_REJECTED, "\n".join(lines), "request-rejected", err.problem or None)
    if isinstance(err, CohopError):
        return CliFailure(EXIT_SERVICE, f"cohop: {err}", "service-error", err.problem or None)
    raise err


def _report(failure: CliFailure, as_json: bool) -> int:
    print(failure, file=sys.stderr)
    if as_json:
        problem = dict(failure.problem or {})
        problem.setdefault("type", PROBLEM_BASE + failure.kind)
        problem.setdefault("title", str(failure).splitlines()[0].removeprefix("cohop: "))
        problem.setdefault("detail", str(failure).removeprefix("cohop: "))
        problem["exit_code"] = failure.code
        print(json.dumps(problem, indent=2))
    return failure.code


def _client_error(err: Exception) -> bool:
    """True for the client's errors (without importing the client when no command did)."""
    client = sys.modules.get("cohop_client")
    return client is not None and isinstance(err, client.CohopError)


def main(argv: list[str] | None = None) -> int:
    argv = sys.argv[1:] if argv is None else list(argv)
    try:
        args = build_parser().parse_args(argv)
    except CliFailure as failure:
        return _report(failure, "--json" in argv)
    as_json = bool(getattr(args, "json", False))
    try:
        return args.func(args)
    except CliFailure as failure:
        return _report(failure, as_json)
    except BrokenPipeError:
        # the reader went away (`cohop profiles | head`): stop quietly (Python's documentation, "Note on
        # SIGPIPE"); what was asked for was printed as far as the reader wanted it, so the exit is 0
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return EXIT_OK
    except ImportError as err:
        if (err.name or "").split(".")[0] == "requests":
            return _report(fail(EXIT_EXTRA, "cohop: the client needs requests: pip install requests",
                                "missing-extra"), as_json)
        return _report(_service_missing(err), as_json)
    except Exception as err:
        if _client_error(err):
            return _report(_failure_from(err), as_json)
        raise


if __name__ == "__main__":
    sys.exit(main())
