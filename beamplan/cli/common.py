"""Helpers shared by the command modules: console, progress, layout loading, options.

The command modules import these from here, never from :mod:`beamplan.cli.commands`
(which imports every command module to register it), so that no import cycle forms.
"""

from __future__ import annotations

import argparse
import os
import sys
from typing import Any

from beamplan.errors import UsageError

__all__ = ["WARNINGS_PER_KIND", "add_limits_option"]


def _console(stream: Any = None) -> Any:
    from beamplan.report.console import make_console

    return make_console(stream or sys.stdout)


def _stages(args: argparse.Namespace) -> Any:
    """What a long command is doing, on stderr when it is a terminal and not ``-q``."""
    from beamplan.report.progress import progress_stages

    return progress_stages(sys.stderr, quiet=bool(getattr(args, "quiet", False)))


def _existing_file(path: str) -> str:
    if not os.path.isfile(path):
        raise UsageError(f"no such layout file: {path!r}")
    return path


def _load_network(path: str, limits: str = "standard") -> Any:
    from beamplan.layout.limits import LIMITS
    from beamplan.layout.loader import load_layout
    from beamplan.network.graph import build_network

    return build_network(load_layout(_existing_file(path), LIMITS[limits]))


def add_limits_option(parser: argparse.ArgumentParser) -> None:
    """The ``--limits`` option of every command that reads a layout."""
    parser.add_argument("--limits", choices=("standard", "large"), default="standard",
                        help="input size limits: standard (default; files up to 8 MB, "
                        "300,000 YAML nodes) or large (128 MB, 5,000,000 nodes) for a very "
                        "large campus; see docs/layout-format.md")


WARNINGS_PER_KIND = 5


def _print_warnings(network: Any, every: bool = False) -> None:
    """Warnings to stderr; past a few of one kind, a count (``check --all`` shows all)."""
    shown: dict[str, int] = {}
    for warning in network.warnings:
        shown[warning.code] = shown.get(warning.code, 0) + 1
        if every or shown[warning.code] <= WARNINGS_PER_KIND:
            sys.stderr.write(warning.format() + "\n")
    for code, count in shown.items():
        if not every and count > WARNINGS_PER_KIND:
            sys.stderr.write(f"... and {count - WARNINGS_PER_KIND} more warnings like these "
                             f"({code}); 'beamplan check --all' lists every one\n")
