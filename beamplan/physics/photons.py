"""Photon counting for EUV exposure: photon energy, flux and dose in photons.

Shot noise (absorbed photons, their Poisson noise and the stochastic dose
floor) is in :mod:`beamplan.physics.shot_noise`.

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
    "ev_to_j",
    "j_m2_to_mj_cm2",
    "j_to_ev",
    "mj_cm2_to_j_m2",
    "nm_to_m",
    "photon_energy_ev",
    "photon_energy_j",
    "photon_flux_per_watt",
    "photons_per_area_m2",
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
