"""``beamplan new FILE``: write a commented starter layout (never over an existing file)."""

from __future__ import annotations

import argparse
import os
import sys
from typing import Any

from beamplan.errors import ExitCode, UsageError

__all__ = ["register"]


def _quantity(text: str, dimension: str, option: str, plain_unit: str | None = None) -> float:
    from beamplan.units import UnitError, parse_quantity

    raw: str | float = text
    if plain_unit:  # a bare number is taken in the plain unit (e.g. wafers per hour)
        try:
            raw = float(text)
        except ValueError:
            raw = text
    try:
        value = parse_quantity(raw, dimension, plain_unit)
    except UnitError as exc:
        raise UsageError(f"{option}: {exc.message}" + (f" ({exc.hint})" if exc.hint else "")
                         ) from None
    if value <= 0:
        raise UsageError(f"{option}: must be above 0, got {text!r}")
    return value


def _count(value: int, option: str) -> int:
    if not 1 <= value <= 100:
        raise UsageError(f"{option}: must be from 1 to 100, got {value}")
    return value


def _new(args: argparse.Namespace) -> int:
    from beamplan.layout.reader import ID_PATTERN
    from beamplan.layout.starter import Starter, starter_layout

    if args.file != "-" and os.path.lexists(args.file):
        raise UsageError(f"{args.file!r} exists: beamplan new never writes over a file; "
                         "choose another name")
    if not ID_PATTERN.match(args.name):
        raise UsageError(f"--name: {args.name!r} is not an id (letters, digits, '-', '_')")
    dose = wph = None
    if args.recipe is not None:
        dose_text, comma, wph_text = args.recipe.partition(",")
        if not comma:
            raise UsageError(f"--recipe: expected DOSE,WPH such as '30mJ/cm^2,150', got "
                             f"{args.recipe!r}")
        dose = _quantity(dose_text, "dose", "--recipe dose")
        wph = _quantity(wph_text, "rate", "--recipe wph", "wph")
    starter = Starter(args.name, _count(args.bays, "--bays"),
                      _count(args.scanners_per_bay, "--scanners-per-bay"),
                      _quantity(args.source_power, "power", "--source-power"),
                      _quantity(args.scanner_power, "power", "--scanner-power"), dose, wph)
    text = starter_layout(starter)
    if args.file == "-":
        sys.stdout.write(text)
        return int(ExitCode.OK)
    from beamplan.report.files import write_atomic

    write_atomic(args.file, text)
    if not args.quiet:
        sys.stderr.write(f"wrote {args.file}; next: beamplan check {args.file}\n")
    return int(ExitCode.OK)


def register(sub: Any) -> None:
    """Add the ``new`` subcommand.

    Examples
    --------
    >>> import argparse
    >>> parser = argparse.ArgumentParser()
    >>> register(parser.add_subparsers())
    """
    new = sub.add_parser("new", help="write a commented starter layout",
                         description="Write a starter layout (one source, bays of scanners "
                         "behind splitters) that passes 'beamplan check'. Never writes over "
                         "an existing file (exit 2). Illustrative defaults, marked as such.")
    new.add_argument("file", help="the layout file to write ('-' for stdout)")
    new.add_argument("--name", default="marrowfield-starter", help="the layout's name")
    new.add_argument("--bays", type=int, default=2, help="number of bays (default 2)")
    new.add_argument("--scanners-per-bay", type=int, default=2,
                     help="scanners in each bay (default 2)")
    new.add_argument("--source-power", default="10kW", help="source power (default 10kW)")
    new.add_argument("--scanner-power", default="500W",
                     help="each scanner's IF power need without --recipe (default 500W)")
    new.add_argument("--recipe", metavar="DOSE,WPH",
                     help="a scanner recipe instead of a fixed need, e.g. '30mJ/cm^2,150'")
    new.add_argument("-q", "--quiet", action="store_true", help="print nothing")
    new.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    new.set_defaults(handler=_new)
