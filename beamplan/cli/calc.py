"""Stand-alone physics calculators: ``beamplan calc mirror|stack|drift|demand|undulator|beam``.

Options that are quantities take a number with a unit (``5deg``, ``2 Pa``).
Options marked "scannable" also take a list ``2deg,5deg,10deg`` or a range
``2deg..10deg/9`` (9 points, both ends included; or ``2deg..10deg`` with
``--steps 9``); each value becomes a point. Every bad argument is a one-line
usage error (exit 2) that names the option; physics that says no (a target
beyond the stage, a wavelength outside the tables) exits 1 with one line.
``--json`` prints the JSON document and nothing else. The argument readers are
in :mod:`beamplan.cli.calc_args`; demand, undulator in :mod:`beamplan.cli.calc_tools`,
beam in :mod:`beamplan.cli.calc_beam`. Everything heavy loads only when used.
"""

from __future__ import annotations

import argparse
import math
import sys
import warnings
from collections.abc import Callable
from typing import Any

from beamplan.cli import calc_args as A
from beamplan.errors import BeamplanError, ExitCode, UsageError

__all__ = ["PhysicsError", "Recorder", "leaf", "register", "run"]

#: The most periods of a stack, and the most work of one stack run: points × (periods + 100),
#: where the 100 stands for the optical constants each new wavelength needs (about 1 s).
MAX_PERIODS = 1000
MAX_STACK_WORK = 100_000
#: The most wavelengths of one mirror run (each needs its own optical constants).
MAX_WAVELENGTHS = 2000
#: The old calculator names, refused with the new one.
RENAMED = {"reflect": "mirror", "multilayer": "stack", "gas": "drift"}

_PI2 = math.pi / 2
GRAZING = A.Bounds(0.0, _PI2, "(0, 90 deg]", low_open=True)
INCIDENCE = A.Bounds(0.0, _PI2, "[0, 90 deg)", high_open=True)
WAVELENGTH = A.Bounds(0.0, 1e-3, "(0, 1 mm]", low_open=True)
ROUGHNESS = A.Bounds(0.0, 1e-6, "[0, 1 um]")
THIN = A.Bounds(0.0, 1e-6, "(0, 1 um]", low_open=True)
PERIOD = A.Bounds(1e-10, 1e-6, "[0.1 nm, 1 um]")
FRACTION = A.Bounds(0.0, 1.0, "[0, 1]")
PRESSURE = A.Bounds(0.0, 1e7, "[0, 100 bar]")
TEMPERATURE = A.Bounds(0.0, 1e4, "(0, 10000 K]", low_open=True)
LENGTH = A.Bounds(0.0, 1e5, "[0, 100 km]")
_DELTA = A.Bounds(-1.0, 1.0, "[-1, 1]")
_BETA = A.Bounds(0.0, 1.0, "[0, 1]")
_SCAN = " (scannable: a list 2,5,10 with units, or a range FROM..TO/POINTS)"


class PhysicsError(BeamplanError):
    """The physics says no (impossible target, bad physical input): exit code 1."""

    exit_code = ExitCode.INVALID


class Recorder:
    """Reads option texts from ``args`` and remembers them as typed or as defaults.

    Examples
    --------
    >>> r = Recorder(argparse.Namespace(coating=None, grazing="5deg"))
    >>> r.text("coating", "Ru"), r.text("grazing")
    ('Ru', '5deg')
    >>> r.given()
    Given(typed={'grazing': '5deg'}, defaults={'coating': 'Ru'})
    """

    def __init__(self, args: argparse.Namespace) -> None:
        self.args = args
        self.typed: dict[str, str] = {}
        self.defaults: dict[str, str] = {}

    def text(self, name: str, default: str | None = None) -> str | None:
        """The text of option ``--name`` (a repeated option joined by spaces), or ``default``."""
        value = getattr(self.args, name.replace("-", "_"))
        if value is None:
            if default is not None:
                self.defaults[name] = default
            return default
        text = " ".join(value) if isinstance(value, list) else str(value)
        self.typed[name] = text if len(text) <= 80 else text[:80] + "…"
        return text

    def need(self, name: str, default: str) -> str:
        """Like :meth:`text`, for an option that always has a value."""
        text = self.text(name, default)
        assert text is not None
        return text

    def given(self) -> Any:
        """The options as a :class:`beamplan.report.calc.Given`."""
        from beamplan.report.calc import Given

        return Given(dict(self.typed), dict(self.defaults))


