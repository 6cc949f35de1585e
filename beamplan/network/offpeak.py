"""Warnings for multilayer mirrors used far from their own reflectivity peak.

A periodic multilayer reflects well only near its Bragg condition, in a band a
few percent wide. When a mirror (or a scanner's train of mirrors) works at an
angle or wavelength where it reflects less than half its peak, the layout is
probably wrong: the warning says where the stack peaks and which period would
put the peak at the working point.
"""

from __future__ import annotations

import math
from functools import lru_cache
from typing import TYPE_CHECKING

from beamplan.errors import Diagnostic, Location
from beamplan.layout.model import Layout, MirrorSpec, MultilayerSpec
from beamplan.network.derive import describe_multilayer, physics_interlayers, stack_reflectivity

if TYPE_CHECKING:
    from beamplan.physics.multilayer import MultilayerPeak

__all__ = ["OFF_PEAK_RATIO", "multilayer_warnings", "off_peak_message"]

#: Warn when R at the working point is below this fraction of the peak R over wavelength.
OFF_PEAK_RATIO = 0.5


def _peak(ml: MultilayerSpec, period_m: float, incidence_rad: float,
          wavelength_m: float) -> MultilayerPeak:
    from beamplan.physics.multilayer import multilayer_peak

    return multilayer_peak((ml.absorber, ml.spacer), period_m, ml.absorber_fraction,
                           ml.periods, incidence_rad, wavelength_m,
                           capping=(ml.cap, ml.cap_thickness_m) if ml.cap else None,
                           substrate=ml.substrate, roughness_m=ml.roughness_m,
                           interlayers=physics_interlayers(ml), points=401)


@lru_cache(maxsize=256)
def off_peak_message(ml: MultilayerSpec, incidence_rad: float, wavelength_m: float) -> str:
    """Why ``ml`` is far from its peak at this angle and wavelength, or ``""``.

    The peak is found by a wavelength scan at the working angle (Parratt
    recursion). The suggested period comes from Bragg's law with refraction
    correction, λ = 2 d √(n̄² − sin² θ) (first order, n̄ from the Henke tables),
    refined by one more Parratt scan; the same law gives the angle at which the
    stack as given would peak at the working wavelength.

    Examples
    --------
    >>> off_peak_message(MultilayerSpec(), 0.0, 13.5e-9)
    ''
    >>> print(off_peak_message(MultilayerSpec(), math.radians(30), 13.5e-9))  # doctest: +ELLIPSIS
    it peaks at 11.75 nm at 30.0 deg incidence (R 0.224), but works at 13.50 nm (R 0.002, ...
    """
    from beamplan.physics.multilayer import bragg_period

    working = stack_reflectivity(ml, incidence_rad, wavelength_m, 0.0)
    try:
        peak = _peak(ml, ml.period_m, incidence_rad, wavelength_m)
        best = peak.peak_reflectivity
        if best <= 0 or working >= OFF_PEAK_RATIO * best:
            return ""
        bragg = bragg_period((ml.absorber, ml.spacer), ml.absorber_fraction, incidence_rad,
                             wavelength_m)
        period = bragg * wavelength_m / _peak(ml, bragg, incidence_rad,
                                              wavelength_m).peak_wavelength_m
    except ValueError:
        return ""
    sin2 = math.sin(incidence_rad) ** 2
    n2 = (wavelength_m / (2 * bragg)) ** 2 + sin2  # n̄² at the working wavelength
    at = n2 - (wavelength_m / (2 * ml.period_m)) ** 2
    angle = (f"; as given, it would peak at {wavelength_m * 1e9:.2f} nm near "
             f"{math.degrees(math.asin(math.sqrt(at))):.1f} deg incidence"
             if 0 <= at < 1 else "")
    return (f"it peaks at {peak.peak_wavelength_m * 1e9:.2f} nm at "
            f"{math.degrees(incidence_rad):.1f} deg incidence (R {best:.3f}), but works at "
            f"{wavelength_m * 1e9:.2f} nm (R {working:.3f}, {working / best:.0%} of its peak). "
            f"A period of {period * 1e9:.3f} nm would put the peak at the working point "
            f"(Bragg's law with refraction correction, refined by the Parratt "
            f"recursion){angle}")


def multilayer_warnings(layout: Layout) -> list[Diagnostic]:
    """Located warnings for every multilayer used far from its own peak.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> multilayer_warnings(load_layout("layouts/coated-line.yaml"))
    []
    """
    out: list[Diagnostic] = []

    def check(what: str, ml: MultilayerSpec, angle: float, location: Location) -> None:
        message = off_peak_message(ml, angle, layout.wavelength_m)
        if message:
            out.append(Diagnostic("warning", "off-peak-multilayer",
                                  f"{what}: {describe_multilayer(ml)}: {message}", location,
                                  "check the multilayer's period and angle of incidence"))

    for e in layout.elements:
        if isinstance(e, MirrorSpec) and e.reflectivity is None and e.multilayer is not None \
                and e.incidence_rad is not None:
            check(f"mirror '{e.id}'", e.multilayer, e.incidence_rad, e.location)
    for sc in layout.scanners:
        demand = sc.demand
        if demand is not None and demand.train_multilayer is not None:
            check(f"scanner '{sc.id}' mirror_multilayer", demand.train_multilayer,
                  demand.train_incidence_rad, sc.location)
    return out
