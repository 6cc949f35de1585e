"""Planar-undulator resonance: the wavelength an FEL source radiates on axis.

Method: the on-axis resonance condition of a planar undulator::

    λ_n = λ_u / (2 n γ²) × (1 + K² / 2),    K = e B λ_u / (2π m_e c),    γ = E / (m_e c²)

with λ_u the undulator period, B the peak on-axis field, E the total electron energy
and n an odd harmonic (even harmonics vanish on axis). ``K ≈ 0.934 × B[T] × λ_u[cm]``.
The form drops terms of order 1/γ² (``1/(1 − β) ≈ 2γ²``), negligible at GeV energies.
Source: X-ray Data Booklet, section 2.1; any synchrotron-radiation textbook.
Whether a declared source wavelength is reachable is checked in
:mod:`beamplan.physics.resonance`.

The electron mass is CODATA 2022 (``scipy.constants`` since scipy 1.15); it differs
from CODATA 2018 by 1.4e-9 relative. SI units inside: m, T, eV for energies.
"""

from __future__ import annotations

import math

from .photons import ELEMENTARY_CHARGE_C, SPEED_OF_LIGHT_M_S

__all__ = [
    "ELECTRON_MASS_KG",
    "ELECTRON_REST_ENERGY_EV",
    "K_PER_TESLA_CM",
    "ResonanceError",
    "electron_energy_for_wavelength_ev",
    "k_for_wavelength",
    "lorentz_gamma",
    "peak_field_for_k_t",
    "resonant_wavelength_m",
    "undulator_k",
]

ELECTRON_MASS_KG: float = 9.1093837139e-31
"""Electron rest mass m_e in kg (CODATA 2022)."""

ELECTRON_REST_ENERGY_EV: float = ELECTRON_MASS_KG * SPEED_OF_LIGHT_M_S**2 / ELEMENTARY_CHARGE_C
"""Electron rest energy m_e c² in eV (about 510998.95 eV)."""

K_PER_TESLA_CM: float = (
    ELEMENTARY_CHARGE_C / (2.0 * math.pi * ELECTRON_MASS_KG * SPEED_OF_LIGHT_M_S) * 1e-2
)
"""Exact coefficient of K = coefficient × B[T] × λ_u[cm], about 0.9337 (textbook: 0.934)."""


_K_SQUARED_ROUNDING = 1e-12  # K² this far below 0 is rounding at K = 0, not a miss


class ResonanceError(ValueError):
    """A wavelength the undulator cannot reach: it would need K² < 0."""


def _require_positive(name: str, value: float) -> None:
    if not (value > 0.0 and math.isfinite(value)):
        raise ValueError(f"{name} must be positive and finite, got {value!r}")


def _require_harmonic(harmonic: int) -> None:
    if isinstance(harmonic, bool) or not isinstance(harmonic, int) or harmonic < 1:
        raise ValueError(f"harmonic must be a positive integer, got {harmonic!r}")
    if harmonic % 2 == 0:
        raise ValueError(f"a planar undulator has no on-axis emission at even harmonic {harmonic}")


def lorentz_gamma(electron_energy_ev: float) -> float:
    """Lorentz factor γ = E / (m_e c²) of an electron of total energy E.

    Method: relativistic energy, CODATA electron rest energy.

    Parameters
    ----------
    electron_energy_ev : float
        Total electron energy in eV, >= m_e c² (the kinetic energy plus 511 keV).

    Returns
    -------
    float
        γ >= 1.

    Examples
    --------
    >>> round(lorentz_gamma(1e9), 2)
    1956.95
    """
    _require_positive("electron_energy_ev", electron_energy_ev)
    if electron_energy_ev < ELECTRON_REST_ENERGY_EV:
        raise ValueError(
            f"electron_energy_ev {electron_energy_ev!r} is below the rest energy "
            f"{ELECTRON_REST_ENERGY_EV:.2f} eV; pass the total energy"
        )
    return electron_energy_ev / ELECTRON_REST_ENERGY_EV


def undulator_k(peak_field_t: float, period_m: float) -> float:
    """Undulator deflection parameter K = e B λ_u / (2π m_e c).

    Method: exact form; equals 0.934 × B[T] × λ_u[cm]. Source: X-ray Data Booklet,
    section 2.1.

    Parameters
    ----------
    peak_field_t : float
        Peak on-axis magnetic field in T, >= 0.
    period_m : float
        Undulator period in m, > 0.

    Returns
    -------
    float
        K (dimensionless).

    Examples
    --------
    >>> round(undulator_k(1.0, 0.028), 4)
    2.6144
    """
    if not (peak_field_t >= 0.0 and math.isfinite(peak_field_t)):
        raise ValueError(f"peak_field_t must be non-negative and finite, got {peak_field_t!r}")
    _require_positive("period_m", period_m)
    return K_PER_TESLA_CM * peak_field_t * period_m * 100.0


