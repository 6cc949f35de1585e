"""Planar-undulator resonance: the wavelength an FEL source radiates on axis.

Method: the on-axis resonance condition of a planar undulator::

    λ_n = λ_u / (2 n γ²) × (1 + K² / 2),    K = e B λ_u / (2π m_e c),    γ = E / (m_e c²)

with λ_u the undulator period, B the peak on-axis field, E the total electron energy
and n an odd harmonic (even harmonics vanish on axis). ``K ≈ 0.934 × B[T] × λ_u[cm]``.
The form drops terms of order 1/γ² (``1/(1 − β) ≈ 2γ²``), negligible at GeV energies.
Source: X-ray Data Booklet, section 2.1; any synchrotron-radiation textbook.

The electron mass is CODATA 2022 (``scipy.constants`` since scipy 1.15); it differs
from CODATA 2018 by 1.4e-9 relative. SI units inside: m, T, eV for energies.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .photons import ELEMENTARY_CHARGE_C, SPEED_OF_LIGHT_M_S

__all__ = [
    "ELECTRON_MASS_KG",
    "ELECTRON_REST_ENERGY_EV",
    "K_PER_TESLA_CM",
    "ResonanceCheck",
    "ResonanceError",
    "electron_energy_for_wavelength_ev",
    "k_for_wavelength",
    "lorentz_gamma",
    "peak_field_for_k_t",
    "resonance_check",
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


@dataclass(frozen=True)
class ResonanceCheck:
    """Outcome of :func:`resonance_check`.

    Attributes
    ----------
    reachable : bool
        Whether the declared wavelength is reachable within the tolerance.
    wavelength_m : float
        The declared wavelength.
    resonant_wavelength_m : float
        Resonance at the given K (at K_max when ``tunable``).
    relative_error : float
        resonant / declared − 1.
    k : float
        The given K (or the one from the given peak field).
    k_required : float or None
        K that hits the declared wavelength exactly; ``None`` if none does (K² < 0).
    shortest_wavelength_m : float
        Resonance at K = 0, the shortest this beam and period can radiate.
    message : str
        One-line explanation for reports.
    """

    reachable: bool
    wavelength_m: float
    resonant_wavelength_m: float
    relative_error: float
    k: float
    k_required: float | None
    shortest_wavelength_m: float
    message: str


def resonance_check(
    wavelength_m: float,
    electron_energy_ev: float,
    period_m: float,
    *,
    k: float | None = None,
    peak_field_t: float | None = None,
    tolerance: float = 0.01,
    harmonic: int = 1,
    tunable: bool = False,
) -> ResonanceCheck:
    """Check that a declared source wavelength matches its undulator and beam.

    Method: planar-undulator resonance (X-ray Data Booklet, section 2.1). With a fixed
    K, the declared wavelength is reachable when ``|λ_res / λ − 1| <= tolerance``.
    With ``tunable=True`` the given K is the largest the gap allows, and it is
    reachable when λ lies in ``[λ(K=0) (1 − tol), λ(K) (1 + tol)]``. The default
    tolerance of 1 % allows for declared values rounded to 2-3 significant figures
    (common practice, no source).

    Parameters
    ----------
    wavelength_m : float
        Declared wavelength in m.
    electron_energy_ev : float
        Total electron energy in eV.
    period_m : float
        Undulator period in m.
    k, peak_field_t : float, optional
        Give exactly one: the deflection parameter or the peak field in T.
    tolerance : float, optional
        Relative tolerance on the wavelength, >= 0, default 0.01.
    harmonic : int, optional
        Odd harmonic number, default 1.
    tunable : bool, optional
        Treat K as a maximum (variable gap), default False.

    Returns
    -------
    ResonanceCheck
        Whether it is reachable, the resonance, the K required and a message.

    Examples
    --------
    >>> r = resonance_check(13.5e-9, 1e9, 0.028, k=2.32)
    >>> r.reachable, round(r.k_required, 3)
    (True, 2.321)
    >>> resonance_check(13.5e-9, 1e9, 0.028, peak_field_t=0.5).reachable
    False
    >>> resonance_check(13.5e-9, 1e9, 0.028, peak_field_t=1.0, tunable=True).reachable
    True
    """
    if k is not None and peak_field_t is None:
        k_value = k
    elif peak_field_t is not None and k is None:
        k_value = undulator_k(peak_field_t, period_m)
    else:
        raise ValueError("give exactly one of k and peak_field_t")
    if not (tolerance >= 0.0 and math.isfinite(tolerance)):
        raise ValueError(f"tolerance must be non-negative and finite, got {tolerance!r}")
    _require_positive("wavelength_m", wavelength_m)
    resonant_m = resonant_wavelength_m(electron_energy_ev, period_m, k_value, harmonic)
    shortest_m = resonant_wavelength_m(electron_energy_ev, period_m, 0.0, harmonic)
    try:
        k_required: float | None = k_for_wavelength(
            wavelength_m, electron_energy_ev, period_m, harmonic
        )
    except ResonanceError:
        k_required = None
    relative_error = resonant_m / wavelength_m - 1.0
    if tunable:
        reachable = shortest_m * (1.0 - tolerance) <= wavelength_m <= resonant_m * (1.0 + tolerance)
        span = f"tunable {shortest_m * 1e9:.4g}-{resonant_m * 1e9:.4g} nm (K <= {k_value:.4g})"
    else:
        reachable = abs(relative_error) <= tolerance
        span = f"resonance {resonant_m * 1e9:.4g} nm at K = {k_value:.4g} ({relative_error:+.2%})"
    needed = "no K reaches it" if k_required is None else f"K needed {k_required:.4g}"
    verdict = "reachable" if reachable else "not reachable"
    message = f"{wavelength_m * 1e9:.4g} nm is {verdict}: {span}; {needed}"
    return ResonanceCheck(
        reachable=reachable,
        wavelength_m=wavelength_m,
        resonant_wavelength_m=resonant_m,
        relative_error=relative_error,
        k=k_value,
        k_required=k_required,
        shortest_wavelength_m=shortest_m,
        message=message,
    )
