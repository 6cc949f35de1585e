"""The ``beamplan calc demand`` and ``beamplan calc undulator`` calculators.

Shared machinery (the option recorder, physics errors, printing) is in
:mod:`beamplan.cli.calc`; argument readers in :mod:`beamplan.cli.calc_args`.
"""

from __future__ import annotations

import argparse
from typing import Any

from beamplan.cli import calc_args as A
from beamplan.cli.calc import FRACTION, PhysicsError, Recorder, leaf, run
from beamplan.errors import UsageError

__all__ = ["add_demand", "add_undulator"]

_SIZE = A.Bounds(0.0, 1.0, "(0, 1 m]", low_open=True)
_TIME = A.Bounds(0.0, 1e5, "[0, 100000 s]")
_SPEED = A.Bounds(1e-3, 100.0, "[1 mm/s, 100 m/s]")
_DOSE = A.Bounds(0.1, 1e5, "[0.01 mJ/cm^2, 10 J/cm^2]")
_WPH = A.Bounds(0.01, 1e4, "[0.01, 10000] wph")
_POWER = A.Bounds(0.0, 1e7, "[0, 10 MW]")
_WAVELENGTH = A.Bounds(0.0, 1.0, "(0, 1 m]", low_open=True)

# Per ScannerTool field: unit and scale for --help, and the range (a count: its largest
# value). The option name, dimension and wording come from the scanner keys of
# beamplan.layout.spec (``--`` + the layout key); the field width and length are --field.
_TOOL_DISPLAY: dict[str, tuple[str, float, Any]] = {
    "fields_per_wafer": ("", 1.0, 10_000), "slit_height_m": ("mm", 1e3, _SIZE),
    "wafer_overhead_s": ("s", 1.0, _TIME), "field_overhead_s": ("s", 1.0, _TIME),
    "stage_max_speed_m_s": ("m/s", 1.0, _SPEED), "mirror_reflections": ("", 1.0, 100),
    "mirror_reflectivity": ("", 1.0, FRACTION), "mask_reflectivity": ("", 1.0, FRACTION),
    "pellicle_transmission": ("", 1.0, FRACTION), "other_losses_factor": ("", 1.0, FRACTION),
    "dose_control_margin": ("", 1.0, FRACTION),
}


def _tool_options() -> tuple[tuple[str, str, str | None, str, str, float, Any], ...]:
    """(field, option, dimension or None for a count, doc, unit, scale, range) per tool key."""
    from beamplan.layout.spec import SECTIONS

    return tuple((spec.tool, "--" + spec.name.replace("_", "-"),
                  None if spec.type == "int" else spec.dimension, spec.doc,
                  *_TOOL_DISPLAY[spec.tool])
                 for spec in SECTIONS["scanner"] if spec.tool in _TOOL_DISPLAY)


_TOOL_OPTIONS = _tool_options()
_FLOOR_OPTIONS = (("critical-area", "area", A.Bounds(0.0, 1e-6, "(0, 1 mm^2]", low_open=True)),
                  ("absorption", "absorption",
                   A.Bounds(0.0, 1e12, "(0, 1/pm]", low_open=True)),
                  ("thickness", "length", A.Bounds(0.0, 1e-3, "(0, 1 mm]", low_open=True)),
                  ("noise", "fraction", A.Bounds(0.0, 1.0, "(0, 1]", low_open=True)))


def _default_text(tool: Any, name: str, unit: str, scale: float) -> str:
    return f"{getattr(tool, name) * scale:g}{unit}"