def peak_field_for_k_t(k: float, period_m: float) -> float:
    """Peak field needed for a K, B = 2π m_e c K / (e λ_u) (inverse of :func:`undulator_k`).

    Method: exact form of K; source: X-ray Data Booklet, section 2.1.

    Parameters
    ----------
    k : float
        Deflection parameter K, >= 0.
    period_m : float
        Undulator period in m, > 0.

    Returns
    -------
    float
        Peak field in T.

    Examples
    --------
    >>> round(peak_field_for_k_t(2.6144, 0.028), 3)
    1.0
    """
    if not (k >= 0.0 and math.isfinite(k)):
        raise ValueError(f"k must be non-negative and finite, got {k!r}")
    _require_positive("period_m", period_m)
    return k / (K_PER_TESLA_CM * period_m * 100.0)


def resonant_wavelength_m(
    electron_energy_ev: float, period_m: float, k: float, harmonic: int = 1
) -> float:
    """On-axis resonant wavelength λ_n = λ_u / (2 n γ²) × (1 + K²/2).

    Method: planar-undulator resonance condition. Source: X-ray Data Booklet,
    section 2.1; any synchrotron-radiation textbook.

    Parameters
    ----------
    electron_energy_ev : float
        Total electron energy in eV.
    period_m : float
        Undulator period λ_u in m, > 0.
    k : float
        Deflection parameter K, >= 0.
    harmonic : int, optional
        Odd harmonic number n, default 1.

    Returns
    -------
    float
        Wavelength in m.

    Examples
    --------
    >>> round(resonant_wavelength_m(1e9, 0.028, 2.32) * 1e9, 3)  # nm
    13.494
    """
    _require_positive("period_m", period_m)
    if not (k >= 0.0 and math.isfinite(k)):
        raise ValueError(f"k must be non-negative and finite, got {k!r}")
    _require_harmonic(harmonic)
    gamma = lorentz_gamma(electron_energy_ev)
    return period_m / (2.0 * harmonic * gamma**2) * (1.0 + k**2 / 2.0)


def k_for_wavelength(
    wavelength_m: float, electron_energy_ev: float, period_m: float, harmonic: int = 1
) -> float:
    """K needed to radiate ``wavelength_m``: K = √(2 (2 n γ² λ / λ_u − 1)).

    Method: the resonance condition solved for K. Source: X-ray Data Booklet,
    section 2.1.

    Parameters
    ----------
    wavelength_m : float
        Target wavelength in m, > 0.
    electron_energy_ev : float
        Total electron energy in eV.
    period_m : float
        Undulator period in m, > 0.
    harmonic : int, optional
        Odd harmonic number n, default 1.

    Returns
    -------
    float
        K >= 0.

    Raises
    ------
    ResonanceError
        If the target is shorter than the K = 0 resonance λ_u / (2 n γ²) (K² < 0):
        lower the energy or lengthen the period. K² within 1e-12 below 0 is
        floating-point rounding and gives K = 0.

    Examples
    --------
    >>> round(k_for_wavelength(13.5e-9, 1e9, 0.028), 4)
    2.3207
    """
    _require_positive("wavelength_m", wavelength_m)
    _require_positive("period_m", period_m)
    _require_harmonic(harmonic)
    gamma = lorentz_gamma(electron_energy_ev)
    k_squared = 2.0 * (2.0 * harmonic * gamma**2 * wavelength_m / period_m - 1.0)
    if k_squared < -_K_SQUARED_ROUNDING:
        shortest_m = period_m / (2.0 * harmonic * gamma**2)
        raise ResonanceError(
            f"{wavelength_m * 1e9:.4g} nm is unreachable at {electron_energy_ev / 1e9:.4g} GeV "
            f"with a {period_m * 1e3:.4g} mm period (harmonic {harmonic}): even K = 0 "
            f"radiates {shortest_m * 1e9:.4g} nm; K² would be {k_squared:.4g}"
        )
    return math.sqrt(max(k_squared, 0.0))


def electron_energy_for_wavelength_ev(
    wavelength_m: float, period_m: float, k: float, harmonic: int = 1
) -> float:
    """Total electron energy that radiates ``wavelength_m``: γ = √(λ_u (1 + K²/2) / (2 n λ)).

    Method: the resonance condition solved for γ, E = γ m_e c². Source: X-ray Data
    Booklet, section 2.1.

    Parameters
    ----------
    wavelength_m : float
        Target wavelength in m, > 0.
    period_m : float
        Undulator period in m, > 0.
    k : float
        Deflection parameter K, >= 0.
    harmonic : int, optional
        Odd harmonic number n, default 1.

    Returns
    -------
    float
        Total electron energy in eV.

    Examples
    --------
    >>> round(electron_energy_for_wavelength_ev(13.5e-9, 0.028, 2.3207) / 1e9, 4)  # GeV
    1.0
    """
    _require_positive("wavelength_m", wavelength_m)
    _require_positive("period_m", period_m)
    if not (k >= 0.0 and math.isfinite(k)):
        raise ValueError(f"k must be non-negative and finite, got {k!r}")
    _require_harmonic(harmonic)
    gamma = math.sqrt(period_m * (1.0 + k**2 / 2.0) / (2.0 * harmonic * wavelength_m))
    return gamma * ELECTRON_REST_ENERGY_EV
