"""The ``beamplan calc beam`` calculator: a beam's footprint, density and thermal slope.

Shared machinery (the option recorder, physics errors, printing) is in
:mod:`beamplan.cli.calc`; argument readers in :mod:`beamplan.cli.calc_args`;
the document in :mod:`beamplan.report.calc_beam`.
"""

from __future__ import annotations

import argparse
from typing import Any

from beamplan.cli import calc_args as A
from beamplan.cli.calc import FRACTION, GRAZING, LENGTH, Recorder, _rows, _steps, leaf, run
from beamplan.errors import UsageError

__all__ = ["add_beam"]

_SIZE = A.Bounds(0.0, 1.0, "(0, 1 m]", low_open=True)
_DIVERGENCE = A.Bounds(0.0, 1.0, "[0, 1 rad]")
_MIRROR = A.Bounds(0.0, 100.0, "(0, 100 m]", low_open=True)
_POWER = A.Bounds(0.0, 1e7, "[0, 10 MW]")
_FOCAL = A.Bounds(-1e7, 1e7, "[-10000 km, 10000 km], not 0")
_WAVELENGTH = A.Bounds(0.0, 1e-3, "(0, 1 mm]", low_open=True)
_M2 = A.Bounds(1.0, 1000.0, "[1, 1000]")
_SCAN = " (scannable: a list 2,5,10 with units, or a range FROM..TO/POINTS)"
_PAIR = "; one value for both planes, or TANGENTIAL:SAGITTAL"


def _pair(text: str, option: str, read: Any) -> tuple[float, float]:
    """``A`` (both planes) or ``T:S``, each read by ``read(text, option)``."""
    first, colon, second = A.screen(text, option).partition(":")
    if colon and (not first.strip() or not second.strip() or ":" in second):
        raise UsageError(f"{option}: expected one value or TANGENTIAL:SAGITTAL such as "
                         f"100um:50um, got {A.excerpt(text)}")
    values = (read(first, option), read(second if colon else first, option))
    return values[0], values[1]


def _length_pair(text: str, option: str, dimension: str, bounds: A.Bounds) -> tuple[float, float]:
    return _pair(text, option, lambda t, o: A.quantity(t, dimension, o, bounds))


def _optional_length(r: Recorder, name: str) -> float | None:
    text = r.need(name, "none")
    if A.screen(text, f"--{name}").lower() == "none":
        return None
    return A.quantity(text, "length", f"--{name}", _MIRROR)


def _focal(r: Recorder) -> tuple[float | None, tuple[float, float] | None]:
    radius_text, focal_text = r.text("radius"), r.text("focal-length")

    def nonzero(t: str, o: str) -> float:
        value = A.quantity(t, "length", o, _FOCAL)
        if value == 0.0:
            raise UsageError(f"{o}: {A.excerpt(t)} is zero; a flat mirror has no "
                             f"{o[2:]}: leave the option out")
        return value

    if radius_text is not None:
        return nonzero(radius_text, "--radius"), None
    if focal_text is not None:
        return None, _pair(focal_text, "--focal-length", nonzero)
    return None, None


def _beam(args: argparse.Namespace) -> int:
    from beamplan.physics.beam import FWHM_PER_RMS, gaussian_divergence_rad
    from beamplan.physics.thermal import SUBSTRATES
    from beamplan.report.calc_beam import BeamInput, beam_document

    r = Recorder(args)
    steps = _steps(r)
    widths = A.screen(r.need("widths", "rms"), "--widths").lower()
    if widths not in ("rms", "fwhm"):
        raise UsageError(f"--widths: expected rms or fwhm, got {A.excerpt(widths)}")
    scale = 1.0 if widths == "rms" else 1.0 / FWHM_PER_RMS
    size = _length_pair(r.need("size", ""), "--size", "length", _SIZE)
    size = (size[0] * scale, size[1] * scale)
    divergence_text, wavelength_text = r.text("divergence"), r.text("wavelength")
    wavelength = m_squared = None
    if divergence_text is not None:
        if r.text("m2") is not None:
            raise UsageError("--m2 goes with --wavelength (a Gaussian beam), not --divergence")
        raw = _length_pair(divergence_text, "--divergence", "angle", _DIVERGENCE)
        divergence = (raw[0] * scale, raw[1] * scale)
    elif wavelength_text is not None:
        wavelength = A.quantity(wavelength_text, "length", "--wavelength", _WAVELENGTH)
        m2 = _pair(r.need("m2", "1"), "--m2", lambda t, o: A.plain(t, o, _M2))
        m_squared = m2[0] if m2[0] == m2[1] else None
        divergence = (gaussian_divergence_rad(size[0], wavelength, m2[0]),
                      gaussian_divergence_rad(size[1], wavelength, m2[1]))
    else:
        raise UsageError("give --divergence, or --wavelength (and --m2) for a Gaussian beam")
    distance = A.scan(r.need("distance", ""), "length", "--distance", steps, LENGTH)
    grazing = A.scan(r.need("grazing", ""), "angle", "--grazing", steps, GRAZING)
    if steps is not None and "range" not in (distance.kind, grazing.kind):
        raise UsageError("--steps: no option holds a range FROM..TO to give points to")
    _rows(len(distance.values), len(grazing.values))
    power = A.quantity(r.need("power", ""), "power", "--power", _POWER)
    reflectivity_text, absorptance_text = r.text("reflectivity"), r.text("absorptance")
    if absorptance_text is not None:
        absorptance = A.quantity(absorptance_text, "fraction", "--absorptance", FRACTION)
    else:
        absorptance = 1.0 - A.quantity(str(reflectivity_text), "fraction", "--reflectivity",
                                       FRACTION)
    radius, focal = _focal(r)
    length, width = _optional_length(r, "mirror-length"), _optional_length(r, "mirror-width")
    substrate = A.screen(r.need("substrate", "silicon"), "--substrate")
    if substrate not in SUBSTRATES:
        raise UsageError(f"--substrate: {A.excerpt(substrate)} is not known; give one of "
                         f"{', '.join(sorted(SUBSTRATES))}")
    b = BeamInput(size, divergence, power, absorptance, substrate, length, width, radius, focal,
                  widths, wavelength, m_squared)
    return run(args, lambda: beam_document(b, distance.values, grazing.values, given=r.given()))


