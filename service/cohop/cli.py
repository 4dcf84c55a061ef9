"""The `cohop` command line.

Without --server it runs the service in-process (no server needed); with
--server URL it talks HTTP through the same client.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from pathlib import Path

from cohop_client import Client, CohopError, InvalidRequest, NoFeasiblePlan


SERVICE_PACKAGES = {"flask", "flask_smorest", "marshmallow", "numpy", "scipy", "ortools", "werkzeug", "webargs",
                    "apispec", "gunicorn", "prometheus_client"}


def _service_missing(err: ImportError) -> int:
    if (err.name or "").split(".")[0] not in SERVICE_PACKAGES:
        raise err
    print(f"cohop: the embedded service needs the service extra ({err.name} is missing): "
          "pip install 'cohop[service]', or give --server URL", file=sys.stderr)
    return 2


def _client(args, config: dict | None = None) -> Client:
    token = args.token or os.environ.get("COHOP_TOKEN")
    if args.server:
        return Client(args.server, timeout_s=args.timeout, token=token)
    from cohop.api import create_app
    from cohop.embedded import EMBEDDED_URL, embedded_session

    return Client(EMBEDDED_URL, timeout_s=args.timeout, token=token,
                  session=embedded_session(create_app(config)))


def _read_json(path: str, what: str) -> dict:
    try:
        return json.loads(Path(path).read_text(encoding="utf-8"))
    except OSError as err:
        raise SystemExit(f"cohop: cannot read {what} {path}: {err.strerror}")
    except UnicodeDecodeError as err:
        raise SystemExit(f"cohop: {path} is not UTF-8 text: {err.reason} at byte {err.start}")
    except json.JSONDecodeError as err:
        raise SystemExit(f"cohop: {path} is not valid JSON: {err}")


def _add_surveys(args, body: dict) -> None:
    if not getattr(args, "survey", None):
        return
    from cohop.survey_csv import SurveyFileError, read_survey

    for path in args.survey:
        try:
            survey = read_survey(path)
        except SurveyFileError as err:
            raise SystemExit(f"cohop: survey {err}")
        except OSError as err:
            raise SystemExit(f"cohop: cannot read survey {path}: {err.strerror}")
        body["site"].setdefault("surveys", []).append(survey)


def _chart(args, body: dict, raw: dict) -> None:
    if not getattr(args, "chart", None):
        return
    from cohop.charts import PlotUnavailable, channel_map

    try:
        width, height = (float(v) for v in args.chart_size.lower().split("x"))
    except ValueError:
        raise SystemExit(f"cohop: --chart-size wants WIDTHxHEIGHT in inches, not {args.chart_size!r}")
    try:
        channel_map(body["site"], raw, args.chart, width, height, dominant=getattr(args, "dominant", False))
    except PlotUnavailable as err:
        raise SystemExit(f"cohop: {err}")
    print(f"chart written to {args.chart}", file=sys.stderr)


def _site_map(args, body: dict, raw: dict) -> None:
    """--site-map FILE: systems and interferers by position, harmful pairs drawn."""
    if not getattr(args, "site_map", None):
        return
    from cohop.charts import PlotUnavailable, site_map

    try:
        site_map(body["site"], raw, args.site_map)
    except PlotUnavailable as err:
        raise SystemExit(f"cohop: {err}")
    print(f"site map written to {args.site_map}", file=sys.stderr)


def _report(args, body: dict, raw: dict) -> None:
    """--report FILE.html: the self-contained HTML report of this answer."""
    if not getattr(args, "report", None):
        return
    from cohop.report import write_report

    try:
        write_report(args.report, body, raw)
    except OSError as err:
        raise SystemExit(f"cohop: could not write {args.report}: {err.strerror}")
    print(f"report written to {args.report}", file=sys.stderr)


def _pictures_detail(args) -> str | None:
    """Charts and reports shade each channel: without a --detail, ask for the per-channel figures."""
    wanted = (getattr(args, name, None) for name in ("chart", "report", "site_map"))
    return "channel" if any(wanted) else None


def _load_request(args) -> dict:
    if args.site is not None:
        body = _read_json(args.site, "site")
    else:
        from cohop import samples

        try:
            body = samples.load(args.sample)
        except KeyError as err:
            raise SystemExit(f"cohop: {err.args[0]}")
        print(f"(embedded sample site '{args.sample}'; give a file to assess your own)", file=sys.stderr)
    if not isinstance(body, dict):
        raise SystemExit("cohop: the site file must hold a JSON object")
    body = body if "site" in body else {"site": body}
    _add_surveys(args, body)
    return body


def _cmd_assess(args) -> int:
    from cohop.cli_text import assessment_table

    body = _load_request(args)
    simulation = body.get("simulation")
    if args.trials is not None:
        simulation = {"trials_per_system": args.trials, "seed": args.seed}
    detail = args.detail or body.get("detail") or _pictures_detail(args)
    with _client(args) as api:
        if simulation:
            print("simulating...", file=sys.stderr, flush=True)
        result = api.assess(body["site"], simulation=simulation, detail=detail)
    _chart(args, body, result.raw)
    _report(args, body, result.raw)
    _site_map(args, body, result.raw)
    return _emit(args, result.raw, assessment_table(result))


def _emit(args, raw: dict, table: str) -> int:
    if args.json:
        print(json.dumps(raw, indent=2))
    else:
        print(table)
    if args.save:
        try:
            Path(args.save).write_text(json.dumps(raw, indent=2) + "\n", encoding="utf-8")
        except OSError as err:
            print(f"cohop: could not write {args.save}: {err.strerror}", file=sys.stderr)
            return 1
        if not args.json:
            print(f"\nfull answer written to {args.save}")
    return 0


def _cmd_plan(args) -> int:
    from cohop.cli_text import ProgressLine, plan_table

    body = _load_request(args)
    search = dict(body.get("search") or {})
    if args.time_limit is not None:
        search["time_limit_s"] = args.time_limit
    if args.seed is not None:
        search["seed"] = args.seed
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
            result = api.plan(body["site"], requirements=requirements or None, search=search or None,
                              baselines=baselines, detail=args.detail or body.get("detail") or _pictures_detail(args))
        finally:
            line.finish()
    _chart(args, body, result.raw)
    _report(args, body, result.raw)
    _site_map(args, body, result.raw)
    return _emit(args, result.raw, plan_table(result))


def _current_from(path: str) -> dict:
    """A current plan: {"systems": [...]}, or a saved plan or re-plan answer."""
    data = _read_json(path, "current plan")
    if isinstance(data, dict) and "systems" in data and "sequences" not in data:
        return {"systems": data["systems"]}
    if isinstance(data, dict) and data.get("sequences"):
        return {"systems": [{"id": s["id"], "hop_set": sorted(s["channels"]), "sequence": s["channels"]}
                            for s in data["sequences"]["systems"]]}
    if isinstance(data, dict) and "plan" in data:
        return {"systems": [{"id": p["id"], "hop_set": p["hop_set"]} for p in data["plan"]]}
    raise SystemExit(f"cohop: {path} holds neither a current plan nor a saved plan answer")


def _cmd_replan(args) -> int:
    from cohop.cli_text import replan_table

    body = _load_request(args)
    current = _current_from(args.current) if args.current else body.get("current")
    if current is None:
        raise SystemExit("cohop: give the current plan with --current FILE (or a 'current' key in the request)")
    mode = body.get("mode") or {}
    if args.max_changes is not None:
        mode = {"kind": "budget", "max_changes": args.max_changes}
    elif args.tolerance is not None:
        mode = {"kind": "tolerance", "tolerance": args.tolerance}
    search = dict(body.get("search") or {})
    if args.time_limit is not None:
        search["time_limit_s"] = args.time_limit
    with _client(args, {"COHOP_SOLVER_THREADS": args.workers}) as api:
        result = api.replan(body["site"], current, mode=mode or None, requirements=body.get("requirements"),
                            search=search or None, detail=body.get("detail") or _pictures_detail(args))
    _chart(args, body, result.raw)
    _report(args, body, result.raw)
    _site_map(args, body, result.raw)
    return _emit(args, result.raw, replan_table(result))


def _cmd_chart(args) -> int:
    body = _read_json(args.request, "request")
    body = body if "site" in body else {"site": body}
    args.chart = args.out
    _chart(args, body, _read_json(args.answer, "answer"))
    return 0


def _cmd_profiles(args) -> int:
    from cohop.cli_text import profiles_table

    with _client(args) as api:
        profiles = api.profiles()
    print(json.dumps([p.__dict__ for p in profiles], default=lambda o: o.__dict__, indent=2) if args.json
          else profiles_table(profiles))
    return 0


def _cmd_samples(args) -> int:
    from cohop import samples

    for name in samples.all_names():
        kind = " (re-plan request)" if name in samples.replan_names() else ""
        print(f"{name}: {samples.load(name)['site'].get('name', '')}{kind}")
    return 0


def _cmd_serve(args) -> int:
    if args.dev:
        from cohop.api import create_app

        print(f"cohop development server on http://{args.host}:{args.port} (not for production)", file=sys.stderr)
        from cohop.report import install

        install(create_app()).run(host=args.host, port=args.port)
        return 0
    try:
        from cohop.server import main as serve
    except ImportError as err:
        return _service_missing(err)
    return serve(bind=f"{args.host}:{args.port}")


def _outputs(p: argparse.ArgumentParser) -> None:
    p.add_argument("--survey", action="append", metavar="CSV", help="add a spectrum survey from a CSV file "
                   "(columns frequency_hz, level_dbm[, occupancy_fraction]; '# key: value' lines for its fields)")
    p.add_argument("--chart", metavar="FILE", help="also draw a channel map to FILE (.png or .svg)")
    p.add_argument("--chart-size", default="11x6", metavar="WxH", help="chart size in inches (default 11x6)")
    p.add_argument("--dominant", action="store_true", help="in the chart, also show under each row the source "
                   "that hits each channel most")
    p.add_argument("--site-map", metavar="FILE", help="also draw the site map (systems and interferers by "
                   "position, harmful source -> victim pairs) to FILE (.png or .svg)")
    p.add_argument("--report", metavar="FILE.html", help="also write a self-contained HTML report (inputs, plan, "
                   "figures, compliance, baselines, charts, cautions) to FILE.html")


def _common(p: argparse.ArgumentParser) -> None:
    p.add_argument("--server", metavar="URL", help="use this service over HTTP instead of running it in-process")
    p.add_argument("--token", help="bearer token (default: $COHOP_TOKEN)")
    p.add_argument("--timeout", type=float, default=120.0, metavar="S", help="seconds to wait for an answer")
    p.add_argument("--json", action="store_true", help="print the JSON answer instead of the table")


def _site_command(sub, name: str, help_: str, site_help: str, sample: str) -> argparse.ArgumentParser:
    """A command that sends a site (a file, or an embedded sample); its own options follow, then _answered."""
    p = sub.add_parser(name, help=help_)
    p.add_argument("site", nargs="?", help=f"{site_help}; default: a sample")
    p.add_argument("--sample", default=sample, help="embedded sample to use when no file is given")
    return p


def _answered(p: argparse.ArgumentParser, func, solves: bool = False) -> None:
    """The options every site command shares: solver budget (when it solves), saving, charts, transport."""
    if solves:
        p.add_argument("--time-limit", type=float, metavar="S", help="search budget in seconds (server-capped)")
        p.add_argument("--workers", type=int, default=2, help="solver threads when running in-process")
    p.add_argument("--save", metavar="FILE", help="write the full JSON answer to FILE")
    _outputs(p)
    _common(p)
    p.set_defaults(func=func)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="cohop", description="Channel planning for co-located FHSS networks. "
                                     "Every figure is a planning estimate: confirm with a site survey.")
    sub = parser.add_subparsers(dest="command", required=True)
    p = _site_command(sub, "assess", "predict collisions, losses and compliance of each system's hop set",
                      "site JSON (a request body or a bare site)", "water_works_us915")
    p.add_argument("--trials", type=int, metavar="N", help="also run a Monte Carlo check with N attempts per system")
    p.add_argument("--seed", type=int, default=0, help="Monte Carlo seed")
    p.add_argument("--detail", choices=("system", "channel", "source"), help="how much per-channel detail")
    _answered(p, _cmd_assess)
    p = _site_command(sub, "plan", "assign hop sets to every system, with a proven bound and baselines",
                      "site or plan request JSON", "water_works_us915")
    p.add_argument("--seed", type=int, help="search seed (same request and seed, same plan)")
    p.add_argument("--objective", choices=("weighted_sum", "worst_system"))
    p.add_argument("--coordination", choices=("joint", "independent"))
    p.add_argument("--compare", action="store_true", help="also evaluate every practitioner's baseline")
    p.add_argument("--detail", choices=("system", "channel", "source"))
    _answered(p, _cmd_plan, solves=True)
    p = _site_command(sub, "replan", "re-plan after the site changed, changing as few channels as possible",
                      "the changed site (or a re-plan request)", "water_works_replan")
    p.add_argument("--current", metavar="FILE", help="the current plan, or a saved plan answer")
    p.add_argument("--tolerance", type=float, help="fewest changes within this share of a fresh plan (default 0.05)")
    p.add_argument("--max-changes", type=int, help="best plan changing at most this many channels")
    _answered(p, _cmd_replan, solves=True)
    p = sub.add_parser("chart", help="draw a channel map from a saved request and answer")
    p.add_argument("request", help="the request (or site) JSON")
    p.add_argument("answer", help="the answer JSON (assessment, plan or re-plan)")
    p.add_argument("--out", required=True, metavar="FILE", help=".png or .svg")
    p.add_argument("--chart-size", default="11x6", metavar="WxH")
    p.add_argument("--dominant", action="store_true", help="also show the source that hits each channel most")
    p.set_defaults(func=_cmd_chart)
    p = sub.add_parser("profiles", help="list the regulatory profiles and their rules")
    _common(p)
    p.set_defaults(func=_cmd_profiles)
    p = sub.add_parser("samples", help="list the embedded sample sites")
    p.set_defaults(func=_cmd_samples)
    p = sub.add_parser("serve", help="run the service (gunicorn; settings from COHOP_ variables)")
    p.add_argument("--host", default="127.0.0.1")
    p.add_argument("--port", type=int, default=8080)
    p.add_argument("--dev", action="store_true", help="Flask's development server instead (single process)")
    p.set_defaults(func=_cmd_serve)
    return parser


def main(argv: list[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    try:
        return args.func(args)
    except ImportError as err:
        return _service_missing(err)
    except NoFeasiblePlan as err:
        head = "no plan meets the requirements" if err.proven else "no plan was found in time"
        print(f"cohop: {head}; conflicting requirements:", file=sys.stderr)
        for c in err.conflicts:
            cite = f" [{c.citation}]" if c.citation else ""
            print(f"  - {c.detail}{cite}\n    relax: {c.relax}", file=sys.stderr)
        return 3
    except InvalidRequest as err:
        print(f"cohop: the service rejected the request: {err}", file=sys.stderr)
        for fe in err.field_errors:
            print(f"  {fe.pointer or '/'}: {fe.detail}", file=sys.stderr)
        return 1
    except CohopError as err:
        print(f"cohop: {err}", file=sys.stderr)
        return 1


if __name__ == "__main__":
    sys.exit(main())
