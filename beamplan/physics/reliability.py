"""Availability algebra of repairable parts: two-state models, series, parallel, states.

Method: the two-state (up/down) Markov model of a repairable component with
exponential times to failure and to repair, and state enumeration of independent
components, as in R. Billinton, R. N. Allan, "Reliability Evaluation of Power
Systems", 2nd ed., Plenum 1996 (chapters on repairable systems and on
state-enumeration methods). Times are in hours.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence

__all__ = [
    "availability",
    "parallel_availability",
    "series_availability",
    "state_probability",
    "unavailability",
]


def availability(mtbf_h: float, mttr_h: float) -> float:
    """Steady-state availability of a two-state repairable part: ``MTBF / (MTBF + MTTR)``.

    Method: Billinton and Allan (1996), the two-state model with failure rate
    ``1/MTBF`` and repair rate ``1/MTTR``.

    Examples
    --------
    >>> availability(990.0, 10.0)  # hand calculation
    0.99
    """
    if not (mtbf_h > 0.0 and math.isfinite(mtbf_h)):
        raise ValueError(f"mtbf_h must be positive and finite, got {mtbf_h!r}")
    if not (mttr_h >= 0.0 and math.isfinite(mttr_h)):
        raise ValueError(f"mttr_h must be non-negative and finite, got {mttr_h!r}")
    return mtbf_h / (mtbf_h + mttr_h)


def unavailability(mtbf_h: float, mttr_h: float) -> float:
    """``MTTR / (MTBF + MTTR)``, the probability of finding the part down.

    Examples
    --------
    >>> round(unavailability(990.0, 10.0), 12)
    0.01
    """
    return 1.0 - availability(mtbf_h, mttr_h) if mttr_h > 0 else 0.0


def series_availability(parts: Iterable[float]) -> float:
    """Availability of independent parts that all must work: the product.

    Examples
    --------
    >>> round(series_availability([0.99, 0.98]), 6)
    0.9702
    """
    result = 1.0
    for a in parts:
        result *= a
    return result


def parallel_availability(parts: Iterable[float]) -> float:
    """Availability of independent redundant parts (one is enough): ``1 - Π(1 - A)``.

    Examples
    --------
    >>> round(parallel_availability([0.9, 0.9]), 6)
    0.99
    """
    down = 1.0
    for a in parts:
        down *= 1.0 - a
    return 1.0 - down


def state_probability(q: Sequence[float], down: Iterable[int]) -> float:
    """Probability of the state in which exactly the parts ``down`` are down.

    Method: state enumeration of independent two-state parts (Billinton and
    Allan 1996): ``Π_{i down} q_i × Π_{j up} (1 - q_j)``.

    Examples
    --------
    >>> round(state_probability([0.1, 0.2], []), 6), round(state_probability([0.1, 0.2], [0]), 6)
    (0.72, 0.08)
    """
    chosen = set(down)
    result = 1.0
    for i, qi in enumerate(q):
        result *= qi if i in chosen else 1.0 - qi
    return result
