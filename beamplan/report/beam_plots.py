"""The beam-size picture: rms sizes along every line, elements marked.

One panel per line, stacked, with the horizontal and the vertical rms size
(mm) against the distance along the line (m). Each point that names an
element gets a thin mark and its id above the panel; past
:data:`MAX_LABELS` elements a panel labels an evenly spread subset and says
how many it left out, and past :data:`MAX_LINES` lines the picture says how
many it does not draw. matplotlib figures only (no pyplot), deterministic
SVG through :class:`beamplan.report.plots.Picture`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

from beamplan.report.palette import PALETTE
from beamplan.report.plots import CASE_STYLES, Picture, _figure, _grid, _styled

__all__ = ["MAX_LABELS", "MAX_LINES", "BeamPoint", "beam_size_chart", "label_subset"]

#: (distance along the line m, horizontal rms size m, vertical rms size m, element id).
BeamPoint = tuple[float, float, float, str]

#: Lines drawn at most, one panel each; the rest are counted in the subtitle.
MAX_LINES = 16
#: Element labels per panel at most; the rest are marked but not named.
MAX_LABELS = 14
_ID_CHARS = 22  # longest id drawn in full
_WIDTH, _BODY, _TITLE, _LABELS, _AXIS = 7.5, 1.45, 0.3, 0.75, 0.45  # inches
_HEAD = 0.75  # the picture's title, subtitle and legend


def label_subset(count: int, cap: int = MAX_LABELS) -> list[int]:
    """Indices of at most ``cap`` of ``count`` items, evenly spread, first and last kept.

    Examples
    --------
    >>> label_subset(5, 3), label_subset(2, 3), label_subset(4, 1)
    ([0, 2, 4], [0, 1], [0])
    """
    if count <= cap:
        return list(range(count))
    if cap <= 1:
        return [0][:cap]
    return sorted({round(i * (count - 1) / (cap - 1)) for i in range(cap)})


def _short(text: str) -> str:
    return text if len(text) <= _ID_CHARS else text[:_ID_CHARS - 1] + "…"


def _check(name: str, points: Sequence[BeamPoint]) -> list[BeamPoint]:
    """The points sorted by distance; ValueError for a number that cannot be drawn."""
    for distance, horizontal, vertical, _ in points:
        if not all(math.isfinite(v) for v in (distance, horizontal, vertical)) \
                or horizontal < 0.0 or vertical < 0.0:
            raise ValueError(f"line {name!r}: a point needs finite numbers and sizes not "
                             f"negative, got {(distance, horizontal, vertical)!r}")
    return sorted(points, key=lambda p: p[0])


def _panel(figure: Any, bottom: float, height: float, name: str,
           points: list[BeamPoint]) -> None:
    """One line's panel, its element marks and labels, ``bottom`` inches up the figure."""
    ink = PALETTE["ink"]
    left, right = 0.75, 0.3
    ax = figure.add_axes((left / _WIDTH, (bottom + _AXIS) / height,
                          1 - (left + right) / _WIDTH, _BODY / height))
    distance = [p[0] for p in points]
    sizes = ([p[1] * 1e3 for p in points], [p[2] * 1e3 for p in points])  # mm
    for k, (series, style) in enumerate(zip(sizes, ("-", "--"), strict=True)):
        colour, marker = CASE_STYLES[k]
        ax.plot(distance, series, color=colour, ls=style, lw=1.2, marker=marker, ms=2.8,
                mec=ink, mew=0.3)
    named = [p for p in points if p[3]]
    shown = label_subset(len(named))
    for p in named:
        ax.axvline(p[0], color=PALETTE["idle"], lw=0.5, ls=":")
    for i in shown:
        ax.annotate(_short(named[i][3]), (named[i][0], 1.0), xycoords=("data", "axes fraction"),
                    xytext=(0, 3), textcoords="offset points", rotation=90, ha="center",
                    va="bottom", fontsize=5.5, annotation_clip=False)
    hidden = len(named) - len(shown)
    title = name + (f"  ({hidden} more elements marked, not named)" if hidden else "")
    figure.text(0.12 / _WIDTH, (bottom + _AXIS + _BODY + _LABELS + 0.12) / height, title,
                fontsize=7.5, fontweight="bold", va="bottom")
    low, high = min(distance), max(distance)
    pad = 0.04 * (high - low) or 1.0
    ax.set_xlim(low - pad, high + pad)
    top = max(sizes[0] + sizes[1])
    ax.set_ylim(0.0, top * 1.12 if top > 0 else 1.0)
    ax.set_xlabel("distance along the line (m)", labelpad=1.5)
    ax.set_ylabel("rms size (mm)")
    _grid(ax, "y")


@_styled
def beam_size_chart(lines: Sequence[tuple[str, Sequence[tuple[float, float, float, str]]]]
                    ) -> Picture:
    """rms beam sizes along each line, one panel per line, elements marked and named.

    Each line is ``(name, points)`` with points ``(distance m, horizontal rms
    m, vertical rms m, element id)``; an empty id is a point without an
    element (a waist, say). Lines without points are listed but not drawn.

    Examples
    --------
    >>> pts = [(0.0, 1e-4, 1e-4, "src"), (10.0, 3e-4, 2e-4, "m1"), (25.0, 6e-4, 4e-4, "m2")]
    >>> svg = beam_size_chart([("line-a", pts)]).svg()
    >>> "line-a" in svg and "m2" in svg
    True
    """
    from matplotlib.lines import Line2D

    checked = [(name, _check(name, points)) for name, points in lines]
    drawn = [(name, points) for name, points in checked if points][:MAX_LINES]
    empty = [name for name, points in checked if not points]
    left_out = sum(1 for _, points in checked if points) - len(drawn)
    block = _TITLE + _LABELS + _BODY + _AXIS
    height = _HEAD + (block * len(drawn) if drawn else 0.8) + 0.1
    figure = _figure(_WIDTH, height)
    figure.text(0.12 / _WIDTH, 1 - 0.18 / height, "Beam size along each line", fontsize=9,
                fontweight="bold", va="center")
    notes = [f"{len(checked)} line{'s' if len(checked) != 1 else ''}"]
    if left_out:
        notes.append(f"the first {len(drawn)} drawn, {left_out} more not shown")
    if empty:
        notes.append("no points: " + ", ".join(_short(n) for n in empty[:5]) +
                     (f" +{len(empty) - 5} more" if len(empty) > 5 else ""))
    figure.text(0.12 / _WIDTH, 1 - 0.36 / height, "; ".join(notes), fontsize=7, va="center")
    ink = PALETTE["ink"]
    legend = [Line2D([], [], color=CASE_STYLES[0][0], ls="-", marker=CASE_STYLES[0][1], ms=3,
                     mec=ink, mew=0.3, label="horizontal rms size"),
              Line2D([], [], color=CASE_STYLES[1][0], ls="--", marker=CASE_STYLES[1][1], ms=3,
                     mec=ink, mew=0.3, label="vertical rms size"),
              Line2D([], [], color=PALETTE["idle"], ls=":", lw=0.8, label="element")]
    figure.legend(handles=legend, loc="upper left", ncols=3, fontsize=6.5,
                  bbox_to_anchor=(0.06 / _WIDTH, 1 - 0.45 / height), borderaxespad=0)
    if not drawn:
        figure.text(0.5, 0.5 / height, "no beam lines to draw", ha="center",
                    va="center", fontsize=8)
    for k, (name, points) in enumerate(drawn):
        bottom = 0.1 + block * (len(drawn) - 1 - k)
        _panel(figure, bottom, height, name, points)
    return Picture(figure, "beam-size")
