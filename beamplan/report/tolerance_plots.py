"""Tolerance pictures: the headroom distribution per scanner and the sensitivity ranking."""

from __future__ import annotations

import numpy as np

from beamplan.analyses.tolerance import EDGES
from beamplan.analyses.tolerance_summary import ToleranceSummary
from beamplan.report.palette import PALETTE
from beamplan.report.plots import CASE_STYLES, Picture, _axes, _grid, _left, _styled

__all__ = ["headroom_cdf", "scanners_of_interest", "sensitivity_chart"]


def scanners_of_interest(summary: ToleranceSummary, count: int = 4) -> list[int]:
    """Indices of the scanners least likely to meet their need (ties by id)."""
    order = sorted(range(len(summary.scanners)),
                   key=lambda j: (summary.scanners[j].probability, summary.scanners[j].id))
    return order[:count]


@_styled
def headroom_cdf(summary: ToleranceSummary, count: int = 4) -> Picture:
    """Cumulative distribution of headroom for the scanners of interest.

    Examples
    --------
    >>> import numpy as np
    >>> from beamplan.analyses.tolerance import Tally, ToleranceRun
    >>> from beamplan.analyses.tolerance_model import ToleranceModel
    >>> from beamplan.analyses.tolerance_summary import summarise
    >>> h = np.zeros((1, len(EDGES) - 1), dtype=int); h[0, 1050] = 5
    >>> run = ToleranceRun("x", "fixed", "random", 0, 5, ("a",), (1.0,), (1.05,),
    ...     Tally(5, np.array([5]), 5, h, h[0]), ToleranceModel((), (), (), (), (), ()),
    ...     None, False)
    >>> headroom_cdf(summarise(run)).svg().startswith("<?xml")
    True
    """
    from matplotlib.lines import Line2D

    chosen = scanners_of_interest(summary, count)
    hist = summary.run.tally.histograms
    legend = [Line2D([], [], color=CASE_STYLES[k % 6][0], lw=1.4,
                     label=summary.scanners[j].id) for k, j in enumerate(chosen)]
    figure, ax = _axes(7.5, 2.6, 0.7, "Headroom distribution (scanners least likely to meet "
                       "their need)", f"{summary.run.layout}, {summary.run.mode} settings, "
                       f"{summary.run.tally.samples} samples", legend)
    lo, hi = 1.0, 0.0
    for k, j in enumerate(chosen):
        counts = hist[j]
        total = counts.sum()
        if not total:
            continue
        cdf = np.concatenate(([0.0], np.cumsum(counts) / total))
        nz = np.nonzero(counts)[0]
        lo, hi = min(lo, EDGES[nz[0]]), max(hi, EDGES[nz[-1] + 1])
        ax.plot((EDGES - 1.0) * 100, cdf, color=CASE_STYLES[k % 6][0], lw=1.4)
    ax.axvline(0.0, color=PALETTE["ink"], lw=0.8, ls="--")
    ax.set_xlim((min(lo, 1.0) - 1.0) * 100 - 1, (max(hi, 1.0) - 1.0) * 100 + 1)
    ax.set_ylim(0, 1)
    ax.set_xlabel("headroom, delivered / need - 1 (%); left of the dashed line: need not met")
    ax.set_ylabel("fraction of samples")
    _grid(ax, "both")
    return Picture(figure, "tolerance-cdf")


@_styled
def sensitivity_chart(summary: ToleranceSummary, top: int = 12) -> Picture:
    """Ranked Sobol' indices (total and first order) of the lowest headroom factor."""
    from matplotlib.patches import Patch

    rows = list(summary.ranking[:top])
    ink = PALETTE["ink"]
    legend = [Patch(fc=PALETTE["beam"], ec=ink, label="total index"),
              Patch(fc=PALETTE["paper"], ec=ink, hatch="////", label="first-order index")]
    figure, ax = _axes(7.5, 0.3 + 0.3 * max(len(rows), 1), _left(r.tolerance for r in rows),
                       "Which tolerance to tighten first", "Sobol' indices of the lowest "
                       "headroom factor, ranked by total index", legend)
    for i, r in enumerate(rows):
        ax.barh(i - 0.17, max(r.total, 0.0), 0.32, color=PALETTE["beam"], edgecolor=ink, lw=0.6)
        ax.barh(i + 0.17, max(r.first, 0.0), 0.32, color=PALETTE["paper"], edgecolor=ink,
                lw=0.6, hatch="////")
    ax.set_yticks(range(len(rows)), [r.tolerance for r in rows])
    ax.set_ylim(len(rows) - 0.4, -0.6)
    ax.set_xlim(0, 1.05)
    ax.set_xlabel("share of the variance")
    _grid(ax, "x")
    return Picture(figure, "tolerance-sensitivity")
