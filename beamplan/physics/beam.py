"""Beam geometry: second-moment propagation, footprints, clipping, power density.

One transverse plane of the beam is described by its second moments: the rms
size ``<x²>^½``, the rms divergence ``<x'²>^½`` and the correlation
``<x x'>`` (zero at a waist). These propagate exactly through any first-order
optical system with ray-transfer (ABCD) matrix ``M`` as ``Σ → M Σ Mᵀ`` with
``Σ = [[<x²>, <xx'>], [<xx'>, <x'²>]]``: the second-moment method of
ISO 11146-1:2021 (laser beam widths, divergence angles and beam propagation
ratios), which holds for a Gaussian beam of any beam-quality factor M² and
for partially coherent beams alike (A. E. Siegman, *Proc. SPIE* 1224 (1990) 2).
Planes are independent (no coupling optics), so a beam is two planes.

The planes are named by the mirror they hit: ``tangential`` lies in the plane
of incidence (the footprint stretches by ``1 / sin θ`` along it) and
``sagittal`` across it. Pure functions, SI units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = [
    "FWHM_PER_RMS",
    "PlaneBeam",
    "accepted_fraction",
    "clipped_fraction_1d",
    "drift",
    "footprint_rms_m",
    "gaussian_divergence_rad",
    "grazing_focal_lengths_m",
    "magnify",
    "peak_density_w_m2",
    "surface_peak_density_w_m2",
    "thin_lens",
]

#: FWHM of a Gaussian over its rms width, 2 √(2 ln 2) (common practice).
FWHM_PER_RMS = 2.0 * math.sqrt(2.0 * math.log(2.0))


@dataclass(frozen=True)
class PlaneBeam:
    """Second moments of one transverse plane.

    Attributes
    ----------
    size_m
        rms size ``<x²>^½``, m.
    divergence_rad
        rms divergence ``<x'²>^½``, rad.
    correlation_m_rad
        ``<x x'>``, m·rad: zero at a waist, positive when the beam grows.

    Examples
    --------
    >>> PlaneBeam(100e-6, 20e-6).waist_distance_m
    0.0
    """

    size_m: float
    divergence_rad: float
    correlation_m_rad: float = 0.0

    def __post_init__(self) -> None:
        if not (self.size_m >= 0.0 and self.divergence_rad >= 0.0):
            raise ValueError("a beam's rms size and divergence must be zero or positive")
        if not math.isfinite(self.size_m + self.divergence_rad + self.correlation_m_rad):
            raise ValueError("a beam's moments must be finite")

    @property
    def waist_distance_m(self) -> float:
        """Distance from here to the waist (negative: the waist lies behind).

        ``-<xx'> / <x'²>`` (ISO 11146-1 second moments); 0 for a beam without
        divergence.

        Examples
        --------
        >>> round(drift(PlaneBeam(1e-4, 1e-5), 3.0).waist_distance_m, 12)
        -3.0
        """
        if self.divergence_rad == 0.0 or self.correlation_m_rad == 0.0:
            return 0.0
        return -self.correlation_m_rad / self.divergence_rad**2

    @property
    def emittance_m_rad(self) -> float:
        """rms emittance ``√(<x²><x'²> − <xx'>²)``, invariant in drifts and thin lenses.

        Examples
        --------
        >>> round(PlaneBeam(1e-4, 1e-5).emittance_m_rad, 15)
        1e-09
        """
        det = (self.size_m * self.divergence_rad) ** 2 - self.correlation_m_rad**2
        return math.sqrt(max(det, 0.0))


def _transfer(beam: PlaneBeam, a: float, b: float, c: float, d: float) -> PlaneBeam:
    """``Σ → M Σ Mᵀ`` for ``M = [[a, b], [c, d]]``."""
    xx, xp, pp = beam.size_m**2, beam.correlation_m_rad, beam.divergence_rad**2
    xx2 = a * a * xx + 2.0 * a * b * xp + b * b * pp
    xp2 = a * c * xx + (a * d + b * c) * xp + b * d * pp
    pp2 = c * c * xx + 2.0 * c * d * xp + d * d * pp
    return PlaneBeam(math.sqrt(max(xx2, 0.0)), math.sqrt(max(pp2, 0.0)), xp2)


def drift(beam: PlaneBeam, length_m: float) -> PlaneBeam:
    """The beam after a free drift of ``length_m``.

    ``<x²>(L) = <x²> + 2 L <xx'> + L² <x'²>``: the ray-transfer matrix
    ``[[1, L], [0, 1]]`` applied to the second moments (ISO 11146-1; for a
    Gaussian beam from its waist this is ``w(z) = w0 √(1 + (z/z_R)²)``,
    A. E. Siegman, *Lasers*, University Science Books (1986), ch. 17).

    Examples
    --------
    >>> round(drift(PlaneBeam(100e-6, 20e-6), 10.0).size_m * 1e6, 3)
    223.607
    """
    if not (length_m >= 0.0 and math.isfinite(length_m)):
        raise ValueError(f"a drift length must be finite and not negative, got {length_m!r}")
    return _transfer(beam, 1.0, length_m, 0.0, 1.0)


def thin_lens(beam: PlaneBeam, focal_length_m: float) -> PlaneBeam:
    """The beam just after a thin focusing element of focal length ``f``.

    Ray-transfer matrix ``[[1, 0], [−1/f, 1]]`` (thin-lens formula; a
    negative ``f`` diverges). The size is unchanged; from a waist the new
    divergence is ``√(<x'²> + <x²>/f²)``.

    Examples
    --------
    >>> round(thin_lens(PlaneBeam(1e-3, 0.0), 10.0).divergence_rad * 1e6, 6)
    100.0
    """
    if focal_length_m == 0.0 or not math.isfinite(focal_length_m):
        raise ValueError(f"a focal length must be finite and not zero, got {focal_length_m!r}")
    return _transfer(beam, 1.0, 0.0, -1.0 / focal_length_m, 1.0)


def magnify(beam: PlaneBeam, magnification: float) -> PlaneBeam:
    """The beam through an ideal expander (telescope) of lateral magnification ``m``.

    Matrix ``[[m, 0], [0, 1/m]]``: size × m, divergence / m, emittance kept
    (an afocal telescope; common practice).

    Examples
    --------
    >>> b = magnify(PlaneBeam(1e-4, 2e-5), 4.0)
    >>> round(b.size_m * 1e6, 6), round(b.divergence_rad * 1e6, 6)
    (400.0, 5.0)
    """
    if not (magnification > 0.0 and math.isfinite(magnification)):
        raise ValueError(f"a magnification must be positive and finite, got {magnification!r}")
    return _transfer(beam, magnification, 0.0, 0.0, 1.0 / magnification)


def gaussian_divergence_rad(size_m: float, wavelength_m: float, m_squared: float = 1.0) -> float:
    """rms divergence of a Gaussian beam of rms waist size ``σ``: ``M² λ / (4 π σ)``.

    From ``w0 θ0 = M² λ / π`` with ``w = 2σ`` and ``θ = 2σ'`` (Siegman,
    *Lasers* (1986), ch. 17; ISO 11146-1 beam propagation ratio).

    Examples
    --------
    >>> round(gaussian_divergence_rad(50e-6, 13.5e-9) * 1e6, 4)
    21.4859
    """
    if not (size_m > 0.0 and wavelength_m > 0.0 and m_squared >= 1.0):
        raise ValueError("size and wavelength must be positive and M² at least 1")
    return m_squared * wavelength_m / (4.0 * math.pi * size_m)


def grazing_focal_lengths_m(radius_m: float, grazing_rad: float) -> tuple[float, float]:
    """Tangential and sagittal focal lengths of a curved mirror at grazing incidence.

    Coddington's equations at incidence angle ``i`` from the normal give
    ``f_t = R cos i / 2`` and ``f_s = R / (2 cos i)``; with the grazing angle
    ``θ = 90° − i``: ``f_t = R sin θ / 2``, ``f_s = R / (2 sin θ)``
    (Coddington's equations for a spherical mirror; W. B. Peatman,
    *Gratings, Mirrors and Slits*, Gordon and Breach (1997), ch. 2, from
    memory; common practice).

    Examples
    --------
    >>> ft, fs = grazing_focal_lengths_m(1000.0, math.radians(2.0))
    >>> round(ft, 4), round(fs, 2)
    (17.4497, 14326.85)
    """
    if radius_m == 0.0 or not math.isfinite(radius_m) or not 0.0 < grazing_rad <= math.pi / 2:
        raise ValueError("a radius must be finite and not zero, the grazing angle in (0, 90°]")
    s = math.sin(grazing_rad)
    return radius_m * s / 2.0, radius_m / (2.0 * s)


def footprint_rms_m(size_m: float, grazing_rad: float) -> float:
    """rms length of a beam's footprint along a mirror: ``σ / sin θ`` (common practice).

    Examples
    --------
    >>> round(footprint_rms_m(100e-6, math.radians(5.0)) * 1e3, 4)
    1.1474
    """
    if not 0.0 < grazing_rad <= math.pi / 2:
        raise ValueError("the grazing angle must lie in (0, 90°]")
    return size_m / math.sin(grazing_rad)


def clipped_fraction_1d(size_m: float, aperture_m: float, offset_m: float = 0.0) -> float:
    """Fraction of a Gaussian (rms ``σ``) that falls OUTSIDE an aperture of full width ``a``.

    The aperture spans ``offset ± a/2``; the kept fraction is
    ``½ [erf((a/2 − o) / (σ√2)) + erf((a/2 + o) / (σ√2))]`` (the normal
    distribution's cumulative function; common practice).

    Examples
    --------
    >>> round(clipped_fraction_1d(1.0, 2.0), 6)  # ±1σ keeps 68.27 %
    0.317311
    """
    if aperture_m < 0.0:
        raise ValueError("an aperture must not be negative")
    if size_m <= 0.0:
        return 0.0 if abs(offset_m) < aperture_m / 2.0 else 1.0
    r = size_m * math.sqrt(2.0)
    half = aperture_m / 2.0
    kept = 0.5 * (math.erf((half - offset_m) / r) + math.erf((half + offset_m) / r))
    return min(max(1.0 - kept, 0.0), 1.0)


def accepted_fraction(tangential_m: float, sagittal_m: float, grazing_rad: float,
                      length_m: float | None, width_m: float | None) -> float:
    """Fraction of a centred Gaussian beam that lands on a mirror of given length and width.

    Along the beam the mirror's length projects to ``L sin θ`` across it; the
    two planes are independent, so the kept fractions multiply. ``None``
    means unbounded in that direction.

    Examples
    --------
    >>> round(accepted_fraction(1e-4, 1e-4, math.radians(2.0), 0.01, None), 4)
    0.919
    """
    kept = 1.0
    if length_m is not None:
        kept *= 1.0 - clipped_fraction_1d(tangential_m, length_m * math.sin(grazing_rad))
    if width_m is not None:
        kept *= 1.0 - clipped_fraction_1d(sagittal_m, width_m)
    return kept


def peak_density_w_m2(power_w: float, size_x_m: float, size_y_m: float) -> float:
    """Peak intensity of an elliptical Gaussian beam across its axis: ``P / (2 π σx σy)``.

    Examples
    --------
    >>> round(peak_density_w_m2(1000.0, 1e-3, 1e-3) / 1e6, 4)  # W/mm²
    159.1549
    """
    if size_x_m <= 0.0 or size_y_m <= 0.0:
        raise ValueError("a peak density needs positive beam sizes")
    return power_w / (2.0 * math.pi * size_x_m * size_y_m)


def surface_peak_density_w_m2(power_w: float, tangential_m: float, sagittal_m: float,
                              grazing_rad: float) -> float:
    """Peak power per area on a mirror's surface: ``P sin θ / (2 π σt σs)``.

    The footprint stretches by ``1 / sin θ`` along the tangential plane
    (:func:`footprint_rms_m`), so the surface density falls by ``sin θ``. Use
    the incident power for the incident density and the absorbed power for
    the absorbed density (the absorptance is uniform over the footprint).

    Examples
    --------
    >>> round(surface_peak_density_w_m2(1000.0, 1e-3, 1e-3, math.pi / 2) / 1e6, 4)
    159.1549
    """
    return peak_density_w_m2(power_w, footprint_rms_m(tangential_m, grazing_rad), sagittal_m)
