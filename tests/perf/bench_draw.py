"""Benchmark: pictures of a synthetic campus, every box against the summary.

Run: ``python tests/perf/bench_draw.py [--scanners 200] [--png-dir DIR]``.

Measured side by side in this one run, on one loaded and planned campus:

* ``draw --plan`` to PNG: the detailed diagram (what ``draw`` drew before
  issue 11, now ``--detail``) against the summary drawn by default past
  40 scanners;
* ``plan --html``: the report with the detailed diagram against the report
  with the summary;
* the whole ``beamplan draw --plan`` command line, start-up included, as the
  user sees it.

It prints the times, the ratios and the PNG sizes in pixels. Target (issue
11): a readable picture in seconds. This is a benchmark, not a test: the
machine is shared and noisy, so it reports ratios measured in one run rather
than asserting absolute times.
"""

from __future__ import annotations

import argparse
import os
import struct
import subprocess
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__)))))

from campus import campus_yaml

from beamplan.layout.loader import parse_layout
from beamplan.layout.yamlpos import parse_yaml
from beamplan.network.graph import build_network
from beamplan.optimise.planner import plan_network
from beamplan.report.draw import diagram_picture
from beamplan.report.html import plan_html
from beamplan.report.summary_draw import summary_picture

ROOT = sys.path[0]


def _timed(work: object) -> tuple[float, object]:
    start = time.perf_counter()
    result = work()  # type: ignore[operator]
    return time.perf_counter() - start, result


def _pixels(data: bytes) -> str:
    """The size of a PNG from its IHDR chunk (PNG specification, section 11.2.2)."""
    width, height = struct.unpack(">II", data[16:24])
    return f"{width:,} x {height:,} px"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--scanners", type=int, default=200)
    parser.add_argument("--png-dir", help="keep both PNG files here, to look at them")
    args = parser.parse_args()
    text = campus_yaml(args.scanners)
    network = build_network(parse_layout(parse_yaml(text, "campus.yaml")))
    plan = plan_network(network)
    print(f"campus: {len(network.scanners)} scanners, {len(network.nodes)} nodes")

    detail_s, detail_png = _timed(lambda: diagram_picture(network, plan).data("png"))
    summary_s, summary_png = _timed(lambda: summary_picture(network, plan).data("png"))
    assert isinstance(detail_png, bytes) and isinstance(summary_png, bytes)
    print(f"draw PNG   detail  {detail_s:7.2f} s  {_pixels(detail_png)}")
    print(f"draw PNG   summary {summary_s:7.2f} s  {_pixels(summary_png)}")
    print(f"           ratio detail / summary: {detail_s / summary_s:.1f}x")
    if args.png_dir:
        os.makedirs(args.png_dir, exist_ok=True)
        for name, data in (("detail", detail_png), ("summary", summary_png)):
            with open(os.path.join(args.png_dir, f"campus-{name}.png"), "wb") as out:
                out.write(data)

    def page(detail: bool) -> str:
        return plan_html(plan, network, layout_path="campus.yaml", version="bench",
                         date="2024-01-01", detail=detail)

    html_detail_s, _ = _timed(lambda: page(True))
    html_summary_s, _ = _timed(lambda: page(False))
    print(f"plan HTML  detail  {html_detail_s:7.2f} s")
    print(f"plan HTML  summary {html_summary_s:7.2f} s")
    print(f"           ratio detail / summary: {html_detail_s / html_summary_s:.1f}x")

    with tempfile.TemporaryDirectory() as folder:
        layout = os.path.join(folder, "campus.yaml")
        with open(layout, "w", encoding="utf-8") as out:
            out.write(text)
        env = {**os.environ, "PYTHONPATH": ROOT}
        command = [sys.executable, "-m", "beamplan.cli.main", "draw", layout, "--plan", "-q",
                   "-o", os.path.join(folder, "campus.png")]
        wall_s, _ = _timed(lambda: subprocess.run(command, env=env, check=True))
    print(f"beamplan draw --plan (summary, start-up included): {wall_s:.2f} s wall")


if __name__ == "__main__":
    main()
