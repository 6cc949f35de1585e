"""Benchmark: the edit-check-plan loop on a 50-scanner layout, start-up included.

Run: ``python tests/perf/bench_startup.py``. Each command runs as a fresh
process several times; the script prints the median wall time of
``beamplan check`` and ``beamplan plan`` and, measured side by side in the
same run, their ratio to a bare ``python -c pass`` (the interpreter's own
start-up), so that a noisy machine shows up in both. The target (issue 2):
"well under a second" for plan, start-up included.
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


def _median(command: list[str], runs: int = 7) -> float:
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        subprocess.run(command, check=False, stdout=subprocess.DEVNULL,
                       stderr=subprocess.DEVNULL)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main() -> None:
    with tempfile.TemporaryDirectory() as folder:
        path = os.path.join(folder, "campus-50.yaml")
        with open(path, "w", encoding="utf-8") as handle:
            handle.write(campus_yaml(50, per_bay=10))
        python = _median([sys.executable, "-c", "pass"])
        check = _median([sys.executable, "-m", "beamplan.cli.main", "check", path])
        plan = _median([sys.executable, "-m", "beamplan.cli.main", "plan", path])
        plan_json = _median([sys.executable, "-m", "beamplan.cli.main", "plan", path,
                             "--json", os.path.join(folder, "p.json"), "--quiet"])
    print(f"python -c pass : {python:.3f} s")
    for name, value in (("check", check), ("plan", plan), ("plan --json", plan_json)):
        print(f"beamplan {name:<11}: {value:.3f} s  ({value / python:.1f}x bare python)")


if __name__ == "__main__":
    main()