def _tool(r: Recorder) -> Any:
    from beamplan.physics.demand import ScannerTool

    default = ScannerTool()
    values: dict[str, Any] = {}
    field = r.text("field")
    if field is not None:
        if r.text("field-width") is not None or r.text("field-length") is not None:
            raise UsageError("--field sets width and length; drop --field-width/--field-length")
        width, colon, length = A.screen(field, "--field").partition(":")
        if not colon:
            raise UsageError(f"--field: expected WIDTH:LENGTH such as 26mm:33mm, got "
                             f"{A.excerpt(field)}")
        values["field_width_m"] = A.quantity(width, "length", "--field", _SIZE)
        values["field_length_m"] = A.quantity(length, "length", "--field", _SIZE)
    else:
        for name, option in (("field_width_m", "field-width"),
                             ("field_length_m", "field-length")):
            text = r.text(option)
            if text is None:
                r.defaults[option] = _default_text(default, name, "mm", 1e3)
            else:
                values[name] = A.quantity(text, "length", f"--{option}", _SIZE)
    for name, option, dimension, _, unit, scale, bounds in _TOOL_OPTIONS:
        text = r.text(option[2:])
        if text is None:  # the model's own default, shown as text
            r.defaults[option[2:]] = _default_text(default, name, unit, scale)
        elif dimension is None:
            values[name] = A.count(text, option, 0 if name == "mirror_reflections" else 1,
                                   bounds)
        else:
            values[name] = A.quantity(text, dimension, option, bounds)
    try:
        return ScannerTool(**values)
    except ValueError as exc:  # name the option whose value the tool refused
        options = {"field_width_m": "--field-width", "field_length_m": "--field-length",
                   **{name: option for name, option, *_ in _TOOL_OPTIONS}}
        named = next((o for n, o in options.items() if str(exc).startswith(n)), "")
        raise PhysicsError(f"{named}: {exc}" if named else str(exc)) from exc


def _demand(args: argparse.Namespace) -> int:
    from beamplan.report.calc import StochasticFloor, demand_document

    r = Recorder(args)
    dose = A.quantity(r.need("dose", ""), "dose", "--dose", _DOSE)
    wph_text, power_text = r.text("wph"), r.text("power")
    wph = None if wph_text is None else A.quantity(wph_text, "rate", "--wph", _WPH,
                                                   plain_unit="wph")
    power = None if power_text is None else A.quantity(power_text, "power", "--power", _POWER)
    wavelength = A.quantity(r.need("wavelength", "13.5nm"), "length", "--wavelength",
                            _WAVELENGTH)
    texts = {o: r.text(o) for o, _, _ in _FLOOR_OPTIONS}
    floor = None
    if any(t is not None for t in texts.values()):
        missing = [f"--{o}" for o, t in texts.items() if t is None]
        if missing:
            every = ", ".join(f"--{o}" for o, _, _ in _FLOOR_OPTIONS)
            raise UsageError(f"the stochastic floor needs {every}; missing {', '.join(missing)}")
        floor = StochasticFloor(*(A.quantity(str(texts[o]), d, f"--{o}", b)
                                  for o, d, b in _FLOOR_OPTIONS))
    tool = _tool(r)
    return run(args, lambda: demand_document(tool, dose, wafers_per_hour=wph, if_power_w=power,
                                             wavelength_m=wavelength, stochastic=floor,
                                             given=r.given()))


def _undulator(args: argparse.Namespace) -> int:
    from beamplan.report.calc import undulator_document

    r = Recorder(args)
    energy = A.quantity(r.need("energy", ""), "electron energy", "--energy",
                        A.Bounds(510998.95, 1e14, "[0.511 MeV, 100 TeV]"))
    period = A.quantity(r.need("period", ""), "length", "--period",
                        A.Bounds(1e-3, 10.0, "[1 mm, 10 m]"))
    k_text, field_text = r.text("k"), r.text("field")
    target_text, check_text = r.text("target"), r.text("check")
    k = None if k_text is None else A.plain(k_text, "--k", A.Bounds(0.0, 100.0, "[0, 100]"))
    field = None if field_text is None else A.quantity(
        field_text, "magnetic field", "--field", A.Bounds(0.0, 20.0, "[0, 20 T]"))
    target = None if target_text is None else A.quantity(target_text, "length", "--target",
                                                         _WAVELENGTH)
    check = None if check_text is None else A.quantity(check_text, "length", "--check",
                                                       _WAVELENGTH)
    if target is not None and (k is not None or field is not None):
        raise UsageError("--target finds K: drop --k/--field (or use --check to test them)")
    if target is None and k is None and field is None:
        raise UsageError("give --k or --field (or --target to find the K needed)")
    tolerance_text = r.text("tolerance")
    if check is None and (tolerance_text is not None or args.tunable):
        raise UsageError("--tolerance and --tunable go with --check")
    if check is not None:
        tolerance_text = r.need("tolerance", "1%")
    tolerance = 0.01 if tolerance_text is None else A.quantity(tolerance_text, "fraction",
                                                               "--tolerance", FRACTION)
    harmonic = A.count(r.need("harmonic", "1"), "--harmonic", 1, 999)
    if harmonic % 2 == 0:
        raise UsageError(f"--harmonic: {harmonic} is even; only odd harmonics radiate on axis")
    return run(args, lambda: undulator_document(
        energy, period, k=k, peak_field_t=field, target_m=target, check_m=check,
        harmonic=harmonic, tolerance=tolerance, tunable=args.tunable, given=r.given()))


