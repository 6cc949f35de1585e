"""Ageing laws evaluated: the state of one optic, advanced over time and restored.

The state of an optic is one number: its gain relative to new for the
empirical laws (linear or exponential in hours of light, absorbed energy or
absorbed energy per area), or the thickness of its contamination overlayer for
the physical law, whose relative gain ``R(d) / R(0)`` comes from
:mod:`beamplan.physics.overlayer`. Ageing never raises a gain: a thin film
that raises R a little through a phase shift (possible on an uncapped
multilayer) is read as no loss (a running minimum over the thickness, which
is conservative).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from beamplan.errors import Diagnostic, LayoutError, did_you_mean
from beamplan.layout.ageing import AgeingSpec, Law
from beamplan.layout.model import Layout

__all__ = ["GAIN_FLOOR", "LawModel", "resolve_optics"]

GAIN_FLOOR = 1e-9  # a gain never reaches 0, so that its logarithm exists
_TABLE_POINTS = 121


@dataclass(frozen=True)
class LawModel:
    """One optic's law, compiled (an overlayer's gain table computed once).

    Examples
    --------
    >>> from beamplan.errors import Location
    >>> law = Law("m1", "exponential", "hours", 3.6e6, Location("a", 1, 1), loss=0.01)
    >>> m = LawModel.compile(law, 13.5e-9)
    >>> round(m.gain(m.advance(m.new_state, m.units(2000.0, 0.0, True))), 6)
    0.9801
    """

    law: Law
    thickness_m: tuple[float, ...] = ()
    table: tuple[float, ...] = ()
    method: str = ""

    @staticmethod
    def compile(law: Law, wavelength_m: float) -> LawModel:
        """Precompute what the law needs (the overlayer's relative-gain table)."""
        if law.kind != "overlayer":
            kind = "linear" if law.kind == "linear" else "exponential"
            return LawModel(law, method=f"empirical {kind} loss of {law.loss:.4g} per unit")
        from beamplan.physics.overlayer import overlayer_on_mirror, overlayer_on_multilayer

        mirror = law.mirror
        assert mirror is not None
        top = law.saturation_m if law.saturation_m else 50e-9
        grid = np.linspace(0.0, top, _TABLE_POINTS)

        def reflectivity(d: float) -> tuple[float, str]:
            if mirror.kind == "thick":
                r = overlayer_on_mirror(law.material, d, mirror.material, mirror.grazing_rad,
                                        wavelength_m, overlayer_density_g_cm3=law.density_g_cm3)
            else:
                r = overlayer_on_multilayer(law.material, d, mirror.pair, mirror.period_m,
                                            mirror.gamma, mirror.bilayers, mirror.incidence_rad,
                                            wavelength_m, capping=mirror.capping,
                                            overlayer_density_g_cm3=law.density_g_cm3)
            return r.reflectivity, r.method

        base, method = reflectivity(0.0)
        values = np.minimum.accumulate([min(1.0, reflectivity(float(d))[0] / base)
                                        for d in grid])
        return LawModel(law, tuple(float(d) for d in grid),
                        tuple(max(GAIN_FLOOR, float(v)) for v in values), method)

    @property
    def new_state(self) -> float:
        """The state of a new optic (gain 1, or no overlayer)."""
        return 0.0 if self.law.kind == "overlayer" else 1.0

    def units(self, hours: float, absorbed_w: float, lit: bool) -> float:
        """How many of the law's ``per`` units pass in ``hours`` at ``absorbed_w``."""
        law = self.law
        if hours <= 0.0 or not lit:
            return 0.0
        if law.driver == "hours":
            amount = hours * 3600.0 / law.unit
            if law.kind == "overlayer" and law.reference_power_w:
                amount *= max(absorbed_w, 0.0) / law.reference_power_w
            return amount
        energy_j = max(absorbed_w, 0.0) * hours * 3600.0
        if law.driver == "fluence":
            return energy_j / (law.area_m2 or 1.0) / law.unit
        return energy_j / law.unit

    def advance(self, state: float, units: float) -> float:
        """The state after ``units`` more of the driver (never a better one)."""
        law = self.law
        if units <= 0.0:
            return state
        if law.kind == "linear":
            return max(GAIN_FLOOR, state - law.loss * units)
        if law.kind == "exponential":
            if law.loss >= 1.0:
                return GAIN_FLOOR
            return max(GAIN_FLOOR, state * math.exp(units * math.log1p(-law.loss)))
        grown = state + law.growth_m * units
        return min(grown, law.saturation_m) if law.saturation_m else grown

    def gain(self, state: float) -> float:
        """Gain relative to new, in (0, 1]."""
        if self.law.kind != "overlayer":
            return min(1.0, max(GAIN_FLOOR, state))
        grid, table = self.thickness_m, self.table
        if state >= grid[-1]:  # past the table (no saturation): extend the last slope in log
            slope = (math.log(table[-1]) - math.log(table[-2])) / (grid[-1] - grid[-2])
            return max(GAIN_FLOOR, table[-1] * math.exp(slope * (state - grid[-1])))
        return float(np.interp(state, grid, table))

    def restored(self, state: float, fraction: float, *, worst: bool = False) -> float:
        """The state after an action restoring ``fraction`` of new.

        The action never makes an optic worse (``max`` of the two), unless
        ``worst``: then the result is the restored state whatever came
        before (what the maintenance model assumes, a lower bound).
        """
        if self.law.kind != "overlayer":
            return fraction if worst else max(state, fraction)
        if fraction >= 1.0:
            return 0.0
        grid, table = self.thickness_m, self.table
        # thickness at which the gain falls to the fraction (table decreasing)
        at = grid[-1]
        for k in range(1, len(grid)):
            if table[k] <= fraction:
                g0, g1 = table[k - 1], table[k]
                share = 0.0 if g0 == g1 else (g0 - fraction) / (g0 - g1)
                at = grid[k - 1] + share * (grid[k] - grid[k - 1])
                break
        return at if worst else min(state, at)


def resolve_optics(spec: AgeingSpec, layout: Layout) -> dict[str, Law]:
    """The law of every aged element (an element's own law wins over its part's).

    Raises
    ------
    LayoutError
        A target that names no element or part of the layout, located.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.layout.yamlpos import load_yaml
    >>> from beamplan.layout.ageing import parse_ageing
    >>> lay = load_layout("layouts/two-bay.yaml")
    >>> spec = parse_ageing(load_yaml("layouts/ageing/two-bay.ageing.yaml"))
    >>> sorted(resolve_optics(spec, lay))[:3]
    ['a-fold', 'an-fold', 'an-if1']
    """
    parts = {e.part for e in layout.elements if e.part}
    ids = {e.id for e in layout.elements}
    problems = []
    out: dict[str, Law] = {}
    for law in spec.laws:
        if law.target not in ids and law.target not in parts:
            problems.append(Diagnostic(
                "error", "unknown-id", f"ageing: '{law.target}' is no element or part of "
                f"layout '{layout.name}'", law.location,
                did_you_mean(law.target, sorted(ids | parts)) or "name an element or a part"))
            continue
        for element in layout.elements:
            if element.part == law.target and element.id not in out:
                out[element.id] = law
    for law in spec.laws:
        if law.target in ids:
            out[law.target] = law
    if problems:
        raise LayoutError(problems)
    return dict(sorted(out.items()))
