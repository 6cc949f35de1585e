"""Factor columns from uniform inputs, whole blocks of columns at a time.

:meth:`ToleranceModel.factors <beamplan.analyses.tolerance_model.ToleranceModel.factors>`
maps the uniform inputs of each sample to one factor per column: a
correlation group's copula mix, the inverse of the column's distribution,
the clip of a fraction to [0, 1] (a power, pressure or angle to at least 0)
and the division by the nominal value. Written per column, that is a Python
loop of a dozen numpy calls per column and chunk, which dominates a
100-scanner run; here the columns of one distribution are done as one block
of (samples × columns) with per-column parameter vectors. Every element goes
through the same floating-point operations in the same order as the column
loop, so the factors (and every report) are bit for bit the same; the rare
columns that need scipy or a table (truncated normal, a property tabulated
through the physics layer) keep the per-column code.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import special, stats

__all__ = ["FRACTIONS", "ColumnSampler", "column_sampler"]

_PLAIN = ("normal", "uniform", "lognormal")
_NONNEGATIVE = ("power", "roughness", "pressure", "dose", "wph", "grazing")
FRACTIONS = {"reflectivity", "transmission", "efficiency", "fraction", "setting"}  # in [0, 1]
_U_EPS = 1e-12  # uniforms are kept inside [eps, 1 - eps]: finite normal quantiles


def _value(v: Any, p: np.ndarray) -> np.ndarray:
    t, mu = v.tolerance, v.nominal
    sigma = t.spread * abs(mu) if t.relative else t.spread
    if t.distribution == "normal":
        return np.asarray(mu + sigma * special.ndtri(p))
    if t.distribution == "uniform":
        return np.asarray(mu + sigma * (2.0 * p - 1.0))
    if t.distribution == "lognormal":
        s = t.spread if t.relative else (t.spread / abs(mu) if mu else 0.0)
        return np.asarray(mu * np.exp(s * special.ndtri(p)))
    assert t.bounds is not None
    if sigma == 0.0:
        return np.full_like(p, min(max(mu, t.bounds[0]), t.bounds[1]))
    a, b = (t.bounds[0] - mu) / sigma, (t.bounds[1] - mu) / sigma
    return np.asarray(mu + sigma * np.asarray(stats.truncnorm.ppf(p, a, b)))


def _factor(v: Any, p: np.ndarray) -> np.ndarray:
    value = _value(v, p)
    prop = v.tolerance.property
    if prop in FRACTIONS:
        value = np.clip(value, 0.0, 1.0)
    elif prop in _NONNEGATIVE:
        value = np.maximum(value, 0.0)
    if v.table is not None:
        return np.asarray(np.interp(value, v.table[0], v.table[1]))
    if v.nominal == 0.0:
        return np.ones_like(value)
    return np.asarray(value / v.nominal)


@dataclass(frozen=True)
class _Block:
    """Columns of one plain distribution: mu + sigma·g(p), clipped, ÷ nominal."""

    distribution: str
    columns: np.ndarray
    mu: np.ndarray
    sigma: np.ndarray  # σ (normal), half-width (uniform), σ of the logarithm (lognormal)
    low: np.ndarray  # clip: 0 or -inf
    high: np.ndarray  # clip: 1 or +inf
    nominal: np.ndarray  # divide by it; 0 gives a factor of 1

    @property
    def clip_low(self) -> bool:
        """Whether some column is kept at or above 0."""
        return bool(np.isfinite(self.low).any())

    @property
    def clip_high(self) -> bool:
        """Whether some column is kept at or below 1 (a fraction)."""
        return bool(np.isfinite(self.high).any())

    @property
    def zero(self) -> np.ndarray:
        """Columns whose nominal value is 0 (their factor stays 1)."""
        return np.asarray(self.nominal == 0.0)


@dataclass(frozen=True)
class ColumnSampler:
    """How to turn uniforms (n × dimensions) into factor columns (n × columns)."""

    width: int
    source: np.ndarray  # per column: the input dimension read directly (mixed: any)
    mixed: np.ndarray  # columns mixing a group draw with their own (Gaussian copula)
    mixed_group: np.ndarray
    mixed_own: np.ndarray
    mixed_a: np.ndarray  # √ρ
    mixed_b: np.ndarray  # √(1-ρ)
    blocks: tuple[_Block, ...]
    others: tuple[tuple[int, Any], ...]  # (column, variable) done one by one
    eps: float

    def factors(self, u: np.ndarray) -> np.ndarray:
        """Factor columns for uniforms ``u`` (n × dimensions).

        Examples
        --------
        >>> from beamplan.layout.loader import load_layout
        >>> from beamplan.layout.tolerances import load_tolerances
        >>> from beamplan.network.graph import build_network
        >>> from beamplan.analyses.tolerance_model import build_model
        >>> lay = load_layout("layouts/two-bay.yaml")
        >>> model = build_model(load_tolerances("layouts/tolerances/two-bay.yaml"), lay,
        ...                     build_network(lay))
        >>> u = np.full((2, model.dimensions), 0.5)
        >>> sampler = column_sampler(model.variables, model.var_dims, model.columns)
        >>> bool(np.allclose(sampler.factors(u), 1.0))
        True
        """
        n = u.shape[0]
        if not self.width:
            return np.empty((n, 0))
        p = u[:, self.source]
        np.clip(p, self.eps, 1.0 - self.eps, out=p)
        if len(self.mixed):
            lo, hi = self.eps, 1.0 - self.eps
            z = self.mixed_a * special.ndtri(np.clip(u[:, self.mixed_group], lo, hi)) + \
                self.mixed_b * special.ndtri(np.clip(u[:, self.mixed_own], lo, hi))
            p[:, self.mixed] = np.clip(special.ndtr(z), lo, hi)
        whole = len(self.blocks) == 1 and len(self.blocks[0].columns) == self.width
        out = p if whole else np.empty((n, self.width))
        for b in self.blocks:  # value = mu + sigma·g(p), in place (the same operations)
            value = p if whole else p[:, b.columns]
            if b.distribution == "normal":
                special.ndtri(value, out=value)
                value *= b.sigma
                value += b.mu
            elif b.distribution == "uniform":
                value *= 2.0
                value -= 1.0
                value *= b.sigma
                value += b.mu
            else:
                special.ndtri(value, out=value)
                value *= b.sigma
                np.exp(value, out=value)
                value *= b.mu
            if b.clip_high:
                np.clip(value, b.low, b.high, out=value)
            elif b.clip_low:
                np.maximum(value, b.low, out=value)  # the same as a clip to [low, inf]
            with np.errstate(divide="ignore", invalid="ignore"):
                value /= b.nominal
            if b.zero.any():
                value[:, b.zero] = 1.0
            if not whole:
                out[:, b.columns] = value
        for c, v in self.others:
            out[:, c] = _factor(v, p[:, c])
        return out


def column_sampler(variables: Sequence[Any], var_dims: Sequence[tuple[int, int, float]],
                   columns: Sequence[Sequence[int]]) -> ColumnSampler:
    """The block plan of a tolerance model's variables, dimensions and factor columns.

    See :class:`~beamplan.analyses.tolerance_model.ToleranceModel` for the
    fields; each column is drawn as its first variable.

    Examples
    --------
    >>> column_sampler((), (), ()).width
    0
    """
    source, mixed, mgroup, mown, ma, mb = [], [], [], [], [], []
    plain: dict[str, list[tuple[int, float, float, float, float, float]]] = {}
    others: list[tuple[int, Any]] = []
    for c, members in enumerate(columns):
        v = variables[members[0]]
        own, group, rho = var_dims[members[0]]
        source.append(own if group < 0 else group)
        if group >= 0 and own >= 0:
            mixed.append(c)
            mgroup.append(group)
            mown.append(own)
            ma.append(math.sqrt(rho))
            mb.append(math.sqrt(1.0 - rho))
        t, mu = v.tolerance, v.nominal
        if t.distribution not in _PLAIN or v.table is not None:
            others.append((c, v))
            continue
        if t.distribution == "lognormal":
            sigma = t.spread if t.relative else (t.spread / abs(mu) if mu else 0.0)
        else:
            sigma = t.spread * abs(mu) if t.relative else t.spread
        low, high = -math.inf, math.inf
        if t.property in FRACTIONS:
            low, high = 0.0, 1.0
        elif t.property in _NONNEGATIVE:
            low = 0.0
        plain.setdefault(t.distribution, []).append((c, mu, sigma, low, high, mu))
    blocks = []
    for name, rows in plain.items():
        a = [np.array(x) for x in zip(*rows, strict=True)]
        blocks.append(_Block(name, a[0].astype(np.intp), a[1], a[2], a[3], a[4], a[5]))
    return ColumnSampler(len(columns), np.array(source, dtype=np.intp),
                         np.array(mixed, dtype=np.intp), np.array(mgroup, dtype=np.intp),
                         np.array(mown, dtype=np.intp), np.array(ma), np.array(mb),
                         tuple(blocks), tuple(others), _U_EPS)
