"""Benchmark: ``beamplan check`` on a 50-scanner layout, this tree against an older one.

Run: ``python tests/perf/bench_check.py [OLD_TREE]`` (default ``/tmp/old-main``, made
with ``git worktree add --detach /tmp/old-main main``). Each tree's ``check`` runs as a fresh
process (start-up included) several times, alternating between the trees so that a
noisy machine weighs on both; the script prints each median wall time, their ratio,
and whether this tree stays below the 0.4 s target (issue 10).
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from campus import campus_yaml

HERE = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
TARGET_S = 0.4


def _once(tree: str, path: str) -> float:
    env = {**os.environ, "PYTHONPATH": tree}
    start = time.perf_counter()
    done = subprocess.run([sys.executable, "-m", "beamplan.cli.main", "check", "-q", path],
                          check=False, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                          env=env, cwd=tree)
    elapsed = time.perf_counter() - start
    if done.returncode != 0:
        raise SystemExit(f"check failed in {tree} (exit {done.returncode})")
    return elapsed


def main() -> None:
    old = sys.argv[1] if len(sys.argv) > 1 else "/tmp/old-main"
    runs = 9
    with tempfile.TemporaryDirectory() as folder:
        path = os.path.join(folder, "campus-50.yaml")
        with open(path, "w", encoding="utf-8") as handle:
            handle.write(campus_yaml(50, per_bay=10))
        trees = {"this tree": HERE, "old tree": old} if os.path.isdir(old) else {"this tree": HERE}
        times: dict[str, list[float]] = {name: [] for name in trees}
        for _ in range(runs):
            for name, tree in trees.items():
                times[name].append(_once(tree, path))
    medians = {name: statistics.median(values) for name, values in times.items()}
    for name, value in medians.items():
        print(f"{name:10s} check, 50 scanners: {value:.3f} s median of {runs}")
    if "old tree" in medians:
        print(f"ratio this/old: {medians['this tree'] / medians['old tree']:.2f}")
    verdict = "below" if medians["this tree"] < TARGET_S else "ABOVE"
    print(f"this tree is {verdict} the {TARGET_S} s target")


if __name__ == "__main__":
    main()
