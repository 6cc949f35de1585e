"""First-order thermal slope error of a mirror under an absorbed heat bump.

The model is the thermal bending of a plate heated on one face. Heat
absorbed at the surface (flux ``q``, W/m²) flows through the thickness to
the cooled body, so the temperature falls linearly with depth at the
gradient ``dT/dz = q / k`` (Fourier's law). A free body whose temperature
varies linearly through its thickness bends, free of stress, into a curve of
curvature ``κ = α dT/dz = α q / k``, independent of the thickness: the
uniform-material case of S. Timoshenko, "Analysis of bi-metal thermostats",
*J. Opt. Soc. Am.* 11 (1925) 233, and the reason ``α / k`` is called the
thermal distortion index of a mirror material (P. R. Yoder Jr.,
*Opto-Mechanical Systems Design*, 4th ed., CRC Press (2015), vol. 1, ch. 3,
eq. 3.17: the change of a mirror's curvature under an axial heat flux ``Q``
is ``α Q / k``). It is the first estimate used for grazing-incidence X-ray
mirrors under synchrotron and free-electron-laser heat loads, before a
finite-element analysis.

For a heat bump that is Gaussian along the mirror,
``q(x) = q0 exp(−x² / 2ℓ²)`` with ``ℓ`` the rms footprint length, the local
curvature follows the bump, and the slope is its integral (derived here):

- ``θ(x) = (α q0 ℓ / k) √(π/2) [1 + erf(x / (ℓ√2))]``;
- the slope change across the whole bump is ``Δθ = √(2π) α q0 ℓ / k``
  (``≈ 2.507 α q0 ℓ / k``): :func:`thermal_slope_error_rad`;
- the rms slope error about the mean slope, weighted by the beam itself
  (which has the same Gaussian profile), is ``√(π/6) α q0 ℓ / k``
  (``≈ 0.724 α q0 ℓ / k``), since ``erf(X/√2) = 2Φ(X) − 1`` is uniform on
  (−1, 1) for a standard normal ``X`` and so has mean square 1/3.

Limits of the model (first order): the heat flows through the thickness
(a footprint long compared to the thickness), the material constants are
taken at the operating temperature, the cooled body does not restrain the
bending, and the cooling is good enough to keep the mirror at that
temperature (for cryogenic silicon: near 125 K, where ``α`` passes zero).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

__all__ = [
    "PV_FACTOR",
    "RMS_FACTOR",
    "SUBSTRATES",
    "Substrate",
    "ThermalEstimate",
    "silicon_expansion_per_k",
    "substrate",
    "thermal_estimate",
    "thermal_slope_error_rad",
]

#: Slope change across a Gaussian heat bump over ``α q0 ℓ / k``: ``√(2π)`` (derived above).
PV_FACTOR = math.sqrt(2.0 * math.pi)
#: Beam-weighted rms slope error over ``α q0 ℓ / k``: ``√(π/6)`` (derived above).
RMS_FACTOR = math.sqrt(math.pi / 6.0)


@dataclass(frozen=True)
class Substrate:
    """A mirror substrate's thermal constants at its operating temperature.

    Attributes
    ----------
    name
        The key in :data:`SUBSTRATES`.
    conductivity_w_m_k
        Thermal conductivity ``k``, W/(m·K).
    expansion_per_k
        Linear thermal expansion coefficient ``α``, 1/K (may be negative).
    temperature_k
        The temperature the two values hold at, K.
    source
        Where the values come from.

    Examples
    --------
    >>> si = SUBSTRATES["silicon"]
    >>> round(si.distortion_m_w * 1e9, 2)  # α/k, nm/W
    17.35
    """

    name: str
    conductivity_w_m_k: float
    expansion_per_k: float
    temperature_k: float
    source: str

    def __post_init__(self) -> None:
        if not (self.conductivity_w_m_k > 0.0 and math.isfinite(self.conductivity_w_m_k)):
            raise ValueError(f"{self.name}: the conductivity must be positive and finite")
        if not (math.isfinite(self.expansion_per_k) and self.temperature_k > 0.0):
            raise ValueError(f"{self.name}: the expansion must be finite, the temperature > 0")

    @property
    def distortion_m_w(self) -> float:
        """The thermal distortion index ``|α| / k``, m/W (Yoder (2015), ch. 3)."""
        return abs(self.expansion_per_k) / self.conductivity_w_m_k


def silicon_expansion_per_k(temperature_k: float) -> float:
    """Linear thermal expansion coefficient of silicon, 120 K to 1500 K.

    The empirical fit of Y. Okada and Y. Tokumaru, "Precise determination of
    lattice parameter and thermal expansion coefficient of silicon between
    300 and 1500 K", *J. Appl. Phys.* 56 (1984) 314:
    ``α(T) = (3.725 {1 − exp[−5.88×10⁻³ (T − 124)]} + 5.548×10⁻⁴ T) × 10⁻⁶ /K``.

    Examples
    --------
    >>> round(silicon_expansion_per_k(300.0) * 1e6, 3)
    2.568
    """
    if not 120.0 <= temperature_k <= 1500.0:
        raise ValueError(f"the fit holds from 120 K to 1500 K, not {temperature_k!r} K")
    t = temperature_k
    return (3.725 * (1.0 - math.exp(-5.88e-3 * (t - 124.0))) + 5.548e-4 * t) * 1e-6


_HO = ("C. Y. Ho, R. W. Powell and P. E. Liley, \"Thermal conductivity of the elements\", "
       "J. Phys. Chem. Ref. Data 1 (1972) 279 (recommended values, from memory)")
_OKADA = "Y. Okada and Y. Tokumaru, J. Appl. Phys. 56 (1984) 314 (fit of α(T))"

#: The substrates known by name, with their sources.
SUBSTRATES: Mapping[str, Substrate] = MappingProxyType({
    # k: 1.48 W/(cm K) at 300 K (Ho, Powell & Liley 1972, from memory);
    # α: Okada & Tokumaru (1984) fit at 300 K, 2.568e-6 /K.
    "silicon": Substrate("silicon", 148.0, 2.568e-6, 300.0,
                         f"k: {_HO}; alpha: {_OKADA} at 300 K"),
    # Near the zero of silicon's expansion. k: log-linear between the recommended
    # 8.84 W/(cm K) at 100 K and 4.09 W/(cm K) at 150 K (Ho, Powell & Liley 1972,
    # from memory): 601 W/(m K) at 125 K. α: Okada & Tokumaru (1984) fit at 125 K,
    # 0.091e-6 /K, near the low end of its range; the zero crossing lies near
    # 120-125 K depending on the sample and measurement.
    "silicon-cryo": Substrate("silicon-cryo", 601.0, 0.0912e-6, 125.0,
                              f"k: {_HO}, interpolated to 125 K; alpha: {_OKADA} at 125 K"),
    # Oxygen-free copper at room temperature: k 4.01 W/(cm K) at 300 K (Ho, Powell &
    # Liley 1972, from memory); α 16.5e-6 /K at 293 K (Y. S. Touloukian et al.,
    # Thermophysical Properties of Matter vol. 12, Thermal Expansion: Metallic
    # Elements and Alloys, IFI/Plenum (1975), from memory).
    "copper": Substrate("copper", 401.0, 16.5e-6, 300.0,
                        f"k: {_HO}; alpha: Touloukian et al., TPRC Data Series vol. 12 "
                        "(1975), from memory"),
})


def substrate(name: str) -> Substrate:
    """The substrate called ``name``; ValueError naming the known ones otherwise.

    Examples
    --------
    >>> substrate("copper").conductivity_w_m_k
    401.0
    """
    try:
        return SUBSTRATES[name]
    except KeyError:
        known = ", ".join(sorted(SUBSTRATES))
        raise ValueError(f"unknown substrate {name!r}; known substrates: {known}") from None


@dataclass(frozen=True)
class ThermalEstimate:
    """The first-order thermal figures of a mirror under a Gaussian heat bump.

    Attributes
    ----------
    substrate
        The substrate's name.
    gradient_k_m
        Peak temperature gradient through the thickness, ``q0 / k``, K/m.
    curvature_per_m
        Peak thermal curvature ``α q0 / k``, 1/m (signed as ``α``).
    slope_change_rad
        Slope change across the bump, ``√(2π) α q0 ℓ / k``, rad (magnitude).
    slope_rms_rad
        Beam-weighted rms slope error about the mean slope, ``√(π/6) α q0 ℓ / k``, rad.

    Examples
    --------
    >>> e = thermal_estimate(5e4, 0.02, "silicon")
    >>> round(e.slope_change_rad / e.slope_rms_rad, 4)  # √(2π) / √(π/6) = √12
    3.4641
    """

    substrate: str
    gradient_k_m: float
    curvature_per_m: float
    slope_change_rad: float
    slope_rms_rad: float

    @property
    def radius_m(self) -> float:
        """Radius of the peak thermal curvature, m (infinite without heat)."""
        return math.inf if self.curvature_per_m == 0.0 else 1.0 / abs(self.curvature_per_m)


def thermal_estimate(absorbed_peak_density_w_m2: float, footprint_rms_length_m: float,
                     substrate_name: str) -> ThermalEstimate:
    """Thermal gradient, curvature and slope errors under a Gaussian heat bump.

    Method: through-thickness bending of a plate heated on one face,
    ``κ = α q / k`` (Timoshenko, *J. Opt. Soc. Am.* 11 (1925) 233; Yoder,
    *Opto-Mechanical Systems Design* (2015), eq. 3.17), integrated along a
    Gaussian footprint of rms length ``ℓ`` (module docstring).

    Examples
    --------
    >>> e = thermal_estimate(2e4, 0.03, "silicon")  # 0.02 W/mm² over ℓ = 30 mm
    >>> round(e.gradient_k_m, 1), round(e.slope_change_rad * 1e6, 2)  # K/m, µrad
    (135.1, 26.1)
    """
    q0, ell = absorbed_peak_density_w_m2, footprint_rms_length_m
    if not (q0 >= 0.0 and math.isfinite(q0)):
        raise ValueError(f"the absorbed density must be finite and not negative, got {q0!r}")
    if not (ell >= 0.0 and math.isfinite(ell)):
        raise ValueError(f"the footprint length must be finite and not negative, got {ell!r}")
    sub = substrate(substrate_name)
    gradient = q0 / sub.conductivity_w_m_k
    scale = abs(sub.expansion_per_k) * gradient * ell
    return ThermalEstimate(sub.name, gradient, sub.expansion_per_k * gradient,
                           PV_FACTOR * scale, RMS_FACTOR * scale)


def thermal_slope_error_rad(absorbed_peak_density_w_m2: float, footprint_rms_length_m: float,
                            substrate: str) -> float:
    """First-order thermal slope error of a side- or internally-cooled mirror, rad.

    The slope change across a Gaussian heat bump of peak absorbed density
    ``q0`` and rms footprint length ``ℓ``: ``√(2π) α q0 ℓ / k``, the
    integral along the footprint of the thermal curvature ``κ = α q / k`` of
    a plate heated on one face (S. Timoshenko, "Analysis of bi-metal
    thermostats", *J. Opt. Soc. Am.* 11 (1925) 233; the thermal distortion
    index ``α / k`` of P. R. Yoder Jr., *Opto-Mechanical Systems Design*,
    CRC Press (2015), vol. 1, eq. 3.17). A peak-to-valley figure, the
    beam-weighted rms being ``1/√12`` of it (:func:`thermal_estimate`);
    first order only (module docstring for the assumptions). Linear in
    ``q0`` and ``ℓ``; the substrate's constants come from :data:`SUBSTRATES`.

    Examples
    --------
    >>> round(thermal_slope_error_rad(5e4, 0.02, "silicon") * 1e6, 2)  # 0.05 W/mm², ℓ 20 mm
    43.49
    >>> round(thermal_slope_error_rad(5e4, 0.02, "silicon-cryo") * 1e6, 2)
    0.38
    """
    return thermal_estimate(absorbed_peak_density_w_m2, footprint_rms_length_m,
                            substrate).slope_change_rad