def add_beam(calcs: Any) -> None:
    """Add ``calc beam`` to the calculators' subparsers."""
    from beamplan.physics.thermal import SUBSTRATES

    p = leaf(calcs, "beam", "footprint, power density, clipping and thermal slope on a mirror",
             "A beam from its waist (rms or FWHM size and divergence per plane, or a Gaussian "
             "beam from its size, wavelength and M²) drifts to a grazing-incidence mirror: "
             "the beam size there, the footprint, the fraction the mirror accepts, the peak "
             "incident and absorbed power density, the first-order thermal slope error and, "
             "for a curved mirror, the beam it sends on. Tangential is the mirror's plane of "
             "incidence, sagittal across it.", _beam)
    p.add_argument("--size", required=True, metavar="LENGTH",
                   help="beam size at the waist, e.g. 100um or 100um:60um" + _PAIR)
    p.add_argument("--widths", metavar="WORD",
                   help="rms or fwhm: how --size and --divergence are given (default rms)")
    spread = p.add_mutually_exclusive_group()
    spread.add_argument("--divergence", metavar="ANGLE",
                        help="divergence at the waist, e.g. 20urad" + _PAIR)
    spread.add_argument("--wavelength", metavar="LENGTH",
                        help="a Gaussian beam: divergence M² λ/(4π σ) from --size, e.g. 13.5nm")
    p.add_argument("--m2", metavar="N",
                   help="beam quality M² with --wavelength, a plain number >= 1 (default 1)")
    p.add_argument("--distance", required=True, metavar="LENGTH",
                   help="from the waist to the mirror, e.g. 20m" + _SCAN)
    p.add_argument("--grazing", required=True, metavar="ANGLE",
                   help="grazing angle at the mirror, e.g. 2deg" + _SCAN)
    p.add_argument("--mirror-length", metavar="LENGTH",
                   help="mirror length along the beam (default none: unbounded)")
    p.add_argument("--mirror-width", metavar="LENGTH",
                   help="mirror width across the beam (default none: unbounded)")
    p.add_argument("--power", required=True, metavar="POWER",
                   help="power of the beam arriving at the mirror, e.g. 5kW")
    share = p.add_mutually_exclusive_group(required=True)
    share.add_argument("--reflectivity", metavar="FRACTION",
                       help="mirror reflectivity; the rest is absorbed")
    share.add_argument("--absorptance", metavar="FRACTION",
                       help="the fraction of the power on the mirror that it absorbs")
    focus = p.add_mutually_exclusive_group()
    focus.add_argument("--radius", metavar="LENGTH",
                       help="radius of curvature of a curved mirror (focal lengths by "
                       "Coddington's equations; negative: convex)")
    focus.add_argument("--focal-length", metavar="LENGTH",
                       help="focal length of the mirror" + _PAIR + " (negative: diverging)")
    p.add_argument("--substrate", metavar="NAME",
                   help=f"{', '.join(sorted(SUBSTRATES))} (default silicon)")
    p.add_argument("--steps", metavar="N",
                   help=f"number of points of a range written FROM..TO without /POINTS "
                   f"(2 to {A.MAX_ROWS:,})")
