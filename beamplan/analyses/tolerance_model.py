"""Tolerances resolved against a layout: knobs, draws, and factors per sample.

Each tolerance line names a target (a part's elements, an element, a source,
a scanner, a profile's scanners) and a property. It resolves to one
*variable* per member, each acting on one *knob* of the network: a GAIN or
switch gain, a splitter output's efficiency or share, an attenuator setting, a
source's power or a scanner's need. A more specific line (element, source,
scanner) overrides a part or profile line on the same knob.

Sampling works on independent uniform *dimensions*: one per variable, plus
one common dimension per correlation group. A member of a group with
correlation ρ takes ``z = √ρ·z_group + √(1-ρ)·z_own`` (a Gaussian copula
with equal correlation ρ; ρ = 1 is one draw for the whole group) and maps
``Φ(z)`` through its own distribution. The value is turned into a factor on
the knob's nominal value; physical properties (roughness, grazing angle, gas
pressure, dose, wafers per hour) go through the physics layer by tabulating
the gain (or need) on a grid of 129 values over the sampled range and
interpolating linearly; the largest interpolation error, checked at the grid
midpoints, is stated in the report.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from functools import cached_property
from typing import Any

import numpy as np

from beamplan.analyses.tolerance_draw import FRACTIONS, ColumnSampler, column_sampler
from beamplan.errors import Diagnostic, LayoutError, did_you_mean
from beamplan.layout.model import (
    AttenuatorSpec,
    DriftSpec,
    Layout,
    MirrorSpec,
    ScannerSpec,
    SourceSpec,
    SplitterSpec,
    SwitchSpec,
)
from beamplan.layout.tolerances import Tolerance, ToleranceSet
from beamplan.network.behaviour import Behaviour, Optics, element_node, scanner_node
from beamplan.network.graph import Network
from beamplan.optimise.result import Plan

__all__ = ["Knob", "ToleranceModel", "Variable", "build_model"]

GRID = 129
_PHYSICAL = {"roughness": "roughness_m", "grazing": "grazing_rad", "pressure": "pressure_pa",
             "dose": "dose_j_m2", "wph": "wafers_per_hour"}


@dataclass(frozen=True)
class Knob:
    """What a factor multiplies: ``quantity`` of node ``node`` (at output ``port``).

    ``quantity`` is ``gain``, ``efficiency``, ``fraction``, ``setting``,
    ``power`` (a source) or ``need`` (a scanner).
    """

    node: str
    quantity: str
    port: str | None = None


@dataclass(frozen=True)
class Variable:
    """One sampled property of one member; ``nominal`` in SI units."""

    tolerance: Tolerance
    knob: Knob
    nominal: float
    table: tuple[np.ndarray, np.ndarray] | None = None  # property values, factors
    table_error: float = 0.0


@dataclass(frozen=True)
class ToleranceModel:
    """The knobs, variables and sampling dimensions of a tolerance set on a network.

    ``dim_labels`` name each dimension for sensitivity: the tolerance's name,
    or ``group NAME`` for a correlation group's common draw.
    """

    knobs: tuple[Knob, ...]
    variables: tuple[Variable, ...]
    dim_labels: tuple[str, ...]
    columns: tuple[tuple[int, ...], ...]  # per unique factor column: its variables
    knob_column: tuple[int, ...]  # per knob (= per variable): its factor column
    var_dims: tuple[tuple[int, int, float], ...]  # own dim (-1: none), group dim (-1), rho

    @property
    def dimensions(self) -> int:
        """The number of independent uniform inputs per sample."""
        return len(self.dim_labels)

    @property
    def interpolation_error(self) -> float:
        """The largest relative error of a tabulated factor (0 when none is tabulated)."""
        return max((v.table_error for v in self.variables), default=0.0)

    @cached_property
    def _sampler(self) -> ColumnSampler:
        return column_sampler(self.variables, self.var_dims, self.columns)

    def factors(self, u: np.ndarray) -> np.ndarray:
        """Factor columns (n × columns) from uniforms (n × dimensions).

        Examples
        --------
        >>> ToleranceModel((), (), (), (), (), ()).factors(np.zeros((3, 0))).shape
        (3, 0)
        """
        return self._sampler.factors(u)


def _span(t: Tolerance, mu: float) -> tuple[float, float]:
    """The range of values a tolerance can sample (8 σ; the bounds of a truncated normal)."""
    sigma = t.spread * abs(mu) if t.relative else t.spread
    if t.distribution == "truncnormal" and t.bounds is not None:
        return t.bounds
    if t.distribution == "uniform":
        return mu - sigma, mu + sigma
    if t.distribution == "lognormal":
        s = t.spread if t.relative else t.spread / abs(mu)
        return mu * math.exp(-8 * s), mu * math.exp(8 * s)
    return mu - 8 * sigma, mu + 8 * sigma


class _Resolver:
    def __init__(self, layout: Layout, network: Network, plan: Plan | None) -> None:
        self.layout, self.network, self.plan = layout, network, plan
        self.errors: list[Diagnostic] = []
        self.settings = {e.id: e.setting for e in plan.elements} if plan else {}

    def bad(self, t: Tolerance, message: str, hint: str = "") -> None:
        self.errors.append(Diagnostic("error", "bad-tolerance", f"tolerance '{t.name}': "
                                      f"{message}", t.location, hint))

    def members(self, t: Tolerance) -> list[Any]:
        lay = self.layout
        out: list[Any]
        parts: list[Any]
        if t.target_kind == "part":
            out = [e for e in lay.elements if e.part == t.target]
            parts = sorted({e.part for e in lay.elements if e.part})
        elif t.target_kind == "profile":
            out = [s for s in lay.scanners if s.demand is not None and
                   s.demand.profile == t.target]
            parts = sorted({s.demand.profile for s in lay.scanners
                            if s.demand is not None and s.demand.profile})
        else:
            group: tuple[Any, ...] = {"element": lay.elements, "source": lay.sources,
                                      "scanner": lay.scanners}[t.target_kind]
            out = [x for x in group if x.id == t.target]
            parts = [x.id for x in group]
        if not out:
            self.bad(t, f"no {t.target_kind} '{t.target}' in layout '{lay.name}'",
                     did_you_mean(t.target, parts) or f"the {t.target_kind}s are: "
                     f"{', '.join(parts[:8])}")
        return list(out)

    def resolve(self, t: Tolerance, spec: object) -> list[Variable]:
        prop, net = t.property, self.network
        sid = getattr(spec, "id", "")
        node = net.node.get(sid)
        if node is None or not node.in_use:
            return []
        what = f"{type(spec).__name__.removesuffix('Spec').lower()} '{sid}'"
        if isinstance(spec, SourceSpec) and prop == "power":
            return [Variable(t, Knob(sid, "power"), node.available_w)]
        if isinstance(spec, ScannerSpec):
            if prop == "power":
                return [Variable(t, Knob(sid, "need"), node.need_w)]
            if prop in ("dose", "wph") and spec.demand is not None:
                return [self.tabulated(t, Knob(sid, "need"), node.need_w,
                                       getattr(spec.demand, _PHYSICAL[prop]),
                                       lambda x: scanner_node(replace(spec, demand=replace(
                                           spec.demand, **{_PHYSICAL[prop]: x})),  # type: ignore
                                           net.wavelength_m).need_w)]
        if isinstance(spec, SplitterSpec) and prop in ("efficiency", "fraction"):
            ports = [p for p in node.ports if t.port in (None, p.name)]
            if not ports:
                self.bad(t, f"{what} has no output '{t.port}'",
                         f"its outputs are: {', '.join(str(p.name) for p in node.ports)}")
            out = []
            shares: dict[Any, float] = dict(self.settings.get(sid) or ())  # type: ignore
            for port in ports:
                mu = port.efficiency if prop == "efficiency" else shares.get(port.name, 0.0)
                out.append(Variable(t, Knob(sid, prop, port.name), mu))
            return out
        if t.port is not None:
            self.bad(t, f"'port' applies to splitters; {what} is not one", "remove 'port'")
            return []
        gain_props = {MirrorSpec: ("reflectivity",), DriftSpec: ("transmission",),
                      SwitchSpec: ("efficiency",), AttenuatorSpec: ("transmission", "setting")}
        if prop in gain_props.get(type(spec), ()):  # type: ignore[call-overload]
            if node.behaviour is Behaviour.RANGE:
                chosen = self.settings.get(sid)
                return [Variable(t, Knob(sid, "setting"), float(chosen)
                                 if isinstance(chosen, float) else node.gain_max)]
            return [Variable(t, Knob(sid, "gain"), node.gain_max)]
        if isinstance(spec, MirrorSpec) and prop in ("roughness", "grazing") and (
                spec.coating is not None or (spec.multilayer is not None and prop == "roughness")):
            field = _PHYSICAL[prop]
            if spec.multilayer is not None and prop == "roughness":
                def gain(x: float) -> float:
                    ml = replace(spec.multilayer, roughness_m=x)  # type: ignore[type-var]
                    return element_node(replace(spec, multilayer=ml),
                                        Optics(net.wavelength_m)).gain_max
                nominal = spec.multilayer.roughness_m
            else:
                def gain(x: float) -> float:
                    return element_node(replace(spec, **{field: x}),  # type: ignore
                                        Optics(net.wavelength_m)).gain_max
                nominal = getattr(spec, field)
            if nominal is not None and spec.reflectivity is None:
                return [self.tabulated(t, Knob(sid, "gain"), node.gain_max, nominal, gain)]
        if isinstance(spec, DriftSpec) and prop == "pressure" and spec.fill is not None \
                and spec.transmission is None:
            fill = spec.fill
            return [self.tabulated(t, Knob(sid, "gain"), node.gain_max, fill.pressure_pa,
                                   lambda x: element_node(replace(spec, fill=replace(
                                       fill, pressure_pa=x)), Optics(net.wavelength_m)
                                                          ).gain_max)]
        self.bad(t, f"'{prop}' has no tolerance on {what}",
                 _what_applies(spec))
        return []

    def tabulated(self, t: Tolerance, knob: Knob, base: float, nominal: float,
                  compute: object) -> Variable:
        low, high = _span(t, nominal)
        low = max(low, 0.0)
        grid = np.linspace(low, max(high, low + 1e-300), GRID)
        fn = compute  # a scalar function of the property value
        try:
            at = np.array([fn(float(x)) for x in grid])  # type: ignore[operator]
            mids = (grid[1:] + grid[:-1]) / 2
            exact = np.array([fn(float(x)) for x in mids])  # type: ignore[operator]
        except ValueError as exc:
            self.bad(t, f"the physics fails inside the sampled range: {exc}",
                     "narrow the spread")
            return Variable(t, knob, nominal)
        base_here = fn(float(nominal))  # type: ignore[operator]
        error = float(np.max(np.abs(np.interp(mids, grid, at) - exact)) / abs(base_here)) \
            if base_here else 0.0
        return Variable(t, knob, nominal, (grid, at / base_here if base_here else at * 0 + 1),
                        error)


def _what_applies(spec: object) -> str:
    table = {"SourceSpec": "power", "ScannerSpec": "power (dose, wph for scanners given by "
             "dose and wph)", "MirrorSpec": "reflectivity (roughness, grazing for coated "
             "mirrors)", "DriftSpec": "transmission (pressure for gas-filled drifts)",
             "SwitchSpec": "efficiency", "AttenuatorSpec": "transmission or setting",
             "SplitterSpec": "efficiency, fraction (with an optional port)"}
    return "the properties here are: " + table.get(type(spec).__name__, "none")


def build_model(tolerances: ToleranceSet, layout: Layout, network: Network,
                plan: Plan | None = None) -> ToleranceModel:
    """Resolve a tolerance set against a layout, its network and plan (for settings).

    Raises
    ------
    LayoutError
        A tolerance whose target or property does not exist, located in its file.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.layout.tolerances import load_tolerances
    >>> from beamplan.network.graph import build_network
    >>> lay = load_layout("layouts/two-bay.yaml")
    >>> model = build_model(load_tolerances("layouts/tolerances/two-bay.yaml"), lay,
    ...                     build_network(lay))
    >>> model.dimensions > 0
    True
    """
    r = _Resolver(layout, network, plan)
    chosen: dict[Knob, Variable] = {}
    specific: dict[Knob, bool] = {}
    for t in tolerances.tolerances:
        for spec in r.members(t):
            for v in r.resolve(t, spec):
                is_specific = t.target_kind not in ("part", "profile")
                if v.knob in chosen and specific[v.knob] and not is_specific:
                    continue
                chosen[v.knob], specific[v.knob] = v, is_specific
    if r.errors:
        raise LayoutError(r.errors)
    groups = {g.name: g for g in tolerances.groups}
    labels: list[str] = []
    group_dim: dict[str, int] = {}
    var_dims = []
    variables = tuple(chosen.values())
    for v in variables:
        t = v.tolerance
        rho = groups[t.group].correlation if t.group else 0.0
        gdim = -1
        if t.group:
            if t.group not in group_dim:
                group_dim[t.group] = len(labels)
                labels.append(f"group {t.group}")
            gdim = group_dim[t.group]
        own = -1
        if rho < 1.0:
            own = len(labels)
            labels.append(t.name)
        var_dims.append((own, gdim, rho))
    columns: dict[tuple[object, ...], list[int]] = {}
    for i, v in enumerate(variables):
        t = v.tolerance
        own, gdim, rho = var_dims[i]
        shared = own < 0 and v.table is None and t.relative and t.distribution != "truncnormal"
        key: tuple[object, ...] = (("g", gdim, t.distribution, t.spread, t.property in FRACTIONS
                                    and v.nominal * (1 + 8 * t.spread) > 1 and v.nominal)
                                   if shared else ("v", i))
        columns.setdefault(key, []).append(i)
    cols = tuple(tuple(m) for m in columns.values())
    knob_column = [0] * len(variables)
    for c, members in enumerate(cols):
        for i in members:
            knob_column[i] = c
    return ToleranceModel(tuple(v.knob for v in variables), variables, tuple(labels), cols,
                          tuple(knob_column), tuple(var_dims))
