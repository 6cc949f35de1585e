"""``beamplan completion bash|zsh|fish``: shell completion generated from the parser.

The script comes from the argparse parser through shtab. Options that take an
element, source or scanner id (``--fail``, ``--drop``, ``--focus``, sweep
``--only``) complete the ids of the layout named on the command line: the
script runs the hidden ``beamplan ids WORDS...``, which prints the ids of the
first layout file among the words (nothing when there is none or it is broken).
"""

from __future__ import annotations

import argparse
import os
import sys
from typing import Any

from beamplan.errors import BeamplanError, ExitCode, UsageError

__all__ = ["ID_OPTIONS", "KEY_OPTIONS", "SHELLS", "register", "script", "settable_keys"]

SHELLS = ("bash", "zsh", "fish")
#: (subcommand, option) pairs whose values are ids of the layout.
ID_OPTIONS = (("cases", "--fail"), ("cases", "--drop"), ("draw", "--focus"),
              ("sweep", "--only"))
#: (subcommand, option) pairs whose values start ``ID.KEY=`` with a settable key.
KEY_OPTIONS = (("cases", "--set"), ("cases", "--scale"))

_IDS = {
    "bash": "_beamplan_layout_ids",
    "zsh": "($(beamplan ids ${words} 2>/dev/null))",
    "fish": "(beamplan ids (commandline -opc) 2>/dev/null)",
    "preamble": {"bash": "# ids of the layout named on the command line\n"
                         "_beamplan_layout_ids() {\n"
                         "  compgen -W \"$(beamplan ids \"${COMP_WORDS[@]}\" 2>/dev/null)\" "
                         "-- \"$1\"\n}\n"},
}

_KEYS = {
    "bash": "_beamplan_layout_keys",
    "zsh": "($(beamplan ids --keys ${words} 2>/dev/null))",
    "fish": "(beamplan ids --keys (commandline -opc) 2>/dev/null)",
    "preamble": {"bash": "# ID.KEY= of the settable keys of the layout on the command line\n"
                         "_beamplan_layout_keys() {\n"
                         "  compgen -W \"$(beamplan ids --keys \"${COMP_WORDS[@]}\" "
                         "2>/dev/null)\" -- \"$1\"\n}\n"},
}


def _subparsers(parser: argparse.ArgumentParser) -> dict[str, argparse.ArgumentParser]:
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return dict(action.choices)
    return {}


def script(shell: str, parser: argparse.ArgumentParser) -> str:
    """The completion script for ``shell`` (bash, zsh or fish) of the whole ``parser``.

    The command line hands its root parser in (``args.root_parser``), so this
    module needs no import of the entry point.

    Examples
    --------
    >>> from beamplan.cli.main import build_parser
    >>> "plan" in script("bash", build_parser())
    True
    """
    import shtab

    commands = _subparsers(parser)
    for pairs, completer in ((ID_OPTIONS, _IDS), (KEY_OPTIONS, _KEYS)):
        for command, option in pairs:
            sub = commands.get(command)
            for action in sub._actions if sub is not None else ():
                if option in action.option_strings:
                    action.complete = completer  # type: ignore[attr-defined]
    for name in ("check", "plan", "draw", "cases", "sweep"):
        sub = commands.get(name)
        for action in sub._actions if sub is not None else ():
            if action.dest == "layout" and not action.option_strings:
                action.complete = shtab.FILE  # type: ignore[attr-defined]
    return str(shtab.complete(parser, shell))


def _completion(args: argparse.Namespace) -> int:
    sys.stdout.write(script(args.shell, args.root_parser))
    return int(ExitCode.OK)


def settable_keys(layout: Any) -> list[str]:
    """``ID.KEY=`` for every key a what-if change may set on each item of ``layout``.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> "fel-main.power=" in settable_keys(load_layout("layouts/two-bay.yaml"))
    True
    """
    from beamplan.layout.spec import element_keys, settable

    out = [f"{s.id}.{key}=" for s in layout.sources for key in settable("source")]
    for element in layout.elements:
        own = {spec.name for spec in element_keys(element.kind)}
        out += [f"{element.id}.{key}=" for key in settable("element") if key in own]
    out += [f"{s.id}.{key}=" for s in layout.scanners for key in settable("scanner")]
    return out


def _ids(args: argparse.Namespace) -> int:
    from beamplan.layout.loader import load_layout

    for word in args.words:
        if word.endswith((".yaml", ".yml")) and os.path.isfile(word):
            try:
                layout = load_layout(word)
            except (BeamplanError, OSError, UsageError):
                return int(ExitCode.OK)
            words = settable_keys(layout) if args.keys else list(layout.node_ids)
            sys.stdout.write("".join(f"{word}\n" for word in words))
            break
    return int(ExitCode.OK)


def register(sub: Any) -> None:
    """Add the ``completion`` subcommand and the hidden ``ids`` helper.

    Examples
    --------
    >>> import argparse
    >>> parser = argparse.ArgumentParser()
    >>> register(parser.add_subparsers())
    """
    completion = sub.add_parser("completion", help="print a shell completion script",
                                description="Print the completion script for bash, zsh or "
                                "fish, e.g. 'source <(beamplan completion bash)'.")
    completion.add_argument("shell", choices=SHELLS, help="the shell")
    completion.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    completion.set_defaults(handler=_completion)
    ids = sub.add_parser("ids", description="print the ids of the first layout file among "
                         "WORDS (used by the completion scripts)")
    ids.add_argument("--keys", action="store_true", help="print ID.KEY= of settable keys")
    ids.add_argument("words", nargs=argparse.REMAINDER, help="command-line words")
    ids.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    ids.set_defaults(handler=_ids)