def _rows(*counts: int) -> None:
    if math.prod(counts) > A.MAX_ROWS:
        raise UsageError(f"{' × '.join(map(str, counts))} points is too many "
                         f"(at most {A.MAX_ROWS:,}); scan fewer values")


#: Physics messages that name a function's parameters, said in the calculators' words.
_SAID = (("pass density_g_cm3", "give --density FORMULA=DENSITY"),
         ("; widen span", "; no peak within reach of the Bragg estimate at these settings"),
         ("math domain error", "these settings have no real solution (math domain error)"))


def _physics_message(exc: BaseException) -> str:
    message = " ".join(str(exc).split())
    for said, meant in _SAID:
        message = message.replace(said, meant)
    return message if len(message) <= 300 else message[:300] + "…"


def run(args: argparse.Namespace, build: Callable[[], dict[str, Any]]) -> int:
    """Build the document (physics errors become exit 1) and print it."""
    from beamplan.report import calc as report

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", RuntimeWarning)  # numpy overflow: say so, once
            document = build()
    except (ValueError, ArithmeticError, RuntimeWarning) as exc:
        raise PhysicsError(_physics_message(exc) or type(exc).__name__) from exc
    if args.json or getattr(args, "csv", False):
        from beamplan.report.calc_view import calc_csv

        sys.stdout.write(report.calc_json(document) if args.json else calc_csv(document))
        sys.stdout.flush()
    else:
        from beamplan.cli.common import _console
        from beamplan.report.calc_view import calc_renderable

        _console().print(calc_renderable(document))
    result = document.get("result", {})
    return int(ExitCode.INVALID if result.get("reachable") is False else ExitCode.OK)


def _steps(r: Recorder) -> int | None:
    text = r.text("steps")
    return None if text is None else A.count(text, "--steps", 2, A.MAX_ROWS)


def _unused_steps(steps: int | None, *scans: A.Scan) -> None:
    if steps is not None and not any(s.kind == "range" for s in scans):
        raise UsageError("--steps: no option holds a range FROM..TO to give points to")


def _mirror(args: argparse.Namespace) -> int:
    from beamplan.report.calc import mirror_document

    r = Recorder(args)
    steps = _steps(r)
    delta_beta_text = r.text("delta-beta")
    coating_text = r.need("coating", "Ru")
    if delta_beta_text is None:
        coating = A.formula(coating_text, "--coating")
    else:
        coating = A.screen(coating_text, "--coating")
        if len(coating) > 40:
            raise UsageError(f"--coating: {A.excerpt(coating)} is too long for a label")
    grazing = A.scan(r.need("grazing", ""), "angle", "--grazing", steps, GRAZING)
    wavelength = A.scan(r.need("wavelength", "13.5nm"), "length", "--wavelength", steps,
                        WAVELENGTH)
    _unused_steps(steps, grazing, wavelength)
    _rows(len(grazing.values), len(wavelength.values))
    if len(wavelength.values) > MAX_WAVELENGTHS:
        raise UsageError(f"--wavelength: {len(wavelength.values):,} wavelengths is too many "
                         f"(at most {MAX_WAVELENGTHS:,}; each needs its own optical constants)")
    found = A.densities(args.density)
    r.text("density", "handbook")
    unknown = [f for f in found if f != coating]
    if unknown:
        raise UsageError(f"--density: {unknown[0]} is not the coating {A.excerpt(coating)}; "
                         f"write --density {coating}=DENSITY")
    delta_beta = None
    if delta_beta_text is not None:
        d, comma, b = A.screen(delta_beta_text, "--delta-beta").partition(",")
        if not comma:
            raise UsageError("--delta-beta: expected DELTA,BETA such as 0.02,0.001, got "
                             f"{A.excerpt(delta_beta_text)}")
        delta_beta = (A.plain(d, "--delta-beta (delta)", _DELTA),
                      A.plain(b, "--delta-beta (beta)", _BETA))
    roughness = A.quantity(r.need("roughness", "0nm"), "length", "--roughness", ROUGHNESS)
    word, s_fraction = A.polarisation(r.need("polarisation", "unpolarised"))
    return run(args, lambda: mirror_document(
        coating, grazing.values, wavelength.values, density_g_cm3=found.get(coating),
        roughness_m=roughness, polarisation=word, s_fraction=s_fraction, delta_beta=delta_beta,
        given=r.given()))


