"""Benchmark: ``plan`` against a raw in-process highspy solve of the same LP and goal.

Run: ``python tests/perf/bench_plan.py [--sizes 100 1000 10000] [--repeats 3]``.

For each synthetic campus (tests/perf/campus.py) it times, side by side in
this one run and alternating A B A B:

* A, beamplan: ``plan_network`` on the built network (LP build, the headroom
  goal's progressive filling, the least-source stage, propagation,
  explanations, verification);
* B, the reference: the same LP's arrays (prepared before the clock starts)
  passed to a fresh ``highspy.Highs`` and progressive filling written out
  here in raw highspy calls (maximise t; freeze the scanners whose demand
  row carries a positive dual; repeat; then the least source power), with
  HiGHS's default simplex strategy.

With ``--tree`` the campus's taps share freely (no 50 % bound on the
picked output; ``--fold-heat 10`` also makes branch heat limits bind at many
levels), so the campus is a tree and ``plan`` takes the water-filling
path (optimise/waterfill.py: one LP stage for the shadow prices, every later
level by water-filling, then the least-source stage); the row then also
gives the water-filling alone (``fill (s)``) and ``plan`` with the LP
filling forced (``LP plan (s)``).

It prints the medians, the ratio A/B (the issue's targets: at most 1.5 at
1,000 scanners, under 1 at 10,000), whether the two agree on every
scanner's level (1e-9 relative), and the peak resident memory of a child
process that loads and plans each campus (target under 1 GB at 10,000).

A benchmark, not a test: the machine is shared and noisy, so it reports
ratios measured in one run rather than asserting absolute times.
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import time
from typing import Any

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__)))))

from campus import campus_yaml

from beamplan.layout.limits import LIMITS
from beamplan.layout.loader import parse_layout
from beamplan.layout.yamlpos import parse_yaml
from beamplan.network.graph import Network, build_network
from beamplan.optimise.backend import highs_lp
from beamplan.optimise.lp import build_lp
from beamplan.optimise.planner import plan_network

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
DUAL_TOL = 1e-9  # as beamplan.optimise.goals
SLACK, GIVE_W = 1e-9, 1e-8  # the HiGHS back end's freeze slack and absolute give


def campus(scanners: int, tree: bool = False, fold_heat_w: float = 220.0) -> Network:
    """The synthetic campus as a built network (read with the large input limits).

    ``tree``: the taps share freely. ``fold_heat_w``: the fold mirrors' heat
    limit (10 W holds the branches of the larger scanners by their first fold,
    each branch at its own level: a stage each in the LP filling).
    """
    text = campus_yaml(scanners).replace("heat_limit: 220 W", f"heat_limit: {fold_heat_w:g} W")
    if tree:
        text = text.replace(", fraction: [0.0, 0.5]", "")
    return build_network(parse_layout(parse_yaml(text, "campus", LIMITS["large"])))


def lp_filled(scanners: int, fold_heat_w: float) -> tuple[float, int]:
    """``plan_network`` with the water-filling path turned off: seconds and stages.

    On a campus built afresh, so that it pays for the network's cached tables
    (gains, link maps) as the first timed ``plan`` does.
    """
    from beamplan.optimise import waterfill

    network = campus(scanners, True, fold_heat_w)
    keep = waterfill.tree_headroom
    waterfill.tree_headroom = lambda *args: False  # type: ignore[assignment]
    try:
        start = time.perf_counter()
        plan = plan_network(network)
        return time.perf_counter() - start, plan.stages
    finally:
        waterfill.tree_headroom = keep


def reference(lp: Any, factor: int, demand: list[tuple[int, float]], sources: list[int],
              tuned: bool = False) -> tuple[float, np.ndarray, int]:
    """Progressive filling in raw highspy; returns seconds, the final columns, the stages.

    ``tuned`` also sets the dual simplex edge weights that beamplan's back end uses
    (Devex); otherwise HiGHS's defaults, with the same feasibility tolerances.
    """
    import highspy

    start = time.perf_counter()
    h = highspy.Highs()
    for option, value in (("output_flag", False), ("primal_feasibility_tolerance", 1e-10),
                          ("dual_feasibility_tolerance", 1e-10)):
        h.setOptionValue(option, value)
    if tuned:
        h.setOptionValue("simplex_dual_edge_weight_strategy", 1)
    h.passModel(lp)
    ncol = lp.num_col_
    cost = np.zeros(ncol)
    cost[factor] = -1.0
    h.changeColsCost(ncol, np.arange(ncol, dtype=np.int32), cost)
    levels = np.full(len(demand), np.nan)
    todo = list(range(len(demand)))
    low, stages = 0.0, 0
    while todo:
        h.changeColBounds(factor, low, highspy.kHighsInf)
        h.run()
        stages += 1
        h.setOptionValue("presolve", "off")
        solution = h.getSolution()
        level = solution.col_value[factor]
        duals = np.asarray(solution.row_dual)
        blocked = [k for k in todo if duals[demand[k][0]] > DUAL_TOL] or todo
        for k in blocked:
            row, need = demand[k]
            levels[k] = level
            h.changeCoeff(row, factor, 0.0)
            held = max(level, 0.0) * need
            h.changeRowBounds(row, max(held * (1 - SLACK) - min(GIVE_W, 1e-4 * need), 0.0),
                              highspy.kHighsInf)
        todo = [k for k in todo if np.isnan(levels[k])]
        low = level
    h.changeColBounds(factor, 0.0, 0.0)
    cost = np.zeros(ncol)
    cost[sources] = 1.0
    h.changeColsCost(ncol, np.arange(ncol, dtype=np.int32), cost)
    h.run()
    stages += 1
    columns = np.asarray(h.getSolution().col_value)
    return time.perf_counter() - start, columns, stages


def child(scanners: int, tree: bool = False, fold_heat_w: float = 220.0) -> None:
    """Load and plan one campus; print the peak resident memory in MB."""
    start = time.perf_counter()
    plan = plan_network(campus(scanners, tree, fold_heat_w))
    wall = time.perf_counter() - start
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # kB on Linux
    print(f"{peak:.0f} {wall:.2f} {plan.stages}")


def compare(scanners: int, repeats: int, tree: bool = False, fold_heat_w: float = 220.0
            ) -> None:
    """Time A and B in turn and print one row."""
    network = campus(scanners, tree, fold_heat_w)
    model = build_lp(network)
    lp = highs_lp(model, np.arange(len(model.col_name)))  # HiGHS columns = the model's
    in_use = [s for s in network.scanners if s.in_use]
    demand = [(model.demand_row[s.id], s.need_w) for s in in_use]
    sources = list(model.source_col.values())
    ours, raw, tuned = [], [], []
    plan = None
    ref_columns = np.empty(0)
    ref_stages = 0
    for _ in range(repeats):
        start = time.perf_counter()
        plan = plan_network(network)
        ours.append(time.perf_counter() - start)
        seconds, ref_columns, ref_stages = reference(lp, model.factor_col, demand, sources)
        raw.append(seconds)
        if scanners < 10000:  # the tuned reference at 10,000 scanners takes minutes
            tuned.append(reference(lp, model.factor_col, demand, sources, True)[0])
    assert plan is not None
    got = np.array([plan.scanner(s.id).delivered_w / s.need_w for s in in_use])
    want = np.array([sum(v * ref_columns[c] for c, v in model.inflow_coefs(s.id).items())
                     / s.need_w for s in in_use])
    worst = float(np.max(np.abs(got - want) / np.maximum(np.abs(want), 1e-300)))
    a, b = statistics.median(ours), statistics.median(raw)
    ratios = [x / y for x, y in zip(ours, raw, strict=True)]
    tuned_ratio = (f"{statistics.median(x / y for x, y in zip(ours, tuned, strict=True)):7.2f}"
                   if tuned else "      -")
    extra = ""
    if tree:
        from beamplan.optimise.waterfill import water_fill

        start = time.perf_counter()
        water_fill(network)
        fill = time.perf_counter() - start
        lp_seconds, lp_stages = lp_filled(scanners, fold_heat_w)
        extra = f" {fill:8.3f} {lp_seconds:11.3f} {lp_seconds / b:8.2f} {lp_stages:>4}"
    proc = subprocess.run([sys.executable, __file__, "--child", str(scanners)]
                          + (["--tree"] if tree else []) + ["--fold-heat", str(fold_heat_w)],
                          capture_output=True, text=True, check=True,
                          env={**os.environ, "PYTHONPATH": ROOT})
    peak_mb = proc.stdout.split()[0]
    print(f"{scanners:>7} {len(network.elements):>8} {a:9.3f} {b:9.3f} "
          f"{statistics.median(ratios):7.2f} {tuned_ratio} {plan.stages:>4}/{ref_stages:<4} "
          f"{worst:10.1e} "
          f"{peak_mb:>8}{extra}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[100, 1000, 10000])
    parser.add_argument("--repeats", type=int, default=3,
                        help="timed runs of each (the 10,000 campus runs once)")
    parser.add_argument("--tree", action="store_true",
                        help="taps without share bounds: a tree, planned by water-filling")
    parser.add_argument("--fold-heat", type=float, default=220.0,
                        help="the fold mirrors' heat limit in W (default 220, as campus.py)")
    parser.add_argument("--child", type=int, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        child(args.child, args.tree, args.fold_heat)
        return
    print("scanners elements  plan (s)   raw (s)   ratio  ratio* stages    level diff  peak MB"
          + ("  fill (s) LP plan (s) LP ratio LP stages" if args.tree else ""))
    for size in args.sizes:
        compare(size, 1 if size >= 10000 else args.repeats, args.tree, args.fold_heat)
    print("ratio = beamplan plan / raw highspy progressive filling of the same LP, "
          "median of pairs;\nratio* = the same against raw highspy with beamplan's Devex edge "
          "weights;\nlevel diff = largest relative difference of a scanner's delivered ÷ need; "
          "peak MB = maximum resident set of a child that loads and plans the campus")


if __name__ == "__main__":
    main()
