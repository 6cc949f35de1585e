"""The periodic multilayer stack: its layers, interlayers and the checks on its inputs.

A stack [spacer on absorber] × N (e.g. Si on Mo), optionally capped, on a
substrate, with optional interdiffusion layers at every interface
(:class:`Interlayers`; the values and their sources are in
:mod:`beamplan.physics.multilayer`'s docstring), turned into the indices and
thicknesses that :func:`beamplan.physics.parratt.parratt_amplitudes` solves.
Lengths in metres, angles in radians, densities in g/cm³.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from beamplan.physics.optics import HENKE_SOURCE, NEVOT_CROCE_SOURCE
from beamplan.physics.parratt import PARRATT_SOURCE

__all__ = ["MOSI_INTERLAYERS", "Interlayers", "PeriodicStack", "check_inputs",
           "polarised_reflectivity", "require_all"]


def require_all(checks: Mapping[str, bool]) -> None:
    """Raise one ValueError naming every failed check.

    Examples
    --------
    >>> require_all({"a must be > 0": True})
    >>> require_all({"a must be > 0": False, "b must be < 1": True, "c must be odd": False})
    Traceback (most recent call last):
    ...
    ValueError: a must be > 0; c must be odd
    """
    bad = [message for message, ok in checks.items() if not ok]
    if bad:
        raise ValueError("; ".join(bad))


@dataclass(frozen=True)
class Interlayers:
    """Interdiffusion layers at the two interfaces of every period of a periodic stack.

    ``absorber_on_spacer_m`` is the layer where the absorber (Mo) was deposited on
    the spacer (Si), ``spacer_on_absorber_m`` where the spacer was deposited on the
    absorber. The period and the centre of every interface stay where they are:
    each interlayer takes half its thickness from each of its two neighbours. A
    zero thickness leaves that interface sharp (the layer is not added at all).

    Examples
    --------
    >>> Interlayers().material, Interlayers().absorber_on_spacer_m
    ('MoSi2', 1e-09)
    """

    material: str = "MoSi2"
    absorber_on_spacer_m: float = 1.0e-9
    spacer_on_absorber_m: float = 0.5e-9
    density_g_cm3: float | None = 6.2

    def __post_init__(self) -> None:
        a, b = self.absorber_on_spacer_m, self.spacer_on_absorber_m
        rho = self.density_g_cm3
        require_all(
            {
                "interlayer thicknesses must be finite and >= 0 m": all(
                    math.isfinite(v) and v >= 0 for v in (a, b)),
                "interlayer density must be > 0 g/cm³": rho is None or (
                    math.isfinite(rho) and rho > 0),
                "interlayer material must be a formula": bool(self.material.strip()),
            }
        )


#: MoSi2 interlayers of a sputtered Mo/Si stack: 1.0 nm where Mo grows on Si, 0.5 nm where
#: Si grows on Mo, at 6.2 g/cm³ (bulk MoSi2 is about 6.24 g/cm³; thicknesses from memory of
#: TEM studies, inside the published 0.4 nm and 1.8 nm of doi:10.1063/1.4962541).
MOSI_INTERLAYERS = Interlayers()


def check_inputs(incidence_rad: float, wavelength_m: float, polarisation: float, sigma: float
                 ) -> None:
    """Refuse an angle, wavelength, polarisation or roughness out of range, all at once.

    Examples
    --------
    >>> check_inputs(0.1, 13.5e-9, 0.0, 0.0)
    >>> check_inputs(2.0, 13.5e-9, 0.0, -1e-9)
    Traceback (most recent call last):
    ...
    ValueError: incidence_rad must be in [0, π/2); roughness_m must be >= 0
    """
    require_all(
        {
            "incidence_rad must be in [0, π/2)": 0.0 <= incidence_rad < math.pi / 2,
            "wavelength_m must be > 0": math.isfinite(wavelength_m) and wavelength_m > 0,
            "polarisation must be in [-1, 1]": -1.0 <= polarisation <= 1.0,
            "roughness_m must be >= 0": math.isfinite(sigma) and sigma >= 0,
        }
    )


def polarised_reflectivity(polarisation: float, r_s: Any, r_p: Any) -> Any:
    """``(1 + P)/2 |r_s|² + (1 − P)/2 |r_p|²``: the reflectivity for an s-degree ``P``.

    ``P = +1`` is s-polarised, ``-1`` p-polarised, 0 unpolarised (the
    convention of :func:`beamplan.physics.optics.mirror_reflectivity`); works
    on arrays of amplitudes too.

    Examples
    --------
    >>> float(polarised_reflectivity(0.0, 0.8, 0.6)), float(polarised_reflectivity(1.0, 0.5, 0.6))
    (0.5, 0.25)
    """
    return 0.5 * (1 + polarisation) * np.abs(r_s) ** 2 + 0.5 * (1 - polarisation) * np.abs(r_p) ** 2


@dataclass(frozen=True)
class PeriodicStack:
    """A periodic stack [spacer on absorber] × N, optionally capped, on a substrate.

    Examples
    --------
    >>> stack = PeriodicStack(("Mo", "Si"), 7e-9, 0.4, 2, ("Ru", 2e-9), "SiO2", None)
    >>> n, d, n_sub = stack.layers(lambda formula, density: 0.01 + 0.001j)
    >>> len(n), [round(t * 1e9, 2) for t in d]
    (5, [2.0, 4.2, 2.8, 4.2, 2.8])
    """

    pair: tuple[str, str]
    period_m: float
    gamma: float
    bilayers: int
    capping: tuple[str, float] | None
    substrate: str
    densities: Mapping[str, float] | None
    interlayers: Interlayers | None = None

    def __post_init__(self) -> None:
        cap_m = 0.0 if self.capping is None else self.capping[1]
        ok_n = isinstance(self.bilayers, int) and self.bilayers >= 1
        require_all(
            {
                "period_m must be > 0": math.isfinite(self.period_m) and self.period_m > 0,
                "gamma must be in [0, 1]": 0.0 <= self.gamma <= 1.0,
                "bilayers must be an int >= 1": ok_n,
                "capping thickness must be >= 0 m": math.isfinite(cap_m) and cap_m >= 0,
            }
        )
        room = min(self.gamma, 1.0 - self.gamma) * self.period_m
        if self.interlayers is not None and self.taken_m > room:
            raise ValueError(
                f"interlayers of {self.interlayers.absorber_on_spacer_m * 1e9:.3g} nm and "
                f"{self.interlayers.spacer_on_absorber_m * 1e9:.3g} nm take "
                f"{self.taken_m * 1e9:.3g} nm from each layer, more than the thinner layer "
                f"({room * 1e9:.3g} nm) holds")

    @property
    def taken_m(self) -> float:
        """Thickness each absorber and spacer layer gives up to its two interlayers."""
        il = self.interlayers
        return 0.0 if il is None else 0.5 * (il.absorber_on_spacer_m + il.spacer_on_absorber_m)

    def layers(
        self, index: Callable[[str, float | None], Any]
    ) -> tuple[list[Any], list[float], Any]:
        """Indices (top first), thicknesses and substrate index, from ``index → δ + iβ``."""
        dens = dict(self.densities or {})
        cache: dict[str, Any] = {}

        def n_of(formula: str) -> Any:
            if formula not in cache:
                c = index(formula, dens.get(formula))
                cache[formula] = 1.0 - np.real(c) + 1j * np.imag(c)  # n = 1 − δ + iβ
            return cache[formula]

        n_layers = [n_of(self.capping[0])] if self.capping else []
        thickness = [float(self.capping[1])] if self.capping else []
        il = self.interlayers
        if il is not None and il.density_g_cm3 is not None:
            dens.setdefault(il.material, il.density_g_cm3)
        spacer_m = (1.0 - self.gamma) * self.period_m - self.taken_m
        absorber_m = self.gamma * self.period_m - self.taken_m
        for i in range(self.bilayers):
            # From the top: spacer, [spacer-on-absorber], absorber, [absorber-on-spacer].
            n_layers.append(n_of(self.pair[1]))
            thickness.append(spacer_m)
            if il is not None and il.spacer_on_absorber_m > 0:
                n_layers.append(n_of(il.material))
                thickness.append(il.spacer_on_absorber_m)
            n_layers.append(n_of(self.pair[0]))
            thickness.append(absorber_m)
            if il is not None and il.absorber_on_spacer_m > 0 and i < self.bilayers - 1:
                n_layers.append(n_of(il.material))
                thickness.append(il.absorber_on_spacer_m)
        return n_layers, thickness, n_of(self.substrate)

    @property
    def method(self) -> str:
        il = self.interlayers
        inter = "" if il is None else (
            f", {il.material} interlayers {il.absorber_on_spacer_m * 1e9:.3g} nm "
            f"({self.pair[0]} on {self.pair[1]}) and {il.spacer_on_absorber_m * 1e9:.3g} nm "
            f"({self.pair[1]} on {self.pair[0]})")
        return (
            f"Parratt recursion ({PARRATT_SOURCE}) with Névot–Croce roughness "
            f"({NEVOT_CROCE_SOURCE}) for [{self.pair[1]}/{self.pair[0]}]×{self.bilayers}, "
            f"period {self.period_m * 1e9:.4g} nm, Γ = {self.gamma:.3g}{inter}; "
            f"δ, β: {HENKE_SOURCE}"
        )