def _cap(r: Recorder) -> tuple[str, float] | None:
    cap = r.need("cap", "none")
    thickness = r.text("cap-thickness")
    if A.screen(cap, "--cap").lower() == "none":
        if thickness is not None:
            raise UsageError("--cap-thickness goes with --cap MATERIAL, e.g. --cap Ru")
        return None
    material = A.formula(cap, "--cap")
    if thickness is None:
        raise UsageError(f"--cap {material} needs --cap-thickness, e.g. --cap-thickness 2nm")
    return material, A.quantity(thickness, "length", "--cap-thickness", THIN)


def _stack(args: argparse.Namespace) -> int:
    from beamplan.report.calc import stack_document

    r = Recorder(args)
    steps = _steps(r)
    pair_text = A.screen(r.need("pair", "Mo/Si"), "--pair")
    absorber, slash, spacer = pair_text.partition("/")
    if not slash:
        raise UsageError(f"--pair: expected ABSORBER/SPACER such as Mo/Si, got "
                         f"{A.excerpt(pair_text)}")
    pair = (A.formula(absorber.strip(), "--pair"), A.formula(spacer.strip(), "--pair"))
    period = A.quantity(r.need("period", "6.9nm"), "length", "--period", PERIOD)
    fraction = A.quantity(r.need("absorber-fraction", "0.4"), "fraction", "--absorber-fraction",
                          FRACTION)
    periods = A.count(r.need("periods", "50"), "--periods", 1, MAX_PERIODS)
    incidence = A.scan(r.need("incidence", "0deg"), "angle", "--incidence", steps, INCIDENCE)
    wavelength = A.scan(r.need("wavelength", "13.5nm"), "length", "--wavelength", steps,
                        WAVELENGTH)
    _unused_steps(steps, incidence, wavelength)
    points = len(incidence.values) * len(wavelength.values)
    _rows(len(incidence.values), len(wavelength.values))
    if points * (periods + 100) > MAX_STACK_WORK:
        raise UsageError(f"{points} points at {periods} periods is too much work (points × "
                         f"(periods + 100) is at most {MAX_STACK_WORK:,}); scan fewer points "
                         "or give fewer --periods")
    if args.peak and len(incidence.values) != 1:
        raise UsageError("--peak scans the wavelength at one --incidence; give a single angle")
    cap = _cap(r)
    substrate = A.formula(r.need("substrate", "SiO2"), "--substrate")
    roughness = A.quantity(r.need("roughness", "0nm"), "length", "--roughness", ROUGHNESS)
    word, s_fraction = A.polarisation(r.need("polarisation", "unpolarised"))
    found = A.densities(args.density)
    r.text("density", "handbook")
    return run(args, lambda: stack_document(
        pair, period, fraction, periods, incidence.values, wavelength.values, cap=cap,
        substrate=substrate, roughness_m=roughness, polarisation=word, s_fraction=s_fraction,
        densities_g_cm3=found, peak=args.peak, given=r.given()))


