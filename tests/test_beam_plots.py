"""Tests for beamplan.report.beam_plots: the beam-size picture."""

from __future__ import annotations

import html
import math
import re

import pytest

from beamplan.physics.beam import PlaneBeam, drift
from beamplan.report.beam_plots import MAX_LABELS, MAX_LINES, beam_size_chart, label_subset


def _line(n: int, tag: str) -> list[tuple[float, float, float, str]]:
    # sizes from the beam physics: a drift from a 100 µm x 70 µm waist
    h, v = PlaneBeam(1e-4, 2e-5), PlaneBeam(7e-5, 1e-5)
    return [(2.0 * i, drift(h, 2.0 * i).size_m, drift(v, 2.0 * i).size_m,
             f"{tag}-m{i}" if i % 2 == 0 else "") for i in range(n)]


def _texts(svg: str) -> list[str]:
    # with svg.fonttype "none" (plots.STYLE) every text is one <text> element
    return [html.unescape(t) for t in re.findall(r"<text[^>]*>([^<]*)</text>", svg)]


def test_same_input_same_bytes() -> None:
    lines = [("line-a", _line(6, "a")), ("line-b", _line(3, "b"))]
    first = beam_size_chart(lines)
    assert first.data("svg") == beam_size_chart(lines).data("svg")
    assert first.data("png") == beam_size_chart(lines).data("png")
    assert first.data("pdf").startswith(b"%PDF-")


def test_names_lines_and_elements() -> None:
    texts = _texts(beam_size_chart([("north-line", _line(5, "n")),
                                    ("south-line", _line(5, "s"))]).svg())
    assert "north-line" in texts and "south-line" in texts
    # every named point is labelled (5 points, ids on the even ones: m0, m2, m4)
    assert {"n-m0", "n-m2", "n-m4", "s-m4"} <= set(texts)
    assert "n-m1" not in texts


def test_sizes_are_drawn_in_mm() -> None:
    # a 0.8 mm beam: the size axis (decimal ticks; the distance ticks are whole) tops
    # out near 0.8 (mm), not in the hundreds (µm) (hand calculation)
    svg = beam_size_chart([("x", [(0.0, 8e-4, 4e-4, "a"), (100.0, 8e-4, 4e-4, "b")])]).svg()
    ticks = [float(t) for t in _texts(svg) if re.fullmatch(r"\d+\.\d+", t)]
    assert max(ticks) == pytest.approx(0.8, abs=0.11)
    assert "rms size (mm)" in _texts(svg)


def test_one_point_and_empty_input() -> None:
    one = beam_size_chart([("lonely", [(3.0, 2e-4, 1e-4, "only")])]).svg()
    assert "lonely" in _texts(one) and "only" in _texts(one)
    empty = _texts(beam_size_chart([]).svg())
    assert "no beam lines to draw" in empty and "0 lines" in empty
    blank = _texts(beam_size_chart([("bare", [])]).svg())
    assert "1 line; no points: bare" in blank


def test_labels_are_capped() -> None:
    texts = _texts(beam_size_chart([("long", _line(80, "k"))]).svg())
    named = [t for t in texts if t.startswith("k-m")]
    assert len(named) == MAX_LABELS
    assert "k-m0" in named and "k-m78" in named  # the first and the last element
    assert f"long  ({40 - MAX_LABELS} more elements marked, not named)" in texts


def test_lines_are_capped() -> None:
    lines = [(f"line-{i:02d}", _line(3, f"l{i}")) for i in range(MAX_LINES + 4)]
    texts = _texts(beam_size_chart(lines).svg())
    assert "line-00" in texts and f"line-{MAX_LINES - 1:02d}" in texts
    assert f"line-{MAX_LINES:02d}" not in texts
    assert f"{MAX_LINES + 4} lines; the first {MAX_LINES} drawn, 4 more not shown" in texts


def test_bad_numbers_are_refused() -> None:
    with pytest.raises(ValueError, match="line 'x'"):
        beam_size_chart([("x", [(0.0, math.nan, 1e-4, "a")])])
    with pytest.raises(ValueError, match="not negative"):
        beam_size_chart([("x", [(0.0, -1e-4, 1e-4, "a")])])


@pytest.mark.parametrize("count, cap", [(0, 5), (3, 5), (20, 5), (100, 14), (7, 1), (7, 2)])
def test_label_subset(count: int, cap: int) -> None:
    chosen = label_subset(count, cap)
    assert len(chosen) == min(count, cap)
    assert chosen == sorted(set(chosen))
    if count and cap >= 2:
        assert chosen[0] == 0 and chosen[-1] == count - 1
