"""Entry point of the ``beamplan`` command: parse arguments, dispatch, map errors to exit codes.

Exit codes (docs/exit-codes.md): 0 success; 1 invalid input; 2 bad usage;
3 a plan was made but some scanner falls short; 4 internal error (a bug);
5 an output could not be written; 130 interrupted.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from beamplan import __version__
from beamplan.errors import BeamplanError, ExitCode, LayoutError, printable

__all__ = ["main"]


class _Parser(argparse.ArgumentParser):
    """argparse with our exit code and one-line errors."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        sys.stderr.write(f"beamplan: error: {printable(message)}\n")
        raise SystemExit(int(ExitCode.USAGE))


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every subcommand."""
    from beamplan.cli import commands

    parser = _Parser(prog="beamplan", description="Plan how one shared EUV source feeds many "
                     "lithography scanners. Results are planning estimates, not a safety system.")
    parser.add_argument("--version", action="version", version=f"beamplan {__version__}")
    parser.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True
    commands.register(sub)
    parser.set_defaults(root_parser=parser)  # for commands that describe the whole CLI
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit code.

    Examples
    --------
    >>> main(["check", "layouts/pilot-line.yaml", "--quiet"])
    0
    """
    args_list = list(sys.argv[1:] if argv is None else argv)
    debug = "--debug" in args_list
    try:
        parser = build_parser()
        args = parser.parse_args(args_list)
        return int(args.handler(args))
    except SystemExit as exc:
        return int(exc.code) if isinstance(exc.code, int) else int(ExitCode.USAGE)
    except LayoutError as exc:
        if debug:
            raise
        for diagnostic in exc.diagnostics:
            sys.stderr.write(diagnostic.format() + "\n")
        errors = len(exc.errors)
        sys.stderr.write(f"{errors} error{'s' if errors != 1 else ''}; nothing was planned\n")
        return int(exc.exit_code)
    except BeamplanError as exc:
        if debug:
            raise
        sys.stderr.write(f"beamplan: error: {exc}\n")
        return int(exc.exit_code)
    except KeyboardInterrupt:
        sys.stderr.write("beamplan: interrupted\n")
        return 130
    except Exception as exc:  # a bug: say so, briefly, unless --debug
        if debug:
            raise
        sys.stderr.write(f"beamplan: internal error: {type(exc).__name__}: "
                         f"{printable(str(exc))}\n"
                         "This is a bug; run again with --debug for the traceback and report "
                         "it with your layout.\n")
        return int(ExitCode.INTERNAL)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
