"""Photon counting for EUV exposure: photon energy, flux, dose in photons and shot noise.

All quantities are SI inside: wavelengths in m, energies in J (or eV where the name
says ``_ev``), doses in J/m² (1 mJ/cm² = 10 J/m²), areas in m².

The physical constants are hard-coded from CODATA 2022, the set that
``scipy.constants`` ships since scipy 1.15 (h, c and e are exact SI values, identical
in CODATA 2018 and 2022). They are not imported from ``scipy.constants`` because
that import pulls in numpy and scipy's array-API layer (0.2-0.4 s measured here), a
start-up cost a command-line ``check`` should not pay. ``tests/physics`` checks the
values against ``scipy.constants``.
"""

from __future__ import annotations

import math

__all__ = [
    "ELEMENTARY_CHARGE_C",
    "PLANCK_J_S",
    "SPEED_OF_LIGHT_M_S",
    "absorbed_fraction",
    "absorbed_photons",
    "ev_to_j",
    "j_m2_to_mj_cm2",
    "j_to_ev",
    "mj_cm2_to_j_m2",
    "nm_to_m",
    "photon_energy_ev",
    "photon_energy_j",
    "photon_flux_per_watt",
    "photons_per_area_m2",
    "relative_shot_noise",
    "stochastic_dose_floor_j_m2",
]

PLANCK_J_S: float = 6.62607015e-34
"""Planck constant h in J s (exact SI value; CODATA 2018 and 2022)."""

SPEED_OF_LIGHT_M_S: float = 299_792_458.0
"""Speed of light in vacuum c in m/s (exact SI value)."""

ELEMENTARY_CHARGE_C: float = 1.602176634e-19
"""Elementary charge e in C (exact SI value; also J per eV)."""


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


def mj_cm2_to_j_m2(dose_mj_cm2: float) -> float:
    """Convert a dose from mJ/cm² to J/m².

    Method: unit conversion, 1 mJ/cm² = 1e-3 J / 1e-4 m² = 10 J/m².

    Parameters
    ----------
    dose_mj_cm2 : float
        Dose in mJ/cm².

    Returns
    -------
    float
        Dose in J/m².

    Examples
    --------
    >>> mj_cm2_to_j_m2(30.0)
    300.0
    """
    return dose_mj_cm2 * 10.0


def j_m2_to_mj_cm2(dose_j_m2: float) -> float:
    """Convert a dose from J/m² to mJ/cm² (inverse of :func:`mj_cm2_to_j_m2`).

    Method: unit conversion, 1 J/m² = 0.1 mJ/cm².

    Parameters
    ----------
    dose_j_m2 : float
        Dose in J/m².

    Returns
    -------
    float
        Dose in mJ/cm².

    Examples
    --------
    >>> j_m2_to_mj_cm2(300.0)
    30.0
    """
    return dose_j_m2 / 10.0


def nm_to_m(length_nm: float) -> float:
    """Convert a length from nm to m.

    Method: unit conversion, 1 nm = 1e-9 m.

    Parameters
    ----------
    length_nm : float
        Length in nm.

    Returns
    -------
    float
        Length in m.

    Examples
    --------
    >>> nm_to_m(13.5)
    1.35e-08
    """
    return length_nm * 1e-9


def ev_to_j(energy_ev: float) -> float:
    """Convert an energy from eV to J.

    Method: 1 eV = e × 1 V, with e the exact SI elementary charge (CODATA).

    Parameters
    ----------
    energy_ev : float
        Energy in eV.

    Returns
    -------
    float
        Energy in J.

    Examples
    --------
    >>> ev_to_j(1.0)
    1.602176634e-19
    """
    return energy_ev * ELEMENTARY_CHARGE_C


def j_to_ev(energy_j: float) -> float:
    """Convert an energy from J to eV (inverse of :func:`ev_to_j`).

    Method: division by the exact SI elementary charge (CODATA).

    Parameters
    ----------
    energy_j : float
        Energy in J.

    Returns
    -------
    float
        Energy in eV.

    Examples
    --------
    >>> j_to_ev(1.602176634e-19)
    1.0
    """
    return energy_j / ELEMENTARY_CHARGE_C


def photon_energy_j(wavelength_m: float) -> float:
    """Energy of one photon, E = h c / λ, in J.

    Method: Planck relation with CODATA constants (exact SI h and c).

    Parameters
    ----------
    wavelength_m : float
        Vacuum wavelength in m, > 0.

    Returns
    -------
    float
        Photon energy in J.

    Raises
    ------
    ValueError
        If the wavelength is not a positive finite number.

    Examples
    --------
    >>> round(photon_energy_j(13.5e-9) * 1e18, 4)  # aJ
    14.7144
    """
    _require_positive("wavelength_m", wavelength_m)
    return PLANCK_J_S * SPEED_OF_LIGHT_M_S / wavelength_m


def photon_energy_ev(wavelength_m: float) -> float:
    """Energy of one photon, E = h c / λ, in eV.

    Method: Planck relation with CODATA constants; hc = 1239.84198 eV nm.

    Parameters
    ----------
    wavelength_m : float
        Vacuum wavelength in m, > 0.

    Returns
    -------
    float
        Photon energy in eV.

    Raises
    ------
    ValueError
        If the wavelength is not a positive finite number.

    Examples
    --------
    >>> round(photon_energy_ev(13.5e-9), 2)
    91.84
    >>> round(photon_energy_ev(193e-9), 3)
    6.424
    """
    return photon_energy_j(wavelength_m) / ELEMENTARY_CHARGE_C


def photon_flux_per_watt(wavelength_m: float) -> float:
    """Photon flux carried by one watt of monochromatic light, in photons/s per W.

    Method: 1 W = 1 J/s, divided by the photon energy h c / λ.

    Parameters
    ----------
    wavelength_m : float
        Vacuum wavelength in m, > 0.

    Returns
    -------
    float
        Photons per second per watt (equivalently photons per joule).

    Examples
    --------
    >>> f"{photon_flux_per_watt(13.5e-9):.4e}"
    '6.7961e+16'
    """
    return 1.0 / photon_energy_j(wavelength_m)


def photons_per_area_m2(dose_j_m2: float, wavelength_m: float) -> float:
    """Number of incident photons per m² for a dose, N/A = D / E_photon.

    Method: dose divided by the Planck photon energy (CODATA constants).
    Reference value: at 13.5 nm, 1 mJ/cm² is 0.6796 photons/nm².

    Parameters
    ----------
    dose_j_m2 : float
        Incident dose in J/m², >= 0.
    wavelength_m : float
        Vacuum wavelength in m, > 0.

    Returns
    -------
    float
        Photons per m² (multiply by 1e-18 for photons per nm²).

    Examples
    --------
    >>> round(photons_per_area_m2(mj_cm2_to_j_m2(1.0), 13.5e-9) * 1e-18, 4)
    0.6796
    """
    _require_non_negative("dose_j_m2", dose_j_m2)
    return dose_j_m2 / photon_energy_j(wavelength_m)


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
    >>> round(j_m2_to_mj_cm2(d), 2)  # mJ/cm²
    32.47
    """
    _require_positive("critical_area_m2", critical_area_m2)
    _require_fraction("fraction_absorbed", fraction_absorbed)
    _require_positive("relative_noise_budget", relative_noise_budget)
    return photon_energy_j(wavelength_m) / (
        critical_area_m2 * fraction_absorbed * relative_noise_budget**2
    )