def add_demand(calcs: Any) -> None:
    """Add ``calc demand`` to the calculators' subparsers."""
    from beamplan.physics.demand import ScannerTool

    tool = ScannerTool()
    p = leaf(calcs, "demand", "IF power for a dose and throughput, or throughput at a power",
             "Scanner demand: the EUV power needed at IF for a dose and a wafers-per-hour "
             "target (--wph), or the throughput reached with a power at IF (--power), and "
             "whether the source or the stage sets it. A target beyond the stage exits 1.",
             _demand)
    p.add_argument("--dose", required=True, metavar="DOSE",
                   help="recipe dose at the wafer, e.g. 30mJ/cm^2")
    mode = p.add_mutually_exclusive_group(required=True)
    mode.add_argument("--wph", metavar="RATE",
                      help="throughput target, wafers per hour (150 or 150wph)")
    mode.add_argument("--power", metavar="POWER", help="power delivered at IF, e.g. 300W")
    p.add_argument("--wavelength", metavar="LENGTH",
                   help="wavelength for the photon energy of the floor (default 13.5nm)")
    p.add_argument("--field", metavar="WIDTH:LENGTH",
                   help=f"exposure field (default {tool.field_width_m * 1e3:g}mm:"
                   f"{tool.field_length_m * 1e3:g}mm); the width is also the slit length")
    p.add_argument("--field-width", metavar="LENGTH",
                   help=f"field width (default {tool.field_width_m * 1e3:g} mm)")
    p.add_argument("--field-length", metavar="LENGTH",
                   help=f"field length (default {tool.field_length_m * 1e3:g} mm)")
    for name, option, dimension, what, unit, scale, _ in _TOOL_OPTIONS:
        default = f"{getattr(tool, name) * scale:g}{' ' + unit if unit else ''}"
        p.add_argument(option, metavar="N" if dimension is None else dimension.upper(),
                       help=f"{what} (default {default})")
    floor = p.add_argument_group("stochastic dose floor (give all four, or none)")
    floor.add_argument("--critical-area", metavar="AREA", help="critical area, e.g. 400nm^2")
    floor.add_argument("--absorption", metavar="PER_LENGTH",
                       help="resist absorption coefficient, e.g. 5/um")
    floor.add_argument("--thickness", metavar="LENGTH", help="resist thickness, e.g. 40nm")
    floor.add_argument("--noise", metavar="FRACTION",
                       help="tolerated relative shot noise, e.g. 5%%")


def add_undulator(calcs: Any) -> None:
    """Add ``calc undulator`` to the calculators' subparsers."""
    p = leaf(calcs, "undulator", "planar-undulator resonance: wavelength, K needed, or check",
             "Planar-undulator resonance. With --k or --field: the resonant wavelength. "
             "With --target: the K and peak field that reach it. With --check and --k or "
             "--field: whether that wavelength is reachable (exit 1 when not).", _undulator)
    p.add_argument("--energy", required=True, metavar="ENERGY",
                   help="total electron energy, e.g. 1GeV")
    p.add_argument("--period", required=True, metavar="LENGTH", help="undulator period, e.g. 2.8cm")
    strength = p.add_mutually_exclusive_group()
    strength.add_argument("--k", metavar="K", help="deflection parameter K (a plain number)")
    strength.add_argument("--field", metavar="FIELD", help="peak on-axis field, e.g. 0.9T")
    goal = p.add_mutually_exclusive_group()
    goal.add_argument("--target", metavar="LENGTH",
                      help="wavelength to reach: report the K and field needed")
    goal.add_argument("--check", metavar="LENGTH",
                      help="declared wavelength: is it reachable with --k/--field?")
    p.add_argument("--harmonic", metavar="N", help="odd harmonic (default 1)")
    p.add_argument("--tolerance", metavar="FRACTION",
                   help="relative tolerance of --check (default 1%%)")
    p.add_argument("--tunable", action="store_true",
                   help="with --check: treat --k/--field as the largest the gap allows")
