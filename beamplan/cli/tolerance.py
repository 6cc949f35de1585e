"""The ``tolerance`` command: margin under uncertainty, by Monte Carlo over tolerances."""

from __future__ import annotations

import argparse
import os
import sys
from typing import Any

from beamplan import __version__
from beamplan.errors import ExitCode, UsageError
from beamplan.vocabulary import GOALS, SOLVERS, Goal, Solver

__all__ = ["register"]


def _width(text: str) -> float:
    try:
        value = float(text.strip().rstrip("%")) / (100.0 if text.strip().endswith("%") else 1.0)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r}: give a width such as 1% or 0.01") from None
    if not 0.0 < value < 1.0:
        raise argparse.ArgumentTypeError(f"{text!r}: the width must lie between 0 and 100 %")
    return value


def _tolerance(args: argparse.Namespace) -> int:
    from beamplan.cli.outputs import check

    to_stdout = check([("--json", args.json), ("--html", args.html)], [("--csv", args.csv)],
                      [args.layout, args.tolerances])
    from beamplan.analyses.tolerance import run_tolerance
    from beamplan.analyses.tolerance_model import build_model
    from beamplan.analyses.tolerance_summary import summarise
    from beamplan.cli.common import _existing_file
    from beamplan.layout.loader import parse_layout
    from beamplan.layout.tolerances import load_tolerances, parse_tolerances
    from beamplan.layout.yamlpos import load_yaml
    from beamplan.network.graph import build_network
    from beamplan.optimise.planner import plan_network
    from beamplan.report.progress import progress_bar

    doc = load_yaml(_existing_file(args.layout))
    layout = parse_layout(doc)
    tolerances = parse_tolerances(doc, in_layout=True)
    if args.tolerances:
        if not os.path.isfile(args.tolerances):
            raise UsageError(f"no such tolerance file: {args.tolerances!r}")
        tolerances = tolerances + load_tolerances(args.tolerances)
    if not tolerances.tolerances:
        raise UsageError("no tolerances: give a tolerance file or a 'tolerances:' section in "
                         "the layout (see docs/tolerance.md)")
    network = build_network(layout)
    plan = plan_network(network, args.goal, args.solver)
    model = build_model(tolerances, layout, network, plan)
    retuned = args.mode == "retuned"
    samples = args.samples or (1000 if retuned else 20000)
    base = 0 if args.no_sensitivity else (args.sensitivity or (64 if retuned else 512))
    if base and base & (base - 1):
        raise UsageError(f"--sensitivity {base}: give a power of two (Sobol' sampling)")
    if samples < 1:
        raise UsageError("--samples must be at least 1")
    if args.seed < 0:
        raise UsageError("--seed must be zero or positive")
    executor = None
    if args.jobs > 1:
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor

        method = "forkserver" if "forkserver" in multiprocessing.get_all_start_methods() \
            else "spawn"
        executor = ProcessPoolExecutor(args.jobs, mp_context=multiprocessing.get_context(method))
    try:
        with progress_bar("samples", sys.stderr) as step:
            run = run_tolerance(network, plan, model, samples=samples, mode=args.mode,
                                sampler=args.sampler, seed=args.seed, solver=args.solver,
                                executor=executor, progress=step, sensitivity_samples=base,
                                width=args.width)
    finally:
        if executor is not None:
            executor.shutdown(wait=False, cancel_futures=True)
    summary = summarise(run)
    _outputs(args, summary, to_stdout)
    if run.interrupted:
        sys.stderr.write(f"beamplan: interrupted after {run.tally.samples} of {samples} "
                         "samples; the report covers those and is marked partial\n")
        return 130
    return int(ExitCode.OK)


def _outputs(args: argparse.Namespace, summary: Any, to_stdout: bool) -> None:
    from beamplan.cli.common import _console
    from beamplan.cli.outputs import emit

    inputs = [p for p in (args.layout, args.tolerances) if p]
    if args.json:
        from beamplan.report.document import to_json
        from beamplan.report.tolerance_doc import tolerance_document

        emit(args.json, to_json(tolerance_document(summary, __version__)), inputs)
    if args.csv:
        from beamplan.report.files import write_tables
        from beamplan.report.tolerance_doc import tolerance_csv

        write_tables(args.csv, tolerance_csv(summary), inputs)
    if args.html:
        from beamplan.report.tolerance_html import tolerance_html

        emit(args.html, tolerance_html(summary, layout_path=args.layout,
                                       tolerance_path=args.tolerances, version=__version__),
             inputs)
    if not to_stdout and not args.quiet:
        from beamplan.report.tolerance_view import tolerance_renderable

        _console().print(tolerance_renderable(summary, args.top))


def register(sub: Any) -> None:
    """Add ``tolerance``."""
    p = sub.add_parser(
        "tolerance", help="probability that every scanner meets its need under tolerances, "
        "and which tolerance to tighten first",
        description="Sample every tolerance (a tolerance file, or the layout's 'tolerances:' "
        "section), evaluate each sample with the plan's settings held (--mode fixed) or "
        "re-planned (--mode retuned), and report each scanner's probability of meeting its "
        "need with a 95 %% Wilson interval, headroom quantiles, the fab-wide probability and "
        "Sobol' sensitivity indices. Exit 0 when finished, 130 when interrupted (a partial "
        "report), 1 for invalid input, 2 for a bad command line.")
    p.add_argument("layout", help="the layout file")
    p.add_argument("tolerances", nargs="?", help="a tolerance file (see docs/tolerance.md)")
    p.add_argument("--mode", choices=("fixed", "retuned"), default="fixed",
                   help="fixed (default): the plan's settings stay; retuned: re-plan every "
                   "sample")
    p.add_argument("-n", "--samples", type=int, default=0,
                   help="samples (default 20000 fixed, 1000 retuned)")
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    p.add_argument("--sampler", choices=("random", "sobol", "lhs"), default="random",
                   help="pseudo-random (default), scrambled Sobol' or Latin hypercube")
    p.add_argument("--width", type=_width, metavar="W",
                   help="say how many samples give a 95 %% interval this wide (e.g. 1%%)")
    p.add_argument("--sensitivity", type=int, default=0, metavar="N",
                   help="Saltelli base samples, a power of two (default 512 fixed, 64 "
                   "retuned)")
    p.add_argument("--no-sensitivity", action="store_true", help="skip the Sobol' indices")
    p.add_argument("-g", "--goal", choices=GOALS,
                   default=Goal.HEADROOM, help="the planning goal of the plan (default headroom)")
    p.add_argument("--jobs", type=int, default=1, help="worker processes (default 1)")
    p.add_argument("--top", type=int, default=10, help="rows of the sensitivity ranking")
    p.add_argument("--json", metavar="PATH", help="write the JSON report ('-' for stdout)")
    p.add_argument("--csv", metavar="DIR", help="write CSV tables into DIR, created or "
                   "replaced as a whole")
    p.add_argument("--html", metavar="FILE", help="write an HTML report ('-' for stdout)")
    p.add_argument("--solver", choices=SOLVERS, default=Solver.AUTO,
                   help="LP solver (default: HiGHS in process, CBC if highspy is missing)")
    p.add_argument("-q", "--quiet", action="store_true", help="no terminal report")
    p.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    p.set_defaults(handler=_tolerance)