def _drift(args: argparse.Namespace) -> int:
    from beamplan.report.calc import drift_document

    r = Recorder(args)
    steps = _steps(r)
    gas = A.formula(r.need("gas", ""), "--gas", air=True)
    pressure = A.scan(r.need("pressure", ""), "pressure", "--pressure", steps, PRESSURE)
    length = A.scan(r.need("length", ""), "length", "--length", steps, LENGTH)
    _unused_steps(steps, pressure, length)
    _rows(len(pressure.values), len(length.values))
    temperature = A.quantity(r.need("temperature", "295K"), "temperature", "--temperature",
                             TEMPERATURE)
    wavelength = A.quantity(r.need("wavelength", "13.5nm"), "length", "--wavelength",
                            WAVELENGTH)
    return run(args, lambda: drift_document(gas, pressure.values, temperature, length.values,
                                            wavelength, given=r.given()))


class _Names(dict[str, Any]):
    """The calculators by name; iterating (what "choose from" lists) skips retired names."""

    def __iter__(self) -> Any:
        return (name for name in super().__iter__() if name not in RENAMED)


class _CalcParser(argparse.ArgumentParser):
    """A calculator's parser: one-line errors with a pointer to ``--help``; an old
    calculator name (``renamed`` set) is refused with its new name."""

    renamed: str | None = None

    def parse_known_args(self, args: Any = None, namespace: Any = None) -> Any:  # type: ignore[override]
        if self.renamed is not None:
            old = self.prog.rsplit(" ", 1)[-1]
            raise UsageError(f"'calc {old}' is now 'calc {self.renamed}'; "
                             f"see 'beamplan calc {self.renamed} --help'")
        found, extra = super().parse_known_args(args, namespace)
        if extra:
            self.error(f"unrecognized arguments: {' '.join(extra)}")
        return found, extra

    def error(self, message: str) -> None:  # type: ignore[override]
        text = " ".join(message.split())
        text = text if len(text) <= 200 else text[:200] + "…"
        text = A.excerpt(text, 400)[1:-1] if not text.isprintable() else text
        sys.stderr.write(f"beamplan: error: {text} (see '{self.prog} --help')\n")
        raise SystemExit(int(ExitCode.USAGE))


def leaf(calcs: Any, name: str, help_text: str, description: str, handler: Any) -> Any:
    """Add one calculator: its parser with ``--json`` or ``--csv`` (and a hidden ``--debug``)."""
    parser = calcs.add_parser(name, help=help_text, description=description)
    shape = parser.add_mutually_exclusive_group()
    shape.add_argument("--json", action="store_true",
                       help="print the JSON document on stdout and nothing else")
    shape.add_argument("--csv", action="store_true", help="print the points (or the result) "
                       "as CSV on stdout and nothing else")
    parser.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    parser.set_defaults(handler=handler)
    return parser


def _scan_options(p: Any, steps_help: str) -> None:
    p.add_argument("--steps", metavar="N", help=steps_help)


