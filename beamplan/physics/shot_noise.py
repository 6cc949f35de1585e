"""Shot noise in EUV resist: absorbed photons, their Poisson noise, the stochastic dose floor.

Method: Beer–Lambert absorption in the resist film and Poisson statistics of the
absorbed photon count (common practice; each function names its method).
Photon energies come from :mod:`beamplan.physics.photons` (CODATA constants).
SI inside: wavelengths in m, doses in J/m², areas in m².
"""

from __future__ import annotations

import math

from beamplan.physics.photons import photon_energy_j, photons_per_area_m2

__all__ = [
    "absorbed_fraction",
    "absorbed_photons",
    "relative_shot_noise",
    "stochastic_dose_floor_j_m2",
]


def _require_positive(name: str, value: float) -> None:
    # ``not value > 0`` also rejects NaN.
    if not value > 0.0 or math.isinf(value):
        raise ValueError(f"{name} must be a positive finite number, got {value!r}")


def _require_non_negative(name: str, value: float) -> None:
    if not value >= 0.0 or math.isinf(value):
        raise ValueError(f"{name} must be a non-negative finite number, got {value!r}")


def _require_fraction(name: str, value: float) -> None:
    if not 0.0 < value <= 1.0:
        raise ValueError(f"{name} must be in (0, 1], got {value!r}")


def absorbed_fraction(absorption_coefficient_per_m: float, thickness_m: float) -> float:
    """Fraction of the incident light a resist film absorbs, 1 − exp(−α t).

    Method: Beer–Lambert attenuation on a single pass, without reflections from the
    substrate or the film's surfaces. ``α`` is the natural-log (Napierian)
    absorption coefficient, not the base-10 absorbance coefficient.

    Parameters
    ----------
    absorption_coefficient_per_m : float
        Absorption coefficient α in 1/m (5 µm⁻¹ = 5e6 m⁻¹), >= 0.
    thickness_m : float
        Film thickness in m, >= 0.

    Returns
    -------
    float
        Absorbed fraction in [0, 1).

    Examples
    --------
    >>> round(absorbed_fraction(5e6, 40e-9), 4)
    0.1813
    """
    _require_non_negative("absorption_coefficient_per_m", absorption_coefficient_per_m)
    _require_non_negative("thickness_m", thickness_m)
    return -math.expm1(-absorption_coefficient_per_m * thickness_m)


def absorbed_photons(
    dose_j_m2: float, wavelength_m: float, area_m2: float, fraction_absorbed: float
) -> float:
    """Mean number of photons absorbed in an area, N = D A f / E_photon.

    Method: photon counting, dose over Planck photon energy times area times the
    absorbed fraction (e.g. from :func:`absorbed_fraction`).

    Parameters
    ----------
    dose_j_m2 : float
        Incident dose in J/m², >= 0.
    wavelength_m : float
        Vacuum wavelength in m, > 0.
    area_m2 : float
        Area in m², > 0 (e.g. a critical area of a few nm by a few nm).
    fraction_absorbed : float
        Absorbed fraction in (0, 1].

    Returns
    -------
    float
        Mean absorbed photon count (the Poisson mean).

    Examples
    --------
    >>> f = absorbed_fraction(5e6, 40e-9)
    >>> round(absorbed_photons(300.0, 13.5e-9, (10e-9) ** 2, f), 1)
    369.6
    """
    _require_positive("area_m2", area_m2)
    _require_fraction("fraction_absorbed", fraction_absorbed)
    return photons_per_area_m2(dose_j_m2, wavelength_m) * area_m2 * fraction_absorbed


def relative_shot_noise(photon_count: float) -> float:
    """Relative standard deviation of a Poisson photon count, σ/N = 1/√N.

    Method: Poisson statistics (variance equals mean).

    Parameters
    ----------
    photon_count : float
        Mean photon count N, > 0.

    Returns
    -------
    float
        Relative noise 1/√N (dimensionless).

    Raises
    ------
    ValueError
        If the count is not positive.

    Examples
    --------
    >>> relative_shot_noise(400.0)
    0.05
    """
    _require_positive("photon_count", photon_count)
    return 1.0 / math.sqrt(photon_count)


def stochastic_dose_floor_j_m2(
    wavelength_m: float,
    critical_area_m2: float,
    fraction_absorbed: float,
    relative_noise_budget: float,
) -> float:
    """Least dose keeping the absorbed-photon shot noise within a budget.

    Method: require 1/√N <= σ_rel with N = D A f / E_photon (Poisson), which gives
    D_min = E_photon / (A × f × σ_rel²). Common practice; only photon shot noise is
    counted (no acid, quencher or development noise).

    Parameters
    ----------
    wavelength_m : float
        Vacuum wavelength in m, > 0.
    critical_area_m2 : float
        Critical area A in m², > 0.
    fraction_absorbed : float
        Resist absorbed fraction f in (0, 1].
    relative_noise_budget : float
        Tolerated relative noise σ_rel, > 0 (e.g. 0.05 for 5 %).

    Returns
    -------
    float
        Dose floor in J/m².

    Examples
    --------
    >>> f = absorbed_fraction(5e6, 40e-9)
    >>> d = stochastic_dose_floor_j_m2(13.5e-9, (10e-9) ** 2, f, 0.05)
    >>> round(d / 10.0, 2)  # mJ/cm² (1 mJ/cm² = 10 J/m²)
    32.47
    """
    _require_positive("critical_area_m2", critical_area_m2)
    _require_fraction("fraction_absorbed", fraction_absorbed)
    _require_positive("relative_noise_budget", relative_noise_budget)
    return photon_energy_j(wavelength_m) / (
        critical_area_m2 * fraction_absorbed * relative_noise_budget**2
    )
