"""What a tolerance run says, in numbers every report shares.

Per scanner: the probability of meeting its need with its 95 % Wilson
interval, and the 5/50/95 % quantiles of its headroom (delivered ÷ need − 1)
read from a histogram in steps of 0.001 of the factor; fab-wide: the
probability that every scanner meets its need at once; the samples needed
for a requested interval width; the Sobol' indices ranked.
"""

from __future__ import annotations

from dataclasses import dataclass

from beamplan.analyses.tolerance import EDGES, ToleranceRun
from beamplan.analyses.tolerance_stats import histogram_quantiles, samples_for_width, wilson

__all__ = ["QUANTILES", "Ranked", "ScannerOdds", "ToleranceSummary", "summarise"]

QUANTILES = (0.05, 0.5, 0.95)
RESOLUTION = float(EDGES[1] - EDGES[0])


@dataclass(frozen=True)
class ScannerOdds:
    """One scanner's odds: P(meet need), its interval, headroom quantiles."""

    id: str
    need_w: float
    planned_headroom: float
    probability: float
    low: float
    high: float
    headroom: tuple[float, float, float]  # 5 %, 50 %, 95 %


@dataclass(frozen=True)
class Ranked:
    """A tolerance (or correlation group) with its Sobol' indices, for one output."""

    tolerance: str
    first: float
    total: float
    first_conf: float
    total_conf: float


@dataclass(frozen=True)
class ToleranceSummary:
    """The numbers of a run, ready for any report."""

    run: ToleranceRun
    scanners: tuple[ScannerOdds, ...]
    all_met: float
    all_low: float
    all_high: float
    lowest_headroom: tuple[float, float, float]
    needed: int | None  # samples for the requested interval width (fab-wide, worst scanner)
    ranking: tuple[Ranked, ...]  # fab-wide, on the lowest factor
    per_scanner: tuple[tuple[str, tuple[Ranked, ...]], ...]

    @property
    def overheated(self) -> float:
        """The share of samples in which a heat limit is exceeded (fixed mode)."""
        n = self.run.tally.samples
        return self.run.tally.overheated / n if n else 0.0

    @property
    def partial(self) -> bool:
        """Whether the run was stopped before all samples were drawn."""
        return self.run.interrupted


def _ranked(run: ToleranceRun, k: int) -> tuple[Ranked, ...]:
    ix = run.sensitivity
    if ix is None:
        return ()
    rows = [Ranked(name, float(ix.first[k, i]), float(ix.total[k, i]),
                   float(ix.first_conf[k, i]), float(ix.total_conf[k, i]))
            for i, name in enumerate(ix.inputs)]
    return tuple(sorted(rows, key=lambda r: (-round(r.total, 6), -round(r.first, 6),
                                             r.tolerance)))


def summarise(run: ToleranceRun) -> ToleranceSummary:
    """The summary of a run.

    Examples
    --------
    >>> from beamplan.analyses.tolerance import Tally, ToleranceRun
    >>> import numpy as np
    >>> hist = np.zeros((1, len(EDGES) - 1), dtype=int)
    >>> hist[0, 1100] = 10
    >>> run = ToleranceRun("x", "fixed", "random", 0, 10, ("a",), (100.0,), (1.1,),
    ...                    Tally(10, np.array([10]), 10, hist, hist[0]), None, None, False)
    >>> s = summarise(run)
    >>> s.scanners[0].probability, round(s.scanners[0].low, 3)
    (1.0, 0.722)
    """
    t = run.tally
    n = t.samples
    scanners = []
    for j, sid in enumerate(run.scanners):
        low, high = wilson(int(t.met[j]), n)
        qs = histogram_quantiles(t.histograms[j], EDGES, QUANTILES)
        scanners.append(ScannerOdds(sid, run.need_w[j], run.planned_factor[j] - 1.0,
                                    int(t.met[j]) / n if n else float("nan"), low, high,
                                    (qs[0] - 1.0, qs[1] - 1.0, qs[2] - 1.0)))
    all_low, all_high = wilson(t.all_met, n)
    lowest = histogram_quantiles(t.min_histogram, EDGES, QUANTILES)
    needed = None
    if run.width is not None and n:
        worst = min((s.probability for s in scanners), key=lambda p: abs(p - 0.5),
                    default=0.5)
        p_all = t.all_met / n
        needed = max(samples_for_width(p_all, run.width), samples_for_width(worst, run.width))
    per = tuple((sid, _ranked(run, j)) for j, sid in enumerate(run.scanners)) \
        if run.sensitivity is not None else ()
    return ToleranceSummary(run, tuple(scanners), t.all_met / n if n else float("nan"),
                            all_low, all_high, (lowest[0] - 1, lowest[1] - 1, lowest[2] - 1),
                            needed, _ranked(run, len(run.scanners)), per)
