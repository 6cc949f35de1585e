"""Statistics of a tolerance run: intervals, sample counts, quantiles, Sobol indices.

* The Wilson score interval for a binomial proportion (E. B. Wilson, "Probable
  inference, the law of succession, and statistical inference", J. Am. Stat.
  Assoc. 22 (1927) 209-212), which keeps its coverage near the nominal level
  also near 0 and 1, where the Wald interval fails (Brown, Cai & DasGupta,
  Stat. Sci. 16 (2001) 101-133).
* Sobol' first-order and total indices (I. M. Sobol', Math. Comput. Simul. 55
  (2001) 271-280) with the estimators of Saltelli et al., Comput. Phys.
  Commun. 181 (2010) 259-270, through SALib (Saltelli sampling on a scrambled
  Sobol' sequence, ``SALib.analyze.sobol``).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

__all__ = ["Z95", "SobolIndices", "histogram_quantiles", "samples_for_width", "sobol_indices",
           "wilson"]

Z95 = 1.959963984540054  # the 97.5 % point of the standard normal (scipy.stats.norm.ppf)


def wilson(successes: int, n: int, z: float = Z95) -> tuple[float, float]:
    """The Wilson score interval of a proportion (95 % by default).

    Examples
    --------
    >>> [round(x, 4) for x in wilson(8, 10)]
    [0.4902, 0.9433]
    """
    if n <= 0:
        return 0.0, 1.0
    p = successes / n
    z2 = z * z
    centre = (p + z2 / (2 * n)) / (1 + z2 / n)
    half = z / (1 + z2 / n) * math.sqrt(p * (1 - p) / n + z2 / (4 * n * n))
    low = 0.0 if successes == 0 else max(centre - half, 0.0)
    high = 1.0 if successes == n else min(centre + half, 1.0)
    return low, high


def samples_for_width(p: float, width: float, z: float = Z95) -> int:
    """The fewest samples whose Wilson interval at proportion ``p`` is at most ``width`` wide.

    Examples
    --------
    >>> samples_for_width(0.5, 0.02)
    9600
    """
    if width <= 0:
        raise ValueError("the interval width must be positive")

    def wide(n: int) -> float:
        low, high = wilson(round(p * n), n, z) if n else (0.0, 1.0)
        return high - low

    low, high = 1, 1
    while wide(high) > width:
        high *= 2
    while low < high:
        mid = (low + high) // 2
        if wide(mid) > width:
            low = mid + 1
        else:
            high = mid
    return high


def histogram_quantiles(counts: np.ndarray, edges: np.ndarray, qs: Sequence[float]
                        ) -> list[float]:
    """Quantiles of a histogram, interpolated linearly inside a bin.

    Examples
    --------
    >>> histogram_quantiles(np.array([1, 1]), np.array([0.0, 1.0, 2.0]), [0.5])
    [1.0]
    """
    total = counts.sum()
    if total == 0:
        return [math.nan] * len(qs)
    cum = np.concatenate(([0], np.cumsum(counts))) / total
    return [float(np.interp(q, cum, edges)) for q in qs]


@dataclass(frozen=True)
class SobolIndices:
    """First-order and total indices per input (group) and output, with 95 % half-widths.

    Arrays are (outputs × inputs).
    """

    inputs: tuple[str, ...]
    first: np.ndarray
    total: np.ndarray
    first_conf: np.ndarray
    total_conf: np.ndarray
    base_samples: int


def _salib() -> tuple[object, object]:
    try:
        from SALib.analyze import sobol as analyze
        from SALib.sample import sobol as sample
    except ImportError as exc:
        from beamplan.errors import UsageError

        raise UsageError("sensitivity indices need SALib: pip install 'beamplan[tolerance]', "
                         "or run without them (--no-sensitivity)") from exc
    return sample, analyze


def sobol_indices(labels: Sequence[str], evaluate: Callable[[np.ndarray], np.ndarray],
                  base_samples: int = 1024, seed: int = 0) -> SobolIndices:
    """Sobol' indices of each output of ``evaluate`` on uniform inputs in [0, 1).

    ``labels`` names each input dimension; dimensions with the same label form
    one group (one index). ``evaluate`` maps (n × dims) to (n × outputs).

    Examples
    --------
    >>> ix = sobol_indices(["a", "b"], lambda u: (u[:, :1] + 0.1 * u[:, 1:]), 256, seed=1)
    >>> ix.inputs, bool(ix.first[0, 0] > 0.9)
    (('a', 'b'), True)
    """
    sample, analyze = _salib()
    names = [f"x{i}" for i in range(len(labels))]
    groups = list(dict.fromkeys(labels))
    problem = {"num_vars": len(labels), "names": names,
               "bounds": [[0.0, 1.0]] * len(labels), "groups": list(labels)}
    if len(groups) == len(labels):
        problem.pop("groups")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        x = sample.sample(problem, base_samples, calc_second_order=False,  # type: ignore
                          seed=seed)
        y = np.atleast_2d(np.asarray(evaluate(np.asarray(x)), dtype=float).T).T
        shape = (y.shape[1], len(groups))
        first, total = np.zeros(shape), np.zeros(shape)
        first_conf, total_conf = np.zeros(shape), np.zeros(shape)
        for k in range(y.shape[1]):
            col = y[:, k]
            if not np.all(np.isfinite(col)) or np.ptp(col) == 0.0:
                continue
            # SALib treats a seed of 0 as no seed (global state): never pass 0.
            res = analyze.analyze(problem, col, calc_second_order=False,  # type: ignore
                                  print_to_console=False, seed=seed + 1)
            first[k], total[k] = res["S1"], res["ST"]
            first_conf[k], total_conf[k] = res["S1_conf"], res["ST_conf"]
    return SobolIndices(tuple(groups), first, total, first_conf, total_conf, base_samples)
