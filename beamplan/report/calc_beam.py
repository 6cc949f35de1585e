"""The ``beamplan calc beam`` document: a beam on one grazing mirror, in the calc/2 shape.

The beam leaves a waist with given rms sizes and divergences per plane
(tangential: in the mirror's plane of incidence; sagittal: across it),
drifts to the mirror and lands at a grazing angle. Per (distance, grazing
angle) the document gives the beam at the mirror, its footprint, the part
that the mirror's length and width accept, the peak incident and absorbed
power densities on the surface, the first-order thermal slope error, and,
when the mirror focuses, the beam it sends on. The physics is
:mod:`beamplan.physics.beam` and :mod:`beamplan.physics.thermal`; this module
only calls it. The shape is documented in docs/calculators.md.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from beamplan.report.calc import Given, _f, _head

__all__ = ["BeamInput", "beam_document"]

_METHOD = ("second moments through a drift, Σ → M Σ Mᵀ (ISO 11146-1); footprint σ/sin θ; "
           "clipping of a Gaussian by erf; surface peak density P sin θ/(2π σt σs); "
           "focal lengths of a curved mirror by Coddington's equations, thin lens; "
           "thermal slope √(2π) α q0 ℓ/k from the through-thickness bending κ = α q/k of a "
           "plate heated on one face (Timoshenko, J. Opt. Soc. Am. 11 (1925) 233)")


@dataclass(frozen=True)
class BeamInput:
    """A beam at its waist and the mirror it lands on (SI).

    ``size_m`` and ``divergence_rad`` are rms (tangential, sagittal).
    ``focal_m`` is the mirror's focal length per plane, or None for a flat
    mirror; ``radius_m`` says that it came from a radius of curvature
    (Coddington's equations at each grazing angle) instead. A mirror length
    or width of None is unbounded.
    """

    size_m: tuple[float, float]
    divergence_rad: tuple[float, float]
    power_w: float
    absorptance: float
    substrate: str
    mirror_length_m: float | None = None
    mirror_width_m: float | None = None
    radius_m: float | None = None
    focal_m: tuple[float, float] | None = None
    widths: str = "rms"
    wavelength_m: float | None = None
    m_squared: float | None = None


def _focus(beam: Any, focal_m: float | None) -> tuple[float | None, float | None, float | None]:
    """(divergence after, distance to the waist after (negative: virtual), waist size)."""
    from beamplan.physics.beam import thin_lens

    if focal_m is None:
        return None, None, None
    after = thin_lens(beam, focal_m)
    if after.divergence_rad == 0.0:  # a collimated beam out: no waist anywhere
        return 0.0, None, None
    waist = -after.correlation_m_rad / after.divergence_rad**2
    return after.divergence_rad, waist, after.emittance_m_rad / after.divergence_rad


def _point(b: BeamInput, distance: float, theta: float) -> dict[str, Any]:
    from beamplan.physics import beam as bm
    from beamplan.physics.thermal import thermal_estimate

    at = [bm.drift(bm.PlaneBeam(s, d), distance) for s, d in zip(b.size_m, b.divergence_rad,
                                                                 strict=True)]
    tangential, sagittal = at[0].size_m, at[1].size_m
    footprint = bm.footprint_rms_m(tangential, theta)
    accepted = bm.accepted_fraction(tangential, sagittal, theta, b.mirror_length_m,
                                    b.mirror_width_m)
    incident = bm.surface_peak_density_w_m2(b.power_w, tangential, sagittal, theta)
    absorbed = b.absorptance * incident
    heat = thermal_estimate(absorbed, footprint, b.substrate)
    if b.radius_m is not None:
        focal: tuple[float, float] | None = bm.grazing_focal_lengths_m(b.radius_m, theta)
    else:
        focal = b.focal_m
    out = [_focus(beam, None if focal is None else focal[k]) for k, beam in enumerate(at)]
    on_mirror = b.power_w * accepted
    return {
        "distance_m": distance, "grazing_rad": theta, "grazing_deg": math.degrees(theta),
        "size_tangential_m": tangential, "size_sagittal_m": sagittal,
        "divergence_tangential_rad": at[0].divergence_rad,
        "divergence_sagittal_rad": at[1].divergence_rad,
        "footprint_rms_m": footprint, "footprint_fwhm_m": footprint * bm.FWHM_PER_RMS,
        "accepted_fraction": accepted, "clipped_fraction": 1.0 - accepted,
        "power_on_mirror_w": on_mirror, "absorbed_w": on_mirror * b.absorptance,
        "reflected_w": on_mirror * (1.0 - b.absorptance),
        "peak_incident_w_m2": incident, "peak_absorbed_w_m2": absorbed,
        "thermal_gradient_k_m": heat.gradient_k_m, "thermal_slope_rad": heat.slope_change_rad,
        "thermal_slope_rms_rad": heat.slope_rms_rad, "thermal_radius_m": _f(heat.radius_m),
        "focal_tangential_m": None if focal is None else focal[0],
        "focal_sagittal_m": None if focal is None else focal[1],
        "divergence_after_tangential_rad": out[0][0],
        "divergence_after_sagittal_rad": out[1][0],
        "waist_after_tangential_m": out[0][1], "waist_after_sagittal_m": out[1][1],
        "waist_size_after_tangential_m": out[0][2], "waist_size_after_sagittal_m": out[1][2],
    }


def _mm(metres: float) -> str:
    return f"{metres * 1e3:.4g} mm"


def beam_document(b: BeamInput, distance_m: Sequence[float], grazing_rad: Sequence[float],
                  *, given: Given | None = None) -> dict[str, Any]:
    """The beam on one mirror, one point per (distance, grazing angle), the angle fastest.

    Examples
    --------
    >>> b = BeamInput((1e-4, 1e-4), (2e-5, 2e-5), 1000.0, 0.2, "silicon")
    >>> doc = beam_document(b, [10.0], [math.radians(2.0)])
    >>> p = doc["points"][0]
    >>> round(p["size_tangential_m"] * 1e6, 3), round(p["peak_absorbed_w_m2"] / 1e6, 4)
    (223.607, 22.2177)
    """
    from beamplan.physics.thermal import substrate

    sub = substrate(b.substrate)
    points = [_point(b, d, t) for d, t in itertools.product(distance_m, grazing_rad)]
    if len(points) == 1:
        p = points[0]
        summary = (f"rms {_mm(p['size_tangential_m'])} × {_mm(p['size_sagittal_m'])} at "
                   f"{p['distance_m']:.4g} m; footprint {_mm(p['footprint_rms_m'])} rms at "
                   f"{p['grazing_deg']:.4g}°; {p['accepted_fraction']:.2%} accepted; peak "
                   f"{p['peak_incident_w_m2'] / 1e6:.4g} W/mm² incident, "
                   f"{p['peak_absorbed_w_m2'] / 1e6:.4g} W/mm² absorbed; thermal slope "
                   f"{p['thermal_slope_rad'] * 1e6:.4g} µrad ({b.substrate})")
    else:
        hot = max(points, key=lambda q: float(q["peak_absorbed_w_m2"]))
        low = min(points, key=lambda q: float(q["accepted_fraction"]))
        summary = (f"{len(points)} points; highest peak absorbed "
                   f"{hot['peak_absorbed_w_m2'] / 1e6:.4g} W/mm² and thermal slope "
                   f"{hot['thermal_slope_rad'] * 1e6:.4g} µrad at {hot['distance_m']:.4g} m, "
                   f"{hot['grazing_deg']:.4g}°; least accepted {low['accepted_fraction']:.2%}")
    inputs = {"size_tangential_m": b.size_m[0], "size_sagittal_m": b.size_m[1],
              "divergence_tangential_rad": b.divergence_rad[0],
              "divergence_sagittal_rad": b.divergence_rad[1], "widths": b.widths,
              "wavelength_m": b.wavelength_m, "m_squared": b.m_squared,
              "power_w": b.power_w, "absorptance": b.absorptance,
              "mirror_length_m": b.mirror_length_m, "mirror_width_m": b.mirror_width_m,
              "radius_m": b.radius_m,
              "focal_tangential_m": None if b.focal_m is None else b.focal_m[0],
              "focal_sagittal_m": None if b.focal_m is None else b.focal_m[1],
              "substrate": b.substrate, "conductivity_w_m_k": sub.conductivity_w_m_k,
              "expansion_per_k": sub.expansion_per_k, "substrate_temperature_k":
              sub.temperature_k, "substrate_source": sub.source}
    return {**_head("beam", given), "inputs": inputs, "points": points, "summary": summary,
            "method": _METHOD}
