"""Reflectivity of a mirror under a thin contamination overlayer (carbon, an oxide).

A thin film (e.g. carbon grown under EUV light, or RuO2 on a Ru cap) on top of
a thick mirror or of a periodic multilayer, solved with the recursion of
L. G. Parratt, *Phys. Rev.* 95 (1954) 359 (equivalent to the transfer-matrix
method) and the interface roughness factor of L. Névot, P. Croce, *Rev. Phys.
Appl.* 15 (1980) 761. Optical constants: Henke et al., *At. Data Nucl. Data
Tables* 54 (1993) 181, via :mod:`beamplan.physics.optics` (``n = 1 − δ + iβ``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from beamplan.physics.optics import HENKE_SOURCE, NEVOT_CROCE_SOURCE, optical_constants
from beamplan.physics.parratt import PARRATT_SOURCE, parratt_amplitudes

__all__ = ["OverlayerReflectivity", "overlayer_on_mirror", "overlayer_on_multilayer"]


@dataclass(frozen=True)
class OverlayerReflectivity:
    """Reflectivity of the covered mirror, and the method with its sources."""

    reflectivity: float
    method: str


def _n(formula: str, density_g_cm3: float | None, wavelength_m: float) -> complex:
    c = optical_constants(formula, density_g_cm3, wavelength_m)
    return 1.0 - c.real + 1j * c.imag


def _mix(polarisation: float, r_s: complex, r_p: complex) -> float:
    if not -1.0 <= polarisation <= 1.0:
        raise ValueError("polarisation must be in [-1, 1] (+1 = s, -1 = p)")
    return 0.5 * (1.0 + polarisation) * abs(r_s) ** 2 + 0.5 * (1.0 - polarisation) * abs(r_p) ** 2


def _check_thickness(thickness_m: float) -> None:
    if not (math.isfinite(thickness_m) and thickness_m >= 0.0):
        raise ValueError("overlayer thickness_m must be finite and >= 0")


def overlayer_on_mirror(overlayer: str, thickness_m: float, mirror: str, grazing_rad: float,
                        wavelength_m: float = 13.5e-9, *,
                        overlayer_density_g_cm3: float | None = None,
                        mirror_density_g_cm3: float | None = None,
                        roughness_m: float = 0.0,
                        polarisation: float = 0.0) -> OverlayerReflectivity:
    """Reflectivity of a thick grazing-incidence mirror under an overlayer.

    Parameters
    ----------
    overlayer, thickness_m
        Formula of the film (``"C"``, ``"RuO2"``) and its thickness in metres.
    mirror, grazing_rad
        Formula of the thick mirror and the grazing angle (rad, in (0, π/2]).
    wavelength_m
        Vacuum wavelength in metres.
    overlayer_density_g_cm3, mirror_density_g_cm3
        Densities in g/cm³, ``None`` for periodictable's tabulated ones.
    roughness_m
        rms roughness of both interfaces (Névot–Croce).
    polarisation
        Degree of s polarisation in [-1, 1].

    Returns
    -------
    OverlayerReflectivity

    Notes
    -----
    One film on a substrate by the Parratt recursion (Parratt, *Phys. Rev.* 95
    (1954) 359); Névot & Croce roughness; δ, β from Henke et al. (1993). With a
    zero thickness this is the Fresnel reflectivity of the bare mirror.

    Examples
    --------
    >>> bare = overlayer_on_mirror("C", 0.0, "Ru", math.radians(10), polarisation=1.0)
    >>> round(bare.reflectivity, 3)
    0.894
    >>> dirty = overlayer_on_mirror("C", 2e-9, "Ru", math.radians(10), polarisation=1.0)
    >>> dirty.reflectivity < bare.reflectivity
    True
    """
    _check_thickness(thickness_m)
    if not 0.0 < grazing_rad <= math.pi / 2:
        raise ValueError("grazing_rad must be in (0, π/2]")
    n_film = _n(overlayer, overlayer_density_g_cm3, wavelength_m)
    n_sub = _n(mirror, mirror_density_g_cm3, wavelength_m)
    incidence = max(0.0, math.pi / 2 - grazing_rad)
    r_s, r_p = parratt_amplitudes([n_film], [thickness_m], n_sub, incidence, wavelength_m,
                                  roughness_m=roughness_m)
    value = _mix(polarisation, complex(r_s), complex(r_p))
    return OverlayerReflectivity(value, (
        f"Parratt recursion ({PARRATT_SOURCE}), Névot–Croce roughness ({NEVOT_CROCE_SOURCE}): "
        f"{thickness_m * 1e9:.3g} nm {overlayer} on thick {mirror} at "
        f"{math.degrees(grazing_rad):.3g}° grazing; δ, β: {HENKE_SOURCE}"))


def overlayer_on_multilayer(overlayer: str, thickness_m: float,
                            pair: tuple[str, str] = ("Mo", "Si"), period_m: float = 6.9e-9,
                            gamma: float = 0.4, bilayers: int = 50,
                            incidence_rad: float = 0.0, wavelength_m: float = 13.5e-9, *,
                            capping: tuple[str, float] | None = None,
                            substrate: str = "SiO2",
                            overlayer_density_g_cm3: float | None = None,
                            roughness_m: float = 0.0,
                            polarisation: float = 0.0) -> OverlayerReflectivity:
    """Reflectivity of a periodic multilayer (e.g. Mo/Si) under an overlayer.

    Parameters
    ----------
    overlayer, thickness_m
        Formula and thickness (m) of the film on top of everything.
    pair, period_m, gamma, bilayers
        ``(absorber, spacer)``, period, absorber fraction Γ and number of
        periods, as in :func:`beamplan.physics.multilayer.multilayer_reflectivity`
        (from the top: spacer, absorber, ..., absorber, substrate).
    incidence_rad, wavelength_m
        Angle of incidence from the normal (rad) and vacuum wavelength (m).
    capping
        ``(formula, thickness_m)`` of a cap under the overlayer, or None.
    substrate
        Substrate formula.
    overlayer_density_g_cm3
        Density of the film, ``None`` for the tabulated one.
    roughness_m
        rms roughness of every interface (Névot–Croce).
    polarisation
        Degree of s polarisation in [-1, 1].

    Returns
    -------
    OverlayerReflectivity

    Notes
    -----
    Parratt recursion (Parratt, *Phys. Rev.* 95 (1954) 359) over the film,
    the cap and the periodic stack; Névot & Croce (1980) roughness; δ, β from
    Henke et al. (1993).

    Examples
    --------
    About 1 % of the reflectivity of a Ru-capped Mo/Si stack lost to 1 nm of carbon:

    >>> clean = overlayer_on_multilayer("C", 0.0, capping=("Ru", 2e-9))
    >>> round(clean.reflectivity, 3)
    0.748
    >>> one_nm = overlayer_on_multilayer("C", 1e-9, capping=("Ru", 2e-9))
    >>> round(1 - one_nm.reflectivity / clean.reflectivity, 3)
    0.011
    """
    _check_thickness(thickness_m)
    if not (bilayers >= 1 and 0.0 <= gamma <= 1.0 and period_m > 0):
        raise ValueError("need bilayers >= 1, 0 <= gamma <= 1 and period_m > 0")
    absorber, spacer = pair
    n_abs = _n(absorber, None, wavelength_m)
    n_spa = _n(spacer, None, wavelength_m)
    layers: list[complex] = [_n(overlayer, overlayer_density_g_cm3, wavelength_m)]
    thickness: list[float] = [thickness_m]
    if capping is not None:
        layers.append(_n(capping[0], None, wavelength_m))
        thickness.append(float(capping[1]))
    for _ in range(bilayers):
        layers += [n_spa, n_abs]
        thickness += [(1.0 - gamma) * period_m, gamma * period_m]
    r_s, r_p = parratt_amplitudes(layers, thickness, _n(substrate, None, wavelength_m),
                                  incidence_rad, wavelength_m, roughness_m=roughness_m)
    value = _mix(polarisation, complex(r_s), complex(r_p))
    cap = "" if capping is None else f" on a {capping[1] * 1e9:.3g} nm {capping[0]} cap"
    return OverlayerReflectivity(value, (
        f"Parratt recursion ({PARRATT_SOURCE}), Névot–Croce roughness ({NEVOT_CROCE_SOURCE}): "
        f"{thickness_m * 1e9:.3g} nm {overlayer}{cap} on [{spacer}/{absorber}]×{bilayers}, "
        f"period {period_m * 1e9:.4g} nm; δ, β: {HENKE_SOURCE}"))
