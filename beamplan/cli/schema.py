"""``beamplan schema``: the JSON Schema of layout files (``--cases``: of case files).

``--docs FILE`` regenerates the key tables of docs/layout-format.md in place.
"""

from __future__ import annotations

import argparse
import json
import sys
from typing import Any

from beamplan.errors import ExitCode, UsageError

__all__ = ["register"]


def _schema(args: argparse.Namespace) -> int:
    if args.docs:
        from beamplan.layout.docgen import updated
        from beamplan.report.files import write_atomic

        try:
            with open(args.docs, encoding="utf-8") as handle:
                text = handle.read()
            write_atomic(args.docs, updated(text))
        except (OSError, ValueError) as exc:
            raise UsageError(f"--docs {args.docs}: {exc}") from None
        return int(ExitCode.OK)
    from beamplan.layout.schema import case_schema, layout_schema

    schema = case_schema() if args.cases else layout_schema()
    sys.stdout.write(json.dumps(schema, indent=2, ensure_ascii=False) + "\n")
    return int(ExitCode.OK)


def register(sub: Any) -> None:
    """Add the ``schema`` subcommand.

    Examples
    --------
    >>> import argparse
    >>> parser = argparse.ArgumentParser()
    >>> register(parser.add_subparsers())
    """
    schema = sub.add_parser("schema", help="print the JSON Schema of layout (or case) files",
                            description="Print the JSON Schema (draft 2020-12) of layout files "
                            "on stdout, for editors (see docs/layout-format.md).")
    schema.add_argument("--cases", action="store_true", help="the schema of case files")
    schema.add_argument("--docs", metavar="FILE", help=argparse.SUPPRESS)
    schema.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    schema.set_defaults(handler=_schema)
