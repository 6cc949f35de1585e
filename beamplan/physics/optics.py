"""Optical constants and grazing-incidence mirror reflectivity for EUV light.

Conventions of :mod:`beamplan.physics`: fields vary as ``exp(i(k·r − ωt))``, so
an absorbing medium has ``n = 1 − δ + iβ`` with ``β > 0``;
:func:`optical_constants` returns ``δ + iβ`` (build ``n`` as
``1 - c.real + 1j * c.imag``). periodictable's ``index_of_refraction`` returns
``1 − δ − iβ`` (and takes Å or keV); the conversion is made here, once. Angles
are in radians, lengths in metres, densities in g/cm³.

Optical constants: B. L. Henke, E. M. Gullikson, J. C. Davis, *At. Data Nucl.
Data Tables* 54 (1993) 181, updated tables shipped with ``periodictable``,
which (like numpy) is imported only when first needed. The s-polarised share
for a mirror's geometry is in :mod:`beamplan.physics.polarisation` (re-exported
here).
"""

from __future__ import annotations

import cmath
import functools
import math
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import TYPE_CHECKING, Any

from beamplan.physics.polarisation import s_fraction, s_polarisation

if TYPE_CHECKING:
    import numpy as np
    from numpy.typing import ArrayLike, NDArray

__all__ = [
    "DEFAULT_DENSITIES_G_CM3",
    "HENKE_SOURCE",
    "NEVOT_CROCE_SOURCE",
    "MirrorReflectivity",
    "fresnel_amplitudes",
    "mirror_reflectivity",
    "optical_constants",
    "optical_constants_spectrum",
    "s_fraction",
    "s_polarisation",
]

HENKE_SOURCE = (
    "Henke, Gullikson & Davis, At. Data Nucl. Data Tables 54 (1993) 181 "
    "(updated tables shipped with periodictable)"
)
NEVOT_CROCE_SOURCE = "Névot & Croce, Rev. Phys. Appl. 15 (1980) 761"

#: Densities (g/cm³) for common compounds that periodictable does not tabulate:
#: fused silica and boron carbide (handbook values, common practice).
DEFAULT_DENSITIES_G_CM3: Mapping[str, float] = MappingProxyType({"SiO2": 2.2, "B4C": 2.52})


def _check_finite(
    value: float,
    name: str,
    *,
    positive: bool = False,
    low: float = -math.inf,
    high: float = math.inf,
) -> float:
    """``value`` as a float; ValueError unless finite, in [low, high] (and > 0 if positive)."""
    number = float(value)
    if not math.isfinite(number) or (positive and number <= 0.0) or not low <= number <= high:
        need = "> 0" if positive else f"in [{low:g}, {high:g}]"
        raise ValueError(f"{name} must be a finite number {need}, got {value!r}")
    return number


def _compound(formula: str, density_g_cm3: float | None) -> Any:
    """Parse ``formula`` with periodictable and attach a density (g/cm³)."""
    import periodictable

    if not isinstance(formula, str) or not formula.strip():
        raise ValueError(f"formula must be a non-empty chemical formula, got {formula!r}")
    try:
        compound = periodictable.formula(formula)
    except Exception as exc:  # pyparsing.ParseException or ValueError("unknown element")
        raise ValueError(f"unknown chemical formula {formula!r}: {exc}") from exc
    if not compound.atoms:
        raise ValueError(f"chemical formula {formula!r} contains no atoms")
    density = density_g_cm3 or compound.density or DEFAULT_DENSITIES_G_CM3.get(formula)
    if density is None:
        raise ValueError(f"no tabulated density for {formula!r}: pass density_g_cm3")
    return periodictable.formula(compound, density=density)


def _lookup(formula: str, density_g_cm3: float | None, wavelength_m: Any) -> Any:
    """δ + iβ (numpy array) for the wavelengths ``wavelength_m`` (numpy array)."""
    import numpy as np
    from periodictable import xsf

    compound = _compound(formula, density_g_cm3)
    n_pt = xsf.index_of_refraction(  # type: ignore[no-untyped-call]
        compound,
        wavelength=wavelength_m * 1e10,  # periodictable wants Å
    )
    delta_beta = np.asarray(1.0 - n_pt, dtype=complex)  # n_pt = 1 − δ − iβ
    bad = ~np.isfinite(delta_beta)
    if np.any(bad):
        worst = float(np.asarray(wavelength_m)[bad].flat[0])
        raise ValueError(
            f"wavelength {worst * 1e9:.4g} nm ({1239.84198e-9 / worst:.4g} eV) is outside the "
            f"Henke tables for {formula!r} (about 10 eV to 30 keV, 0.041 nm to 124 nm; some "
            "light elements lack f1 at the lowest energies)"
        )
    return delta_beta