def register(sub: Any, *more: Callable[[Any], None]) -> None:
    """Add the ``calc`` command group and its calculators to an argparse subparsers object.

    ``more`` add further calculators to the group (the tool calculators of
    :mod:`beamplan.cli.calc_tools`, which build on this module's helpers and so
    are passed in rather than imported here).

    Examples
    --------
    >>> from beamplan.cli.main import build_parser
    >>> args = build_parser().parse_args(["calc", "drift", "--gas", "H2", "--pressure", "2Pa",
    ...                                   "--length", "40m"])
    >>> args.calculator, args.temperature
    ('drift', None)
    """
    group = sub.add_parser("calc", help="stand-alone physics calculators",
                           description="Stand-alone calculators for grazing mirrors, multilayer "
                           "stacks, gas-filled drifts, scanner demand, undulator resonance and "
                           "beam footprints on mirrors. "
                           "Quantities take a number and a unit (5deg, 2Pa, 13.5nm). Exit 0 ok, "
                           "1 when the physics says no, 2 for bad usage.")
    group.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    calcs = group.add_subparsers(dest="calculator", metavar="CALCULATOR",
                                 parser_class=_CalcParser)
    calcs.required = True
    steps = ("number of points of a range written FROM..TO without /POINTS "
             f"(2 to {A.MAX_ROWS:,})")

    p = leaf(calcs, "mirror", "reflectivity of a single-surface grazing-incidence mirror",
             "Fresnel reflectivity of one thick mirror surface with Névot–Croce roughness; "
             "δ and β from the Henke tables unless --delta-beta is given.", _mirror)
    p.add_argument("--coating", metavar="FORMULA", help="coating formula (default Ru)")
    p.add_argument("--grazing", required=True, metavar="ANGLE",
                   help="grazing angle from the surface, e.g. 5deg" + _SCAN)
    p.add_argument("--wavelength", metavar="LENGTH", help="default 13.5nm" + _SCAN)
    p.add_argument("--density", action="append", metavar="FORMULA=DENSITY",
                   help="coating density, e.g. Ru=12.2g/cm^3 (default: the handbook density)")
    p.add_argument("--roughness", metavar="LENGTH", help="rms roughness (default 0nm)")
    p.add_argument("--polarisation", metavar="POL",
                   help="s, p, unpolarised, or a mix such as s=0.7 (the fraction that is s); "
                   "default unpolarised")
    p.add_argument("--delta-beta", metavar="DELTA,BETA",
                   help="use these δ, β (n = 1 − δ + iβ) instead of the tables; the coating "
                   "is then only a label")
    _scan_options(p, steps)

    p = leaf(calcs, "stack", "reflectivity of a periodic multilayer stack",
             "Reflectivity of a periodic multilayer stack (Parratt recursion, Névot–Croce "
             "roughness, Henke optical constants); --peak adds the peak and its bandwidth.",
             _stack)
    p.add_argument("--pair", metavar="A/S", help="ABSORBER/SPACER (default Mo/Si)")
    p.add_argument("--period", metavar="LENGTH", help="period d (default 6.9nm)")
    p.add_argument("--absorber-fraction", metavar="FRACTION",
                   help="thickness fraction of the absorber layer in a period (default 0.4)")
    p.add_argument("--periods", metavar="N",
                   help=f"number of periods, 1 to {MAX_PERIODS} (default 50)")
    p.add_argument("--incidence", metavar="ANGLE",
                   help="angle of incidence from the normal (default 0deg)" + _SCAN)
    p.add_argument("--wavelength", metavar="LENGTH", help="default 13.5nm" + _SCAN)
    p.add_argument("--cap", metavar="MATERIAL", help="top layer, e.g. Ru (default none)")
    p.add_argument("--cap-thickness", metavar="LENGTH",
                   help="thickness of the --cap layer, e.g. 2nm")
    p.add_argument("--substrate", metavar="FORMULA", help="substrate formula (default SiO2)")
    p.add_argument("--roughness", metavar="LENGTH",
                   help="rms roughness of every interface (default 0nm)")
    p.add_argument("--polarisation", metavar="POL",
                   help="s, p, unpolarised or s=0.7 (default unpolarised)")
    p.add_argument("--density", action="append", metavar="FORMULA=DENSITY",
                   help="density of one material, e.g. Mo=10.2g/cm^3 (repeatable; default: "
                   "the handbook density)")
    p.add_argument("--peak", action="store_true",
                   help="also find the peak reflectivity, its wavelength and FWHM bandwidth")
    _scan_options(p, steps)

    p = leaf(calcs, "drift", "gas transmission of a drift",
             "Beer–Lambert transmission of a gas-filled drift (ideal gas, Henke f2).", _drift)
    p.add_argument("--gas", required=True, metavar="GAS",
                   help="'air' or a formula such as H2, He, Ar, N2")
    p.add_argument("--pressure", required=True, metavar="PRESSURE",
                   help="pressure, e.g. 2Pa" + _SCAN)
    p.add_argument("--length", required=True, metavar="LENGTH",
                   help="path length, e.g. 40m" + _SCAN)
    p.add_argument("--temperature", metavar="TEMPERATURE", help="default 295K")
    p.add_argument("--wavelength", metavar="LENGTH", help="default 13.5nm")
    _scan_options(p, steps)

    for add in more:
        add(calcs)

    for old, new in RENAMED.items():
        calcs.add_parser(old, add_help=False).renamed = new
    calcs.choices = _Names(calcs.choices)  # the retired names are known, but not offered
