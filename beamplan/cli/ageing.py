"""The ``ageing`` command: runway, maintenance plan and its check."""

from __future__ import annotations

import argparse
import datetime as dt
import sys
from typing import Any

from beamplan import __version__
from beamplan.errors import ExitCode, UsageError

__all__ = ["register"]


def _ageing(args: argparse.Namespace) -> int:
    from beamplan.cli.outputs import STDOUT, check

    inputs = [args.layout, args.ageing_file]
    check([("--json", args.json), ("--html", args.html), ("--plot", args.plot)],
          [("--csv", args.csv)], inputs)
    if args.plot == STDOUT:
        raise UsageError("--plot writes a picture file; give a file name")
    from beamplan.cli.common import _existing_file
    from beamplan.layout.ageing import parse_ageing
    from beamplan.layout.ageing_values import duration_h
    from beamplan.layout.loader import parse_layout
    from beamplan.layout.yamlpos import load_yaml

    doc = load_yaml(_existing_file(args.layout))
    layout = parse_layout(doc)
    if args.ageing_file:
        spec = parse_ageing(load_yaml(_existing_file(args.ageing_file)))
    elif isinstance(doc.data, dict) and "ageing" in doc.data:
        spec = parse_ageing(doc, in_layout=True)
    else:
        raise UsageError(f"{args.layout} has no 'ageing:' section; give an ageing file, e.g. "
                         "layouts/ageing/two-bay.ageing.yaml (see docs/ageing.md)")
    from dataclasses import replace

    try:
        changes: dict[str, Any] = {}
        if args.horizon:
            changes["horizon_h"] = duration_h(args.horizon)
        if args.step:
            changes["step_h"] = duration_h(args.step)
        if args.windows_every:
            changes.update(windows_every_h=duration_h(args.windows_every), windows_at_h=())
        if args.start:
            changes["start"] = dt.date.fromisoformat(args.start)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    spec = replace(spec, **changes)
    return _run(args, layout, spec)


def _run(args: argparse.Namespace, layout: Any, spec: Any) -> int:
    from beamplan.analyses.ageing import Stepper, run_runway
    from beamplan.report.progress import progress_bar

    stepper = Stepper(layout, spec, args.solver)
    illustrative = any(law.illustrative for law in spec.laws)
    plan = None
    with progress_bar("runway", sys.stderr) as step:
        runway = run_runway(layout, spec, stepper=stepper, progress=step)
    interrupted = runway.interrupted
    if not args.no_plan and not interrupted:
        from beamplan.analyses.maintenance import plan_maintenance

        executor = _executor(args.jobs)
        try:
            with progress_bar("schedule check", sys.stderr) as step:
                plan = plan_maintenance(layout, spec, objective=args.objective,
                                        stepper=stepper, progress=step, executor=executor,
                                        time_limit_s=args.milp_seconds)
        except KeyboardInterrupt:
            interrupted = True
        finally:
            if executor is not None:
                executor.shutdown(wait=False, cancel_futures=True)
        interrupted = interrupted or bool(plan and plan.check and plan.check.interrupted)
    _outputs(args, runway, plan, illustrative)
    if interrupted:
        sys.stderr.write("beamplan: interrupted; the report covers the time line so far\n")
        return 130
    if plan is not None and not (plan.feasible and plan.check_ok):
        return int(ExitCode.SHORT)
    return int(ExitCode.OK)


def _executor(jobs: int) -> Any:
    if jobs <= 1:
        return None
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    method = "forkserver" if "forkserver" in multiprocessing.get_all_start_methods() \
        else "spawn"
    return ProcessPoolExecutor(jobs, mp_context=multiprocessing.get_context(method))


def _outputs(args: argparse.Namespace, runway: Any, plan: Any, illustrative: bool) -> None:
    from beamplan.cli.common import _console
    from beamplan.cli.outputs import STDOUT, emit
    from beamplan.report import ageing_view as view

    inputs = [args.layout, args.ageing_file]
    if args.json:
        from beamplan.report.document import to_json

        emit(args.json, to_json(view.ageing_document(
            runway, plan, __version__, args.layout, args.ageing_file or args.layout,
            illustrative)), inputs)
    if args.csv:
        from beamplan.report.files import write_tables

        write_tables(args.csv, view.ageing_csv(runway, plan), inputs)
    if args.html:
        from beamplan.report.ageing_html import ageing_html

        emit(args.html, ageing_html(runway, plan, layout_path=args.layout,
                                    ageing_path=args.ageing_file or args.layout,
                                    version=__version__, illustrative=illustrative), inputs)
    if args.plot:
        from beamplan.report.ageing_html import headroom_over_time

        shown = plan.check if plan is not None and plan.check is not None else runway
        headroom_over_time(shown).save(args.plot, [p for p in inputs if p])
    if STDOUT not in (args.json, args.html) and not args.quiet:
        _console().print(view.ageing_renderable(runway, plan, illustrative))


def register(sub: Any) -> None:
    """Add ``ageing``."""
    p = sub.add_parser(
        "ageing", help="how long every need holds as mirrors age, and a maintenance plan",
        description="Step through time ageing the optics by the laws of an ageing file, "
        "re-planning at each step, to find when the first scanner falls short (the runway); "
        "then choose the cheapest cleaning and replacement schedule (a MILP solved by HiGHS) "
        "that holds every need over the horizon, and check it by simulation. Exit 0 when "
        "the schedule holds, 3 when no schedule holds, 130 when interrupted.")
    p.add_argument("layout", help="the layout file")
    p.add_argument("ageing_file", nargs="?",
                   help="the ageing file (default: the layout's own 'ageing:' section)")
    p.add_argument("--start", metavar="YYYY-MM-DD", help="calendar date of hour 0")
    p.add_argument("--horizon", metavar="DURATION", help="e.g. '5 years' (default: the file's)")
    p.add_argument("--step", metavar="DURATION", help="runway step, e.g. '500 h'")
    p.add_argument("--windows-every", metavar="DURATION",
                   help="maintenance windows every DURATION, e.g. '6 months'")
    p.add_argument("--objective", choices=("cost", "downtime"),
                   help="what the schedule minimises (default: the file's, else cost)")
    p.add_argument("--no-plan", action="store_true", help="the runway only")
    p.add_argument("--milp-seconds", type=float, default=10.0,
                   help="time limit of the maintenance MILP (default 10 s); the gap proved "
                   "is reported")
    p.add_argument("--jobs", type=int, default=1, help="worker processes for the re-solves")
    p.add_argument("--json", metavar="PATH", help="write the JSON report ('-' for stdout)")
    p.add_argument("--csv", metavar="DIR", help="write CSV tables into DIR")
    p.add_argument("--html", metavar="FILE", help="write an HTML report ('-' for stdout)")
    p.add_argument("--plot", metavar="FILE", help="headroom over time (svg, png or pdf)")
    p.add_argument("--solver", choices=("auto", "highs", "cbc"), default="auto",
                   help="LP solver for the re-plans")
    p.add_argument("-q", "--quiet", action="store_true", help="no terminal report")
    p.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    p.set_defaults(handler=_ageing)