@functools.lru_cache(maxsize=4096)
def _optical_constants_cached(
    formula: str, density_g_cm3: float | None, wavelength_m: float
) -> complex:
    import numpy as np

    return complex(_lookup(formula, density_g_cm3, np.asarray([wavelength_m]))[0])


def optical_constants(formula: str, density_g_cm3: float | None, wavelength_m: float) -> complex:
    """Return ``δ + iβ`` of a material, with ``n = 1 − δ + iβ``.

    Parameters
    ----------
    formula
        Chemical formula as periodictable reads it (``"Mo"``, ``"SiO2"``, ``"B4C"``).
    density_g_cm3
        Mass density in g/cm³; ``None`` takes periodictable's tabulated density
        (for an element, that of the solid or liquid), then
        :data:`DEFAULT_DENSITIES_G_CM3`.
    wavelength_m
        Vacuum wavelength in metres.

    Returns
    -------
    complex
        ``δ + iβ``. Results are cached (``functools.lru_cache``).

    Raises
    ------
    ValueError
        Unknown formula, missing density, or a wavelength outside the tables.

    Notes
    -----
    ``δ + iβ = (r_e λ² / 2π) Σ_j N_j (f1_j + i f2_j)`` with the Henke et al.
    (1993) scattering factors, computed by
    ``periodictable.xsf.index_of_refraction`` (which returns ``1 − δ − iβ``).

    Examples
    --------
    >>> c = optical_constants("Mo", None, 13.5e-9)
    >>> round(c.real, 4), round(c.imag, 5)
    (0.0762, 0.00644)
    """
    lam = _check_finite(wavelength_m, "wavelength_m", positive=True)
    if density_g_cm3 is not None:
        density_g_cm3 = _check_finite(density_g_cm3, "density_g_cm3", positive=True)
    return _optical_constants_cached(formula, density_g_cm3, lam)


def optical_constants_spectrum(
    formula: str, density_g_cm3: float | None, wavelength_m: ArrayLike
) -> NDArray[np.complex128]:
    """Return ``δ + iβ`` of a material over an array of wavelengths (not cached).

    Parameters
    ----------
    formula, density_g_cm3
        As for :func:`optical_constants`.
    wavelength_m
        Vacuum wavelengths in metres, any shape.

    Returns
    -------
    numpy.ndarray
        Complex ``δ + iβ``, shaped like ``wavelength_m`` (Henke et al. 1993 via periodictable).

    Examples
    --------
    >>> c = optical_constants_spectrum("Si", None, [13.0e-9, 13.5e-9])
    >>> [round(float(b), 5) for b in c.imag]
    [0.0018, 0.00183]
    """
    import numpy as np

    lam = np.asarray(wavelength_m, dtype=float)
    if density_g_cm3 is not None:
        density_g_cm3 = _check_finite(density_g_cm3, "density_g_cm3", positive=True)
    if lam.size == 0 or not np.all(np.isfinite(lam) & (lam > 0)):
        raise ValueError("wavelength_m must be a non-empty array of finite values > 0")
    result: NDArray[np.complex128] = _lookup(formula, density_g_cm3, lam).reshape(lam.shape)
    return result


def _sqrt_upper(z: complex) -> complex:
    """Square root with a non-negative imaginary part (decaying wave in the medium)."""
    root = cmath.sqrt(z)
    return -root if root.imag < 0 else root


def fresnel_amplitudes(
    n_complex: complex, grazing_rad: float, wavelength_m: float, roughness_m: float = 0.0
) -> tuple[complex, complex]:
    """Fresnel amplitude reflection coefficients (r_s, r_p) of a thick mirror.

    Parameters
    ----------
    n_complex
        Complex index of the mirror, ``n = 1 − δ + iβ`` (vacuum above).
    grazing_rad
        Grazing angle between the ray and the surface, in (0, π/2] rad.
    wavelength_m
        Vacuum wavelength in metres.
    roughness_m
        rms interface roughness σ in metres (Névot–Croce factor).

    Returns
    -------
    tuple of complex
        ``(r_s, r_p)``. With ``k_z0 = k sin θ`` and ``k_z1 = k √(n² − cos² θ)``
        (root with Im ≥ 0): ``r_s = (k_z0 − k_z1)/(k_z0 + k_z1)``,
        ``r_p = (n² k_z0 − k_z1)/(n² k_z0 + k_z1)`` (so ``r_p = −r_s`` at normal
        incidence), both times ``exp(−2 k_z0 k_z1 σ²)``.

    Notes
    -----
    Fresnel equations (e.g. Born & Wolf, *Principles of Optics*, §1.5) with the
    roughness factor of L. Névot, P. Croce, *Rev. Phys. Appl.* 15 (1980) 761,
    applied to both polarisations (common practice).

    Examples
    --------
    >>> r_s, r_p = fresnel_amplitudes(1 - 0.0762 + 0.00644j, math.radians(5), 13.5e-9)
    >>> round(abs(r_s) ** 2, 4), round(abs(r_p) ** 2, 4)
    (0.9629, 0.9576)
    """
    theta = _check_finite(grazing_rad, "grazing_rad", positive=True, high=math.pi / 2)
    lam = _check_finite(wavelength_m, "wavelength_m", positive=True)
    sigma = _check_finite(roughness_m, "roughness_m", low=0.0)
    n = complex(n_complex)
    if not cmath.isfinite(n):
        raise ValueError(f"n_complex must be finite, got {n_complex!r}")
    k = 2.0 * math.pi / lam
    n2 = n * n
    kz0 = k * math.sin(theta)
    kz1 = k * _sqrt_upper(n2 - math.cos(theta) ** 2)
    r_s = (kz0 - kz1) / (kz0 + kz1)
    r_p = (n2 * kz0 - kz1) / (n2 * kz0 + kz1)
    if sigma > 0:
        factor = cmath.exp(-2.0 * kz0 * kz1 * sigma**2)
        r_s, r_p = r_s * factor, r_p * factor
    return r_s, r_p


