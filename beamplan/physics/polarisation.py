"""Polarisation at a mirror: how much of a beam is s-polarised for a geometry.

Method: Malus's law (common practice). The polarised part of the beam splits
between s and p as ``sin²`` and ``cos²`` of the angle between its E-field and
the mirror's plane of incidence; the unpolarised part splits evenly. The
result feeds the ``polarisation`` argument of
:func:`beamplan.physics.optics.mirror_reflectivity`. Angles in radians.
"""

from __future__ import annotations

import math

__all__ = ["s_fraction", "s_polarisation"]


def _finite(value: float, name: str, *, low: float = -math.inf, high: float = math.inf) -> float:
    """``value`` as a float; ValueError unless finite and in [low, high]."""
    number = float(value)
    if not math.isfinite(number) or not low <= number <= high:
        raise ValueError(f"{name} must be a finite number in [{low:g}, {high:g}], got {value!r}")
    return number


def s_fraction(
    polarisation_degree: float, polarisation_angle_rad: float, mirror_plane_angle_rad: float
) -> float:
    """Fraction of a beam's intensity that is s-polarised at a mirror.

    Geometry, looking along the beam: the E-field of the polarised part (major
    axis of the polarisation ellipse) is at ``polarisation_angle_rad`` from a
    transverse reference axis (e.g. the lab horizontal); the mirror's plane of
    incidence (holding the incoming and reflected rays) crosses the transverse
    plane along a line at ``mirror_plane_angle_rad`` from the same axis. The
    E-field is then at ``α = polarisation_angle_rad − mirror_plane_angle_rad``
    to the plane of incidence; its s component (perpendicular to that plane)
    carries ``sin² α`` of the polarised intensity, and the unpolarised part
    splits evenly between s and p.

    Parameters
    ----------
    polarisation_degree
        Degree of linear polarisation P of the source, in [0, 1].
    polarisation_angle_rad
        Angle of the E-field to the reference axis, rad.
    mirror_plane_angle_rad
        Angle of the plane of incidence to the reference axis, rad.

    Returns
    -------
    float
        ``f_s = (1 − P)/2 + P sin² α`` in [0, 1] (Malus's law; common practice).

    Examples
    --------
    A horizontally polarised undulator beam deflected sideways (horizontal
    plane of incidence) is p-polarised; deflected upwards it is s-polarised:

    >>> s_fraction(1.0, 0.0, 0.0), s_fraction(1.0, 0.0, math.pi / 2)
    (0.0, 1.0)
    >>> round(s_fraction(0.9, 0.0, math.radians(45)), 3)
    0.5
    """
    degree = _finite(polarisation_degree, "polarisation_degree", low=0.0, high=1.0)
    alpha = _finite(polarisation_angle_rad, "polarisation_angle_rad")
    alpha -= _finite(mirror_plane_angle_rad, "mirror_plane_angle_rad")
    return 0.5 * (1.0 - degree) + degree * math.sin(alpha) ** 2


def s_polarisation(
    polarisation_degree: float, polarisation_angle_rad: float, mirror_plane_angle_rad: float
) -> float:
    """The ``polarisation`` argument of :func:`mirror_reflectivity` for a geometry.

    Parameters are those of :func:`s_fraction`; returns ``2 f_s − 1 = −P cos 2α``
    in [-1, 1] (Malus's law; common practice).

    Examples
    --------
    >>> s_polarisation(1.0, 0.0, math.pi / 2), round(s_polarisation(0.8, 0.0, 0.0), 3)
    (1.0, -0.8)
    """
    f_s = s_fraction(polarisation_degree, polarisation_angle_rad, mirror_plane_angle_rad)
    return 2.0 * f_s - 1.0
