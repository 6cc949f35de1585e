"""Reflectivity of thin-film stacks and periodic multilayer mirrors (e.g. Mo/Si).

The stack is solved with the recursion of L. G. Parratt, *Phys. Rev.* 95 (1954)
359 (equivalent to the transfer-matrix method), with the interface roughness
factor of L. Névot, P. Croce, *Rev. Phys. Appl.* 15 (1980) 761 applied at
every interface. Optical constants come from the Henke et al. (1993) tables via
:mod:`beamplan.physics.optics` (``n = 1 − δ + iβ``). Angles of incidence are
measured from the surface normal, in radians; lengths are in metres.

Real Mo/Si stacks are not ideal: silicide interlayers grow at each interface,
thicker where Mo is deposited on Si than where Si is deposited on Mo (a
four-layer period, A. E. Yakshin et al., *Physica B* 283 (2000) 143; about
0.4 nm at Si-on-Mo and up to 1.8 nm at Mo-on-Si by photoelectron spectroscopy,
*J. Appl. Phys.* 120 (2016), doi:10.1063/1.4962541). :class:`Interlayers`
models them as thin compound layers; :data:`MOSI_INTERLAYERS` holds the values
beamplan's layouts use by default. The stack itself (layers, interlayers, input
checks) is built in :mod:`beamplan.physics.multilayer_stack`; :class:`Interlayers`
and :data:`MOSI_INTERLAYERS` are re-exported here with the functions that take them.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import NDArray

from beamplan.physics.multilayer_stack import (
    MOSI_INTERLAYERS,
    Interlayers,
    PeriodicStack,
    check_inputs,
    polarised_reflectivity,
    require_all,
)
from beamplan.physics.optics import (
    optical_constants,
    optical_constants_spectrum,
)
from beamplan.physics.parratt import parratt_amplitudes

__all__ = [
    "MOSI_INTERLAYERS",
    "Interlayers",
    "MultilayerPeak",
    "MultilayerReflectivity",
    "bragg_period",
    "multilayer_peak",
    "multilayer_reflectivity",
    "parratt_amplitudes",
]


@dataclass(frozen=True)
class MultilayerReflectivity:
    """Result of :func:`multilayer_reflectivity`: the ``reflectivity`` for the requested
    polarisation, the complex amplitudes ``r_s`` and ``r_p``, and the ``method``."""

    reflectivity: float
    r_s: complex
    r_p: complex
    method: str

    @property
    def reflectivity_s(self) -> float:
        """``|r_s|²``."""
        return abs(self.r_s) ** 2

    @property
    def reflectivity_p(self) -> float:
        """``|r_p|²``."""
        return abs(self.r_p) ** 2


@dataclass(frozen=True)
class MultilayerPeak:
    """Result of :func:`multilayer_peak`: the peak reflectivity (parabolic refinement of
    the scan maximum) and where it is (the coordinate not scanned is the fixed input); the
    FWHM of a wavelength scan (``fwhm_m``) or angle scan (``fwhm_rad``), NaN for the other
    kind or when a half maximum lies outside the window; the ``scan`` and the ``method``."""

    peak_reflectivity: float
    peak_wavelength_m: float
    peak_incidence_rad: float
    fwhm_m: float
    fwhm_rad: float
    scan: str
    method: str


def multilayer_reflectivity(
    pair: tuple[str, str] = ("Mo", "Si"),
    period_m: float = 6.9e-9,
    gamma: float = 0.4,
    bilayers: int = 50,
    incidence_rad: float = 0.0,
    wavelength_m: float = 13.5e-9,
    *,
    capping: tuple[str, float] | None = None,
    substrate: str = "SiO2",
    roughness_m: float = 0.0,
    polarisation: float = 0.0,
    densities_g_cm3: Mapping[str, float] | None = None,
    interlayers: Interlayers | None = None,
) -> MultilayerReflectivity:
    """Reflectivity of a periodic multilayer mirror.

    Parameters
    ----------
    pair
        ``(absorber, spacer)`` formulas. The spacer lies on top of the absorber in
        each period: from the top, capping, spacer, absorber, ..., absorber, substrate.
    period_m, gamma, bilayers
        Period d (m); Γ, the fraction of d that is absorber; the number of periods N.
    incidence_rad, wavelength_m
        Angle of incidence from the normal (rad, in [0, π/2)); vacuum wavelength (m).
    capping
        ``(formula, thickness_m)`` of a top layer, or None.
    substrate
        Substrate formula (SiO2: fused silica, 2.2 g/cm³ by default).
    roughness_m
        rms roughness of every interface, metres (Névot–Croce).
    polarisation
        Degree of polarisation along s in [-1, 1] (+1 s, −1 p, 0 unpolarised).
    densities_g_cm3
        Densities by formula in g/cm³; others use tabulated values.
    interlayers
        Interdiffusion layers at every interface (:class:`Interlayers`), or None
        for sharp interfaces (the ideal stack).

    Returns
    -------
    MultilayerReflectivity

    Notes
    -----
    Parratt, *Phys. Rev.* 95 (1954) 359; Névot & Croce, *Rev. Phys. Appl.* 15
    (1980) 761; Henke et al., *At. Data Nucl. Data Tables* 54 (1993) 181.

    Examples
    --------
    >>> m = multilayer_reflectivity(wavelength_m=13.4e-9)
    >>> round(m.reflectivity, 3)
    0.726
    >>> round(multilayer_reflectivity(wavelength_m=13.4e-9, roughness_m=0.5e-9).reflectivity, 3)
    0.7
    >>> round(multilayer_reflectivity(interlayers=MOSI_INTERLAYERS).reflectivity, 3)
    0.713
    """
    design = PeriodicStack(pair, period_m, gamma, bilayers, capping, substrate, densities_g_cm3,
                       interlayers)
    check_inputs(incidence_rad, wavelength_m, polarisation, roughness_m)
    stack = design.layers(lambda f, rho: optical_constants(f, rho, wavelength_m))
    r_s, r_p = parratt_amplitudes(*stack, incidence_rad, wavelength_m, roughness_m=roughness_m)
    rs, rp = complex(r_s), complex(r_p)
    reflectivity = float(polarised_reflectivity(polarisation, rs, rp))
    return MultilayerReflectivity(reflectivity, rs, rp, design.method)


def _peak_and_width(x: NDArray[np.float64], y: NDArray[np.float64]) -> tuple[float, float, float]:
    """Peak (x, y) by parabolic refinement and FWHM by linear interpolation."""
    i = int(np.argmax(y))
    if i == 0 or i == len(y) - 1:
        raise ValueError("the reflectivity peak lies at the edge of the scan window; widen span")
    y0, y1, y2 = y[i - 1], y[i], y[i + 1]
    curvature = y0 - 2 * y1 + y2
    shift = 0.5 * (y0 - y2) / curvature if curvature < 0 else 0.0
    step = x[i + 1] - x[i]
    x_peak = float(x[i] + shift * step)
    y_peak = float(y1 - 0.25 * (y0 - y2) * shift)
    half = 0.5 * y_peak
    below = np.nonzero(y[:i] < half)[0]
    above = np.nonzero(y[i:] < half)[0]
    if below.size == 0 or above.size == 0:
        return x_peak, y_peak, math.nan
    a = int(below[-1])
    b = i + int(above[0])
    x_left = x[a] + (half - y[a]) * (x[a + 1] - x[a]) / (y[a + 1] - y[a])
    x_right = x[b - 1] + (half - y[b - 1]) * (x[b] - x[b - 1]) / (y[b] - y[b - 1])
    return x_peak, y_peak, float(x_right - x_left)


def multilayer_peak(
    pair: tuple[str, str] = ("Mo", "Si"),
    period_m: float = 6.9e-9,
    gamma: float = 0.4,
    bilayers: int = 50,
    incidence_rad: float = 0.0,
    wavelength_m: float = 13.5e-9,
    *,
    capping: tuple[str, float] | None = None,
    substrate: str = "SiO2",
    roughness_m: float = 0.0,
    polarisation: float = 0.0,
    densities_g_cm3: Mapping[str, float] | None = None,
    interlayers: Interlayers | None = None,
    scan: Literal["wavelength", "angle"] = "wavelength",
    span: float | None = None,
    points: int = 801,
) -> MultilayerPeak:
    """Peak reflectivity, its position and FWHM bandwidth of a periodic multilayer.

    Parameters
    ----------
    pair, period_m, gamma, bilayers, capping, substrate, roughness_m, polarisation
        As for :func:`multilayer_reflectivity`.
    densities_g_cm3, interlayers
        As for :func:`multilayer_reflectivity`.
    incidence_rad
        Fixed angle of incidence for a wavelength scan.
    wavelength_m
        Fixed wavelength for an angle scan; also where the mean index of the
        Bragg estimate is taken.
    scan
        ``"wavelength"`` or ``"angle"`` (angle of incidence from the normal).
    span
        Full width of the scan window, in m (wavelength) or rad (angle),
        centred on the first-order Bragg estimate ``λ = 2 d √(n̄² − sin² θ)``.
        Default: ``min(1, max(0.15, 4/N))`` times that wavelength, or 1 rad
        (angles may go negative: R is even in θ).
    points
        Number of scan points (numpy-vectorised over the scan).

    Returns
    -------
    MultilayerPeak

    Notes
    -----
    Each scan point is an exact Parratt calculation (Parratt, *Phys. Rev.* 95
    (1954) 359) with dispersive Henke et al. (1993) constants via periodictable.

    Examples
    --------
    >>> p = multilayer_peak()
    >>> round(p.peak_reflectivity, 3), round(p.peak_wavelength_m * 1e9, 2), round(p.fwhm_m * 1e9, 2)
    (0.737, 13.49, 0.6)
    """
    design = PeriodicStack(pair, period_m, gamma, bilayers, capping, substrate, densities_g_cm3,
                       interlayers)
    check_inputs(incidence_rad, wavelength_m, polarisation, roughness_m)
    if scan not in ("wavelength", "angle"):
        raise ValueError(f"scan must be 'wavelength' or 'angle', got {scan!r}")
    if not isinstance(points, int) or points < 5:
        raise ValueError(f"points must be an int >= 5, got {points!r}")
    c_abs = optical_constants(pair[0], (densities_g_cm3 or {}).get(pair[0]), wavelength_m)
    c_spa = optical_constants(pair[1], (densities_g_cm3 or {}).get(pair[1]), wavelength_m)
    n_mean = 1.0 - gamma * c_abs.real - (1.0 - gamma) * c_spa.real
    if scan == "wavelength":
        centre = 2.0 * period_m * math.sqrt(n_mean**2 - math.sin(incidence_rad) ** 2)
        width = span if span is not None else min(1.0, max(0.15, 4.0 / bilayers)) * centre
        if not math.isfinite(width) or not 0 < width < 2 * centre:
            raise ValueError(f"span must be in (0, 2 × {centre:.4g} m), got {width!r}")
        axis = lam = np.linspace(centre - width / 2, centre + width / 2, points)
        theta: NDArray[np.float64] = np.full_like(lam, incidence_rad)
    else:
        sin2 = n_mean**2 - (wavelength_m / (2.0 * period_m)) ** 2
        centre = math.asin(math.sqrt(min(max(sin2, 0.0), 1.0)))
        width = span if span is not None else 1.0
        if not math.isfinite(width) or width <= 0:
            raise ValueError(f"span must be > 0 rad, got {width!r}")
        lo, hi = max(centre - width / 2, -1.5), min(centre + width / 2, 1.5)
        axis = theta = np.linspace(lo, hi, points)
        lam = np.full_like(theta, wavelength_m)
    stack = design.layers(lambda f, rho: optical_constants_spectrum(f, rho, lam))
    r_s, r_p = parratt_amplitudes(*stack, theta, lam, roughness_m=roughness_m)
    x_peak, y_peak, fwhm = _peak_and_width(axis, polarised_reflectivity(polarisation, r_s, r_p))
    if scan == "wavelength":
        return MultilayerPeak(y_peak, x_peak, incidence_rad, fwhm, math.nan, scan, design.method)
    return MultilayerPeak(y_peak, wavelength_m, abs(x_peak), math.nan, fwhm, scan, design.method)


def bragg_period(
    pair: tuple[str, str] = ("Mo", "Si"),
    gamma: float = 0.4,
    incidence_rad: float = 0.0,
    wavelength_m: float = 13.5e-9,
    *,
    order: int = 1,
    densities_g_cm3: Mapping[str, float] | None = None,
) -> float:
    """The period that puts a multilayer's Bragg peak at a wavelength and angle.

    Parameters
    ----------
    pair, gamma, densities_g_cm3
        As for :func:`multilayer_reflectivity`.
    incidence_rad, wavelength_m
        The working angle of incidence (from the normal, rad) and wavelength (m).
    order
        The Bragg order m >= 1.

    Returns
    -------
    float
        ``d = m λ / (2 √(n̄² − sin² θ))`` in metres, with the mean index
        ``n̄ = 1 − (Γ δ_absorber + (1 − Γ) δ_spacer)``.

    Notes
    -----
    Bragg's law with refraction correction (e.g. E. Spiller, *Soft X-ray Optics*,
    SPIE 1994, ch. 7, from memory); δ from Henke et al. (1993). It ignores the
    phase shifts inside absorbing layers, so the exact peak of a real stack
    (:func:`multilayer_peak`) lies about 1 % away: scale the period by the ratio of
    the wanted to the computed peak wavelength to refine it.

    Examples
    --------
    >>> round(bragg_period() * 1e9, 3)
    6.967
    """
    check_inputs(incidence_rad, wavelength_m, 0.0, 0.0)
    require_all({"gamma must be in [0, 1]": 0.0 <= gamma <= 1.0,
              "order must be an int >= 1": isinstance(order, int) and order >= 1})
    dens = densities_g_cm3 or {}
    delta = (gamma * optical_constants(pair[0], dens.get(pair[0]), wavelength_m).real
             + (1.0 - gamma) * optical_constants(pair[1], dens.get(pair[1]), wavelength_m).real)
    root = math.sqrt((1.0 - delta) ** 2 - math.sin(incidence_rad) ** 2)
    return order * wavelength_m / (2.0 * root)