@dataclass(frozen=True)
class MirrorReflectivity:
    """Result of :func:`mirror_reflectivity`: complex amplitudes ``r_s``, ``r_p``; the
    ``reflectivity`` for the requested polarisation; the ``delta``, ``beta`` used
    (``n = 1 − δ + iβ``); ``critical_angle_rad`` ``≈ √(2δ)`` (0 if δ ≤ 0), the
    grazing angle of total external reflection; and the ``method`` with its sources.
    """

    r_s: complex
    r_p: complex
    reflectivity: float
    delta: float
    beta: float
    critical_angle_rad: float
    method: str

    @property
    def reflectivity_s(self) -> float:
        """``|r_s|²``."""
        return abs(self.r_s) ** 2

    @property
    def reflectivity_p(self) -> float:
        """``|r_p|²``."""
        return abs(self.r_p) ** 2


def mirror_reflectivity(
    formula: str,
    grazing_rad: float,
    wavelength_m: float,
    *,
    density_g_cm3: float | None = None,
    roughness_m: float = 0.0,
    polarisation: float = 0.0,
    delta_beta: complex | None = None,
) -> MirrorReflectivity:
    """Reflectivity of a thick grazing-incidence mirror.

    Parameters
    ----------
    formula
        Mirror material (chemical formula); only a label when ``delta_beta`` is given.
    grazing_rad
        Grazing angle in rad, in (0, π/2].
    wavelength_m
        Vacuum wavelength in metres.
    density_g_cm3
        Density in g/cm³, ``None`` for the tabulated one.
    roughness_m
        rms roughness in metres (Névot–Croce).
    polarisation
        Degree of linear polarisation along s, in [-1, 1]: +1 fully s, −1 fully
        p, 0 unpolarised (see :func:`s_polarisation`).
        ``R = (1 + P)/2 R_s + (1 − P)/2 R_p``.
    delta_beta
        ``δ + iβ`` to use instead of the tables (e.g. measured data).

    Returns
    -------
    MirrorReflectivity

    Notes
    -----
    :func:`fresnel_amplitudes` with Névot & Croce, *Rev. Phys. Appl.* 15 (1980)
    761; δ, β from Henke et al., *At. Data Nucl. Data Tables* 54 (1993) 181.

    Examples
    --------
    >>> m = mirror_reflectivity("Ru", math.radians(10), 13.5e-9, polarisation=1.0)
    >>> round(m.reflectivity, 3), round(math.degrees(m.critical_angle_rad), 1)
    (0.894, 27.3)
    >>> m = mirror_reflectivity("x", math.radians(2), 13.5e-9, delta_beta=0.02 + 0.001j)
    >>> round(m.reflectivity, 3)
    0.982
    """
    p = _check_finite(polarisation, "polarisation (+1 = s, -1 = p)", low=-1.0, high=1.0)
    if delta_beta is None:
        db = optical_constants(formula, density_g_cm3, wavelength_m)
        source = HENKE_SOURCE
    else:
        db = complex(delta_beta)
        source = "caller-supplied δ, β"
    n = 1.0 - db.real + 1j * db.imag
    r_s, r_p = fresnel_amplitudes(n, grazing_rad, wavelength_m, roughness_m)
    reflectivity = 0.5 * (1.0 + p) * abs(r_s) ** 2 + 0.5 * (1.0 - p) * abs(r_p) ** 2
    return MirrorReflectivity(
        r_s=r_s,
        r_p=r_p,
        reflectivity=reflectivity,
        delta=db.real,
        beta=db.imag,
        critical_angle_rad=math.sqrt(2.0 * db.real) if db.real > 0 else 0.0,
        method=(
            f"Fresnel thick mirror, Névot–Croce roughness ({NEVOT_CROCE_SOURCE}); "
            f"δ, β of {formula}: {source}"
        ),
    )
