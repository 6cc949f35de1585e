"""Stand-alone physics calculators: ``beamplan calc reflect|multilayer|gas|demand|undulator``.

Options that are quantities take a number with a unit (``5deg``, ``2 Pa``),
read by :func:`beamplan.units.parse_quantity`; a bad value is a usage error
(exit 2) that names the option. Options marked "or a range" also take
``START:STOP:STEP`` (the stop is included when it lands on a step) or a list
``A,B,C``; each value becomes a row. Physics that says no (a target beyond
the stage, an unreachable wavelength, a wavelength outside the tables) exits 1
with one line. ``--json`` prints the JSON document and nothing else.
Everything heavy (numpy, periodictable, rich) is imported only when used.
"""

from __future__ import annotations

import argparse
import math
import re
import sys
from collections.abc import Callable
from typing import Any

from beamplan.errors import BeamplanError, ExitCode, UsageError

__all__ = ["register"]

_BARE_NUMBER = re.compile(r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*$")
_MAX_ROWS = 10_000
_RANGE = " (or a range START:STOP:STEP, or a list A,B,C)"


class PhysicsError(BeamplanError):
    """The physics says no (impossible target, bad physical input): exit code 1."""

    exit_code = ExitCode.INVALID


def _quantity(text: str, dimension: str, option: str, plain_unit: str | None = None) -> float:
    """``text`` in SI; a bare number needs ``plain_unit`` (fractions excepted)."""
    from beamplan.units import DIMENSIONS, UnitError, parse_quantity

    if _BARE_NUMBER.match(text) and dimension != "fraction":
        if plain_unit is None:
            raise UsageError(f"{option}: {text.strip()!r} has no unit; write e.g. "
                             f"'{DIMENSIONS[dimension].example}'")
        text = f"{text.strip()} {plain_unit}"
    try:
        return parse_quantity(text, dimension)
    except UnitError as exc:
        raise UsageError(f"{option}: {exc.message}" + (f"; {exc.hint}" if exc.hint else "")) \
            from exc


def _values(text: str, dimension: str, option: str) -> list[float]:
    """One value, a range ``START:STOP:STEP`` or a list ``A,B,C``, in SI units."""
    if ":" in text:
        parts = text.split(":")
        if len(parts) != 3:
            raise UsageError(f"{option}: a range is START:STOP:STEP, got {text!r}")
        start, stop, step = (_quantity(p, dimension, option) for p in parts)
        span = stop - start
        if step == 0.0 or (span != 0.0 and (span > 0) != (step > 0)):
            raise UsageError(f"{option}: the step {parts[2]!r} does not lead from "
                             f"{parts[0]!r} to {parts[1]!r}")
        steps = span / step
        count = math.floor(steps + 1e-9) + 1
        if count > _MAX_ROWS:
            raise UsageError(f"{option}: {count} values is too many (at most {_MAX_ROWS})")
        values = [start + i * step for i in range(count)]
        if abs(steps - round(steps)) <= 1e-9 * max(1.0, abs(steps)):
            values[-1] = stop  # the stop lands on a step: take it exactly
        return values
    if "," in text:
        return [_quantity(p, dimension, option) for p in text.split(",")]
    return [_quantity(text, dimension, option)]


def _plain(text: str, option: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise UsageError(f"{option}: expected a plain number, got {text!r}") from None
    if not math.isfinite(value):
        raise UsageError(f"{option}: expected a finite number, got {text!r}")
    return value


def _pair(text: str, sep: str, option: str, shape: str) -> tuple[str, str]:
    left, mid, right = text.rpartition(sep)
    if not mid or not left.strip() or not right.strip():
        raise UsageError(f"{option}: expected {shape}, got {text!r}")
    return left.strip(), right.strip()


def _rows(*counts: int) -> None:
    if math.prod(counts) > _MAX_ROWS:
        raise UsageError(f"{' × '.join(map(str, counts))} rows is too many (at most {_MAX_ROWS})")


def _run(args: argparse.Namespace, build: Callable[[], dict[str, Any]]) -> int:
    """Build the document (physics errors become exit 1) and print it."""
    from beamplan.report import calc as report

    try:
        document = build()
    except ValueError as exc:  # DemandError, ResonanceError and bad physical input
        message = " ".join(str(exc).split()).replace("pass density_g_cm3", "give --density")
        raise PhysicsError(message) from exc
    if args.json:
        sys.stdout.write(report.calc_json(document))
        sys.stdout.flush()
    else:
        from beamplan.cli.commands import _console
        from beamplan.report.calc_view import calc_renderable

        _console().print(calc_renderable(document))
    result = document.get("result", {})
    return int(ExitCode.INVALID if result.get("reachable") is False else ExitCode.OK)


def _reflect(args: argparse.Namespace) -> int:
    from beamplan.report.calc import reflect_document

    grazing = _values(args.grazing, "angle", "--grazing")
    wavelength = _values(args.wavelength, "length", "--wavelength")
    _rows(len(grazing), len(wavelength))
    density = None if args.density is None else _quantity(args.density, "density", "--density")
    delta_beta = None
    if args.delta_beta is not None:
        d, b = _pair(args.delta_beta, ",", "--delta-beta", "DELTA,BETA such as 0.1,0.017")
        delta_beta = (_plain(d, "--delta-beta"), _plain(b, "--delta-beta"))
    roughness = _quantity(args.roughness, "length", "--roughness")
    polarisation = _quantity(args.polarisation, "fraction", "--polarisation")
    return _run(args, lambda: reflect_document(
        args.coating, grazing, wavelength, density_g_cm3=density, roughness_m=roughness,
        polarisation=polarisation, delta_beta=delta_beta))


def _multilayer(args: argparse.Namespace) -> int:
    from beamplan.report.calc import multilayer_document

    pair = _pair(args.pair, "/", "--pair", "ABSORBER/SPACER such as Mo/Si")
    incidence = _values(args.incidence, "angle", "--incidence")
    wavelength = _values(args.wavelength, "length", "--wavelength")
    _rows(len(incidence), len(wavelength))
    if args.peak and len(incidence) != 1:
        raise UsageError("--peak scans the wavelength at one --incidence; give a single angle")
    capping = None
    if args.capping.strip().lower() != "none":
        formula, thickness = _pair(args.capping, ":", "--capping", "FORMULA:THICKNESS, e.g. Ru:2nm")
        capping = (formula, _quantity(thickness, "length", "--capping"))
    densities: dict[str, float] = {}
    for item in args.density or []:
        formula, value = _pair(item, "=", "--density", "FORMULA=DENSITY, e.g. Mo=10.2g/cm^3")
        densities[formula] = _quantity(value, "density", "--density")
    period = _quantity(args.period, "length", "--period")
    gamma = _quantity(args.gamma, "fraction", "--gamma")
    roughness = _quantity(args.roughness, "length", "--roughness")
    polarisation = _quantity(args.polarisation, "fraction", "--polarisation")
    return _run(args, lambda: multilayer_document(
        pair, period, gamma, args.bilayers, incidence, wavelength, capping=capping,
        substrate=args.substrate, roughness_m=roughness, polarisation=polarisation,
        densities_g_cm3=densities, peak=args.peak))


def _gas(args: argparse.Namespace) -> int:
    from beamplan.report.calc import gas_document

    pressure = _values(args.pressure, "pressure", "--pressure")
    length = _values(args.length, "length", "--length")
    _rows(len(pressure), len(length))
    temperature = _quantity(args.temperature, "temperature", "--temperature")
    wavelength = _quantity(args.wavelength, "length", "--wavelength")
    return _run(args, lambda: gas_document(args.gas, pressure, temperature, length, wavelength))


# ScannerTool field, option, dimension (None: an integer), what it is, unit and scale for --help.
_TOOL_OPTIONS: tuple[tuple[str, str, str | None, str, str, float], ...] = (
    ("fields_per_wafer", "--fields", None, "exposure fields per wafer", "", 1.0),
    ("slit_height_m", "--slit-height", "length", "slit height along the scan", "mm", 1e3),
    ("wafer_overhead_s", "--wafer-overhead", "time", "time per wafer not spent in fields",
     "s", 1.0),
    ("field_overhead_s", "--field-overhead", "time", "time per field not spent scanning",
     "s", 1.0),
    ("stage_max_speed_m_s", "--stage-speed", "speed", "maximum scan speed", "m/s", 1.0),
    ("mirror_reflections", "--reflections", None, "mirror reflections IF to wafer, mask "
     "excluded", "", 1.0),
    ("mirror_reflectivity", "--mirror-reflectivity", "fraction", "reflectivity of each mirror",
     "", 1.0),
    ("mask_reflectivity", "--mask-reflectivity", "fraction", "mask reflectivity", "", 1.0),
    ("pellicle_transmission", "--pellicle", "fraction", "pellicle transmission, one pass "
     "(crossed twice)", "", 1.0),
    ("other_losses_factor", "--other-losses", "fraction", "further transmission factor", "",
     1.0),
    ("dose_control_margin", "--dose-margin", "fraction", "share of IF power held back for dose "
     "control", "", 1.0),
)
_FLOOR_OPTIONS = (("critical_area", "--critical-area", "area"),
                  ("absorption", "--absorption", "absorption"),
                  ("thickness", "--thickness", "length"), ("noise", "--noise", "fraction"))


def _tool(args: argparse.Namespace) -> Any:
    from beamplan.physics.demand import ScannerTool

    values: dict[str, Any] = {}
    if args.field is not None:
        if args.field_width is not None or args.field_length is not None:
            raise UsageError("--field sets width and length; drop --field-width/--field-length")
        width, length = _pair(args.field, ":", "--field", "WIDTH:LENGTH such as 26mm:33mm")
        values["field_width_m"] = _quantity(width, "length", "--field")
        values["field_length_m"] = _quantity(length, "length", "--field")
    for name, option in (("field_width_m", "--field-width"), ("field_length_m", "--field-length")):
        text = getattr(args, option[2:].replace("-", "_"))
        if text is not None:
            values[name] = _quantity(text, "length", option)
    for name, option, dimension, *_ in _TOOL_OPTIONS:
        text = getattr(args, option[2:].replace("-", "_"))
        if text is not None:
            values[name] = text if dimension is None else _quantity(text, dimension, option)
    try:
        return ScannerTool(**values)
    except ValueError as exc:  # name the option whose value the tool refused
        options = {"field_width_m": "--field-width", "field_length_m": "--field-length",
                   **{name: option for name, option, *_ in _TOOL_OPTIONS}}
        named = next((o for n, o in options.items() if str(exc).startswith(n)), "")
        raise PhysicsError(f"{named}: {exc}" if named else str(exc)) from exc


def _demand(args: argparse.Namespace) -> int:
    from beamplan.report.calc import StochasticFloor, demand_document

    dose = _quantity(args.dose, "dose", "--dose")
    wph = None if args.wph is None else _quantity(args.wph, "rate", "--wph", plain_unit="wph")
    power = None if args.power is None else _quantity(args.power, "power", "--power")
    wavelength = _quantity(args.wavelength, "length", "--wavelength")
    given = [o for a, o, _ in _FLOOR_OPTIONS if getattr(args, a) is not None]
    floor = None
    if given:
        missing = [o for a, o, _ in _FLOOR_OPTIONS if getattr(args, a) is None]
        if missing:
            every = ", ".join(o for _, o, _ in _FLOOR_OPTIONS)
            raise UsageError(f"the stochastic floor needs {every}; missing {', '.join(missing)}")
        floor = StochasticFloor(*(_quantity(getattr(args, a), d, o) for a, o, d in _FLOOR_OPTIONS))
    tool = _tool(args)
    return _run(args, lambda: demand_document(tool, dose, wafers_per_hour=wph, if_power_w=power,
                                              wavelength_m=wavelength, stochastic=floor))


def _undulator(args: argparse.Namespace) -> int:
    from beamplan.report.calc import undulator_document

    energy = _quantity(args.energy, "electron energy", "--energy")
    period = _quantity(args.period, "length", "--period")
    k = None if args.k is None else _plain(args.k, "--k")
    field = None if args.field is None else _quantity(args.field, "magnetic field", "--field")
    target = None if args.target is None else _quantity(args.target, "length", "--target")
    check = None if args.check is None else _quantity(args.check, "length", "--check")
    if target is not None and (k is not None or field is not None):
        raise UsageError("--target finds K: drop --k/--field (or use --check to test them)")
    if target is None and k is None and field is None:
        raise UsageError("give --k or --field (or --target to find the K needed)")
    if check is None and (args.tolerance is not None or args.tunable):
        raise UsageError("--tolerance and --tunable go with --check")
    tolerance = 0.01 if args.tolerance is None else _quantity(args.tolerance, "fraction",
                                                              "--tolerance")
    return _run(args, lambda: undulator_document(
        energy, period, k=k, peak_field_t=field, target_m=target, check_m=check,
        harmonic=args.harmonic, tolerance=tolerance, tunable=args.tunable))


def _leaf(calcs: Any, name: str, help_text: str, description: str, handler: Any) -> Any:
    parser = calcs.add_parser(name, help=help_text, description=description)
    parser.add_argument("--json", action="store_true",
                        help="print the JSON document on stdout and nothing else")
    parser.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    parser.set_defaults(handler=handler)
    return parser


def _add_demand(calcs: Any) -> None:
    from beamplan.physics.demand import ScannerTool

    tool = ScannerTool()
    p = _leaf(calcs, "demand", "IF power for a dose and throughput, or throughput at a power",
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
    p.add_argument("--wavelength", default="13.5nm", metavar="LENGTH",
                   help="wavelength for the photon energy of the floor (default %(default)s)")
    p.add_argument("--field", metavar="WIDTH:LENGTH",
                   help=f"exposure field (default {tool.field_width_m * 1e3:g}mm:"
                   f"{tool.field_length_m * 1e3:g}mm); the width is also the slit length")
    p.add_argument("--field-width", metavar="LENGTH",
                   help=f"field width (default {tool.field_width_m * 1e3:g} mm)")
    p.add_argument("--field-length", metavar="LENGTH",
                   help=f"field length (default {tool.field_length_m * 1e3:g} mm)")
    for name, option, dimension, what, unit, scale in _TOOL_OPTIONS:
        default = f"{getattr(tool, name) * scale:g}{' ' + unit if unit else ''}"
        p.add_argument(option, type=int if dimension is None else str,
                       metavar="N" if dimension is None else dimension.upper(),
                       help=f"{what} (default {default})")
    floor = p.add_argument_group("stochastic dose floor (give all four, or none)")
    floor.add_argument("--critical-area", metavar="AREA", help="critical area, e.g. 400nm^2")
    floor.add_argument("--absorption", metavar="PER_LENGTH",
                       help="resist absorption coefficient, e.g. 5/um")
    floor.add_argument("--thickness", metavar="LENGTH", help="resist thickness, e.g. 40nm")
    floor.add_argument("--noise", metavar="FRACTION",
                       help="tolerated relative shot noise, e.g. 5%%")


def register(sub: Any) -> None:
    """Add the ``calc`` command group and its calculators to an argparse subparsers object.

    Examples
    --------
    >>> from beamplan.cli.main import build_parser
    >>> args = build_parser().parse_args(["calc", "gas", "--gas", "H2", "--pressure", "2Pa",
    ...                                   "--length", "40m"])
    >>> args.calculator, args.temperature
    ('gas', '295K')
    """
    from beamplan.cli.main import _Parser

    group = sub.add_parser("calc", help="stand-alone physics calculators",
                           description="Stand-alone calculators for mirrors, multilayers, gas "
                           "drifts, scanner demand and undulator resonance. Quantities take a "
                           "number and a unit (5deg, 2Pa, 13.5nm). Exit 0 ok, 1 when the "
                           "physics says no, 2 for bad usage.")
    group.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    calcs = group.add_subparsers(dest="calculator", metavar="CALCULATOR", parser_class=_Parser)
    calcs.required = True

    p = _leaf(calcs, "reflect", "reflectivity of a thick grazing-incidence mirror",
              "Fresnel reflectivity of one thick mirror surface with Névot–Croce roughness; "
              "δ and β from the Henke tables unless --delta-beta is given.", _reflect)
    p.add_argument("--coating", default="Ru", metavar="FORMULA",
                   help="coating formula (default %(default)s)")
    p.add_argument("--density", metavar="DENSITY",
                   help="coating density, e.g. 12.4g/cm^3 (default: tabulated)")
    p.add_argument("--grazing", required=True, metavar="ANGLE",
                   help="grazing angle, e.g. 5deg" + _RANGE)
    p.add_argument("--wavelength", default="13.5nm", metavar="LENGTH",
                   help="default %(default)s" + _RANGE)
    p.add_argument("--roughness", default="0nm", metavar="LENGTH",
                   help="rms roughness (default %(default)s)")
    p.add_argument("--polarisation", default="0", metavar="P",
                   help="degree of polarisation along s, -1..1: +1 fully s, -1 fully p "
                   "(default %(default)s, unpolarised)")
    p.add_argument("--delta-beta", metavar="DELTA,BETA",
                   help="use these δ, β (n = 1 − δ + iβ) instead of the tables")

    p = _leaf(calcs, "multilayer", "reflectivity of a periodic multilayer mirror",
              "Reflectivity of a periodic multilayer (Parratt recursion, Névot–Croce "
              "roughness, Henke optical constants); --peak adds the peak and its bandwidth.",
              _multilayer)
    p.add_argument("--pair", default="Mo/Si", metavar="A/S",
                   help="ABSORBER/SPACER (default %(default)s)")
    p.add_argument("--period", default="6.9nm", metavar="LENGTH",
                   help="period d (default %(default)s)")
    p.add_argument("--gamma", default="0.4", metavar="FRACTION",
                   help="absorber share of d (default %(default)s)")
    p.add_argument("--bilayers", type=int, default=50, metavar="N",
                   help="periods N (default %(default)s)")
    p.add_argument("--incidence", default="0deg", metavar="ANGLE",
                   help="angle from the normal (default %(default)s)" + _RANGE)
    p.add_argument("--wavelength", default="13.5nm", metavar="LENGTH",
                   help="default %(default)s" + _RANGE)
    p.add_argument("--capping", default="none", metavar="FORMULA:THICKNESS",
                   help="top layer, e.g. Ru:2nm (default %(default)s)")
    p.add_argument("--substrate", default="SiO2", metavar="FORMULA",
                   help="substrate formula (default %(default)s)")
    p.add_argument("--roughness", default="0nm", metavar="LENGTH",
                   help="rms roughness of every interface (default %(default)s)")
    p.add_argument("--polarisation", default="0", metavar="P",
                   help="-1..1, +1 fully s (default %(default)s)")
    p.add_argument("--density", action="append", metavar="FORMULA=DENSITY",
                   help="density of one material, e.g. Mo=10.2g/cm^3 (repeatable)")
    p.add_argument("--peak", action="store_true",
                   help="also find the peak reflectivity, its wavelength and FWHM bandwidth")

    p = _leaf(calcs, "gas", "transmission of a gas-filled drift",
              "Beer–Lambert transmission of a gas-filled drift (ideal gas, Henke f2).", _gas)
    p.add_argument("--gas", required=True, metavar="GAS",
                   help="'air' or a formula such as H2, He, Ar, N2")
    p.add_argument("--pressure", required=True, metavar="PRESSURE",
                   help="pressure, e.g. 2Pa" + _RANGE)
    p.add_argument("--temperature", default="295K", metavar="TEMPERATURE",
                   help="default %(default)s")
    p.add_argument("--length", required=True, metavar="LENGTH",
                   help="path length, e.g. 40m" + _RANGE)
    p.add_argument("--wavelength", default="13.5nm", metavar="LENGTH",
                   help="default %(default)s")

    _add_demand(calcs)

    p = _leaf(calcs, "undulator", "planar-undulator resonance: wavelength, K needed, or check",
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
    p.add_argument("--harmonic", type=int, default=1, metavar="N",
                   help="odd harmonic (default %(default)s)")
    p.add_argument("--tolerance", metavar="FRACTION",
                   help="relative tolerance of --check (default 1%%)")
    p.add_argument("--tunable", action="store_true",
                   help="with --check: treat --k/--field as the largest the gap allows")
