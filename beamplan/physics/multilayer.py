"""Reflectivity of thin-film stacks and periodic multilayer mirrors (e.g. Mo/Si).

The stack is solved with the recursion of L. G. Parratt, *Phys. Rev.* 95 (1954)
359 (equivalent to the transfer-matrix method), with the interface roughness
factor of L. Névot, P. Croce, *Rev. Phys. Appl.* 15 (1980) 761 applied at
every interface. Optical constants come from the Henke et al. (1993) tables via
:mod:`beamplan.physics.optics` (``n = 1 − δ + iβ``). Angles of incidence are
measured from the surface normal, in radians; lengths are in metres.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from beamplan.physics.optics import (
    HENKE_SOURCE,
    NEVOT_CROCE_SOURCE,
    optical_constants,
    optical_constants_spectrum,
)

__all__ = [
    "MultilayerPeak",
    "MultilayerReflectivity",
    "multilayer_peak",
    "multilayer_reflectivity",
    "parratt_amplitudes",
]

PARRATT_SOURCE = "Parratt, Phys. Rev. 95 (1954) 359"

ComplexArray = NDArray[np.complex128]


def _kz(n: ComplexArray, in_plane: ComplexArray, k: NDArray[np.float64]) -> ComplexArray:
    """Normal wave-vector component ``k √(n² − (n₀ sin θ)²)``, root with Im ≥ 0."""
    root: ComplexArray = np.sqrt(n * n - in_plane * in_plane)
    root = np.where(root.imag < 0, -root, root)
    return root * k


def parratt_amplitudes(
    n_layers: Sequence[ArrayLike],
    thickness_m: Sequence[float],
    n_substrate: ArrayLike,
    incidence_rad: ArrayLike,
    wavelength_m: ArrayLike,
    *,
    roughness_m: float | Sequence[float] = 0.0,
    n_ambient: complex = 1.0,
) -> tuple[ComplexArray, ComplexArray]:
    """Amplitude reflection coefficients (r_s, r_p) of a layer stack (Parratt recursion).

    Parameters
    ----------
    n_layers
        Complex indices ``n = 1 − δ + iβ`` of the layers, top first; each a scalar
        or an array broadcasting with the angles and wavelengths (dispersive scans).
    thickness_m
        Layer thicknesses in metres, same order and length as ``n_layers``.
    n_substrate
        Complex index of the semi-infinite substrate.
    incidence_rad, wavelength_m
        Angle of incidence in the ambient from the normal (rad) and vacuum
        wavelength (m); scalars or arrays.
    roughness_m
        rms roughness of each interface in metres, top interface first
        (``len(n_layers) + 1`` values), or one value for all interfaces.
    n_ambient
        Index of the incidence medium (1 for vacuum).

    Returns
    -------
    tuple of numpy.ndarray
        ``(r_s, r_p)`` with the broadcast shape of the inputs. The p convention
        matches :func:`beamplan.physics.optics.fresnel_amplitudes`
        (``r_p = (n_b² k_a − n_a² k_b)/(n_b² k_a + n_a² k_b)`` per interface).

    Notes
    -----
    ``k_z,j = k √(n_j² − n₀² sin² θ)`` (Im ≥ 0); interface ``r_j`` times
    ``exp(−2 k_z,j k_z,j+1 σ_j²)`` (Névot & Croce, *Rev. Phys. Appl.* 15 (1980) 761);
    from the substrate up, ``R_j = (r_j + R_j+1 X) / (1 + r_j R_j+1 X)`` with
    ``X = exp(2i k_z,j+1 d_j+1)`` (L. G. Parratt, *Phys. Rev.* 95 (1954) 359).

    Examples
    --------
    A quarter-wave film on a substrate at normal incidence (no absorption):

    >>> r_s, r_p = parratt_amplitudes([1.5], [100e-9 / 1.5 / 4], 2.0, 0.0, 100e-9)
    >>> round(float(abs(r_s) ** 2), 4)
    0.0035
    """
    if len(n_layers) != len(thickness_m):
        raise ValueError("n_layers and thickness_m must have the same length")
    if isinstance(roughness_m, (int, float)):
        sigmas = [float(roughness_m)] * (len(n_layers) + 1)
    else:
        sigmas = [float(v) for v in roughness_m]
    if len(sigmas) != len(n_layers) + 1:
        raise ValueError("roughness_m needs one value per interface (len(n_layers) + 1)")
    if not all(math.isfinite(v) and v >= 0 for v in [*thickness_m, *sigmas]):
        raise ValueError("every thickness_m and roughness_m must be finite and >= 0")
    theta = np.asarray(incidence_rad, dtype=float)
    lam = np.asarray(wavelength_m, dtype=float)
    if not (np.all(lam > 0) and np.all(np.abs(theta) < math.pi / 2) and np.isfinite(lam).all()):
        raise ValueError("need finite wavelength_m > 0 and |incidence_rad| < π/2")

    k = 2.0 * math.pi / lam
    media = [np.asarray(n_ambient, dtype=complex)]
    media += [np.asarray(n, dtype=complex) for n in n_layers]
    media.append(np.asarray(n_substrate, dtype=complex))
    in_plane = media[0] * np.sin(theta)

    def interface(j: int, kz_a: ComplexArray, kz_b: ComplexArray) -> tuple[Any, Any]:
        eps_a, eps_b = media[j] ** 2, media[j + 1] ** 2
        r_s = (kz_a - kz_b) / (kz_a + kz_b)
        r_p = (eps_b * kz_a - eps_a * kz_b) / (eps_b * kz_a + eps_a * kz_b)
        if sigmas[j] > 0:
            factor = np.exp(-2.0 * kz_a * kz_b * sigmas[j] ** 2)
            r_s, r_p = r_s * factor, r_p * factor
        return r_s, r_p

    last = len(media) - 2  # interface between the bottom layer and the substrate
    kz_below = _kz(media[-1], in_plane, k)
    kz_above = _kz(media[last], in_plane, k)
    big_s, big_p = interface(last, kz_above, kz_below)
    for j in range(last - 1, -1, -1):
        kz_below, kz_above = kz_above, _kz(media[j], in_plane, k)
        phase = np.exp(2j * kz_below * thickness_m[j])
        r_s, r_p = interface(j, kz_above, kz_below)
        big_s = (r_s + big_s * phase) / (1.0 + r_s * big_s * phase)
        big_p = (r_p + big_p * phase) / (1.0 + r_p * big_p * phase)
    shape = np.broadcast_shapes(theta.shape, lam.shape, *(m.shape for m in media))
    out_s: ComplexArray = np.broadcast_to(np.asarray(big_s, dtype=complex), shape).copy()
    out_p: ComplexArray = np.broadcast_to(np.asarray(big_p, dtype=complex), shape).copy()
    return out_s, out_p


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


def _require(checks: Mapping[str, bool]) -> None:
    """Raise one ValueError naming every failed check."""
    bad = [message for message, ok in checks.items() if not ok]
    if bad:
        raise ValueError("; ".join(bad))


def _check(incidence_rad: float, wavelength_m: float, polarisation: float, sigma: float) -> None:
    _require(
        {
            "incidence_rad must be in [0, π/2)": 0.0 <= incidence_rad < math.pi / 2,
            "wavelength_m must be > 0": math.isfinite(wavelength_m) and wavelength_m > 0,
            "polarisation must be in [-1, 1]": -1.0 <= polarisation <= 1.0,
            "roughness_m must be >= 0": math.isfinite(sigma) and sigma >= 0,
        }
    )


def _mix(polarisation: float, r_s: Any, r_p: Any) -> Any:
    """``(1 + P)/2 |r_s|² + (1 − P)/2 |r_p|²``."""
    return 0.5 * (1 + polarisation) * np.abs(r_s) ** 2 + 0.5 * (1 - polarisation) * np.abs(r_p) ** 2


@dataclass(frozen=True)
class _Periodic:
    """A periodic stack [spacer on absorber] × N, optionally capped, on a substrate."""

    pair: tuple[str, str]
    period_m: float
    gamma: float
    bilayers: int
    capping: tuple[str, float] | None
    substrate: str
    densities: Mapping[str, float] | None

    def __post_init__(self) -> None:
        cap_m = 0.0 if self.capping is None else self.capping[1]
        ok_n = isinstance(self.bilayers, int) and self.bilayers >= 1
        _require(
            {
                "period_m must be > 0": math.isfinite(self.period_m) and self.period_m > 0,
                "gamma must be in [0, 1]": 0.0 <= self.gamma <= 1.0,
                "bilayers must be an int >= 1": ok_n,
                "capping thickness must be >= 0 m": math.isfinite(cap_m) and cap_m >= 0,
            }
        )

    def layers(
        self, index: Callable[[str, float | None], Any]
    ) -> tuple[list[Any], list[float], Any]:
        """Indices (top first), thicknesses and substrate index, from ``index → δ + iβ``."""
        dens = dict(self.densities or {})
        cache: dict[str, Any] = {}

        def n_of(formula: str) -> Any:
            if formula not in cache:
                c = index(formula, dens.get(formula))
                cache[formula] = 1.0 - np.real(c) + 1j * np.imag(c)  # n = 1 − δ + iβ
            return cache[formula]

        n_layers = [n_of(self.capping[0])] if self.capping else []
        thickness = [float(self.capping[1])] if self.capping else []
        for _ in range(self.bilayers):
            n_layers += [n_of(self.pair[1]), n_of(self.pair[0])]
            thickness += [(1.0 - self.gamma) * self.period_m, self.gamma * self.period_m]
        return n_layers, thickness, n_of(self.substrate)

    @property
    def method(self) -> str:
        return (
            f"Parratt recursion ({PARRATT_SOURCE}) with Névot–Croce roughness "
            f"({NEVOT_CROCE_SOURCE}) for [{self.pair[1]}/{self.pair[0]}]×{self.bilayers}, "
            f"period {self.period_m * 1e9:.4g} nm, Γ = {self.gamma:.3g}; δ, β: {HENKE_SOURCE}"
        )


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
    """
    design = _Periodic(pair, period_m, gamma, bilayers, capping, substrate, densities_g_cm3)
    _check(incidence_rad, wavelength_m, polarisation, roughness_m)
    stack = design.layers(lambda f, rho: optical_constants(f, rho, wavelength_m))
    r_s, r_p = parratt_amplitudes(*stack, incidence_rad, wavelength_m, roughness_m=roughness_m)
    rs, rp = complex(r_s), complex(r_p)
    return MultilayerReflectivity(float(_mix(polarisation, rs, rp)), rs, rp, design.method)


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
    scan: Literal["wavelength", "angle"] = "wavelength",
    span: float | None = None,
    points: int = 801,
) -> MultilayerPeak:
    """Peak reflectivity, its position and FWHM bandwidth of a periodic multilayer.

    Parameters
    ----------
    pair, period_m, gamma, bilayers, capping, substrate, roughness_m, polarisation, densities_g_cm3
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
    design = _Periodic(pair, period_m, gamma, bilayers, capping, substrate, densities_g_cm3)
    _check(incidence_rad, wavelength_m, polarisation, roughness_m)
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
    x_peak, y_peak, fwhm = _peak_and_width(axis, _mix(polarisation, r_s, r_p))
    if scan == "wavelength":
        return MultilayerPeak(y_peak, x_peak, incidence_rad, fwhm, math.nan, scan, design.method)
    return MultilayerPeak(y_peak, wavelength_m, abs(x_peak), math.nan, fwhm, scan, design.method)
