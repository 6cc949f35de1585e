"""Which output paths a command may write: every output checked before any work.

An output never names an input, two outputs never share a path or stdout, a
CSV folder only ever holds our own tables, and a file output's folder exists
(docs/exit-codes.md, README "Outputs"). :mod:`beamplan.report.files` writes
them, atomically.
"""

from __future__ import annotations

import contextlib
import os
import re
from collections.abc import Iterable

from beamplan.errors import OutputError, UsageError

__all__ = ["STDOUT", "TABLES_MARKER", "check_outputs", "is_direct", "previous_tables",
           "refuse_inputs"]

STDOUT = "-"
"""The output name that means standard output, for every output option."""

TABLES_MARKER = ".beamplan-tables"
"""The file in a CSV folder that lists the tables beamplan wrote there."""

_DIRECT = re.compile(r"^/(?:dev/(?:stdout|stderr|fd/\d+)|proc/(?:self|\d+)/fd/\d+)$")


def is_direct(path: str) -> bool:
    """True for a path that names an open descriptor (``/dev/stdout``, ``/proc/self/fd/3``).

    Such a path is written into as it is, never through a temporary file.

    Examples
    --------
    >>> is_direct("/dev/stdout"), is_direct("/proc/self/fd/3"), is_direct("out.json")
    (True, True, False)
    """
    return _DIRECT.match(path) is not None


def _same_file(a: str, b: str) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return os.path.realpath(a) == os.path.realpath(b)


def _why(exc: OSError) -> str:
    return exc.strerror or str(exc)


def refuse_inputs(outputs: Iterable[str | None], inputs: Iterable[str]) -> None:
    """Refuse, before any work, an output path that names an input file.

    Symlinks are resolved: an output that is a link to an input is refused too.

    Raises
    ------
    UsageError
        An output is one of the inputs.

    Examples
    --------
    >>> refuse_inputs(["out.json", None], ["layouts/pilot-line.yaml"])
    >>> refuse_inputs(["layouts/pilot-line.yaml"], ["layouts/pilot-line.yaml"])
    Traceback (most recent call last):
    ...
    beamplan.errors.UsageError: refusing to write over the input file ...
    """
    sources = list(inputs)
    for path in outputs:
        if path and path != STDOUT:
            for source in sources:
                if os.path.lexists(path) and _same_file(path, source):
                    raise UsageError(f"refusing to write over the input file {path!r}; "
                                     "choose another output name")


def _inside(folder: str, path: str) -> bool:
    real_folder = os.path.realpath(folder)
    real = os.path.realpath(path)
    return os.path.commonpath([real_folder, real]) == real_folder


def check_outputs(files: Iterable[tuple[str, str | None]],
                  folders: Iterable[tuple[str, str | None]], inputs: Iterable[str]) -> None:
    """Check every output before any work: refuse what would clash, fail what cannot be written.

    ``files`` and ``folders`` are ``(option, path)`` pairs; a ``None`` path is
    not asked for. Refused (exit 2): an output naming an input, a CSV folder
    holding an input or files beamplan did not write, ``-`` for a CSV folder,
    two outputs to stdout or to the same path, a file output inside a CSV
    folder, a file output that is a folder. Failed (exit 5): a file output
    whose folder does not exist.

    Raises
    ------
    UsageError
        A clash between outputs and inputs.
    OutputError
        An output's folder does not exist.

    Examples
    --------
    >>> check_outputs([("--json", "-"), ("--html", None)], [("--csv", "out")],
    ...               ["layouts/pilot-line.yaml"])
    >>> check_outputs([("--json", "-"), ("--html", "-")], [], [])
    Traceback (most recent call last):
    ...
    beamplan.errors.UsageError: --json and --html both write to stdout ('-'); ...
    >>> check_outputs([], [("--csv", "layouts")], ["layouts/pilot-line.yaml"])
    Traceback (most recent call last):
    ...
    beamplan.errors.UsageError: --csv 'layouts': the input 'layouts/pilot-line.yaml' is ...
    """
    sources = list(inputs)
    wanted_files = [(o, p) for o, p in files if p]
    wanted_folders = [(o, p) for o, p in folders if p]
    to_stdout = [o for o, p in wanted_files if p == STDOUT]
    if len(to_stdout) > 1:
        raise UsageError(f"{' and '.join(to_stdout)} both write to stdout ('-'); "
                         "send at most one of them there")
    seen: dict[str, str] = {}
    for option, path in wanted_files + wanted_folders:
        if path == STDOUT:
            continue
        real = os.path.realpath(path)
        if real in seen and not is_direct(path):
            raise UsageError(f"{seen[real]} and {option} both name {path!r}; "
                             "give each output its own name")
        seen[real] = option
    for option, path in wanted_folders:
        if path == STDOUT:
            raise UsageError(f"{option} -: CSV output is a folder of tables; give a folder "
                             "name (use --json - for the report on stdout)")
        for source in sources:
            if _inside(path, source):
                raise UsageError(f"{option} {path!r}: the input {source!r} is inside it; "
                                 "choose another folder for the tables")
        refuse_inputs([path], sources)
        if os.path.exists(path) and not os.path.isdir(path):
            raise UsageError(f"{option} {path!r} is a file, not a folder; "
                             "give a folder for the tables")
        if os.path.isdir(path):
            previous_tables(path, None)
    for option, path in wanted_files:
        if path == STDOUT or is_direct(path):
            continue
        for folder_option, folder in wanted_folders:
            if _inside(folder, path):
                raise UsageError(f"{option} {path!r} lies in the {folder_option} folder, which "
                                 "is replaced as a whole; write it elsewhere")
        refuse_inputs([path], sources)
        if os.path.isdir(path):
            raise UsageError(f"{option} {path!r} is a folder; give a file name")
        parent = os.path.dirname(os.path.abspath(os.path.realpath(path)))
        if not os.path.isdir(parent):
            raise OutputError(f"cannot write {path!r}: the folder {parent!r} does not exist")


def previous_tables(folder: str, names: Iterable[str] | None) -> set[str]:
    """The entries of an existing CSV folder, refused unless they are our tables.

    Ours: the tables its ``.beamplan-tables`` file lists, and ``names`` (the
    new set; ``None`` for the early check, which takes any ``*.csv`` file).

    Raises
    ------
    UsageError
        The folder holds a file beamplan did not write, a folder or a link.
    OutputError
        The folder cannot be read.

    Examples
    --------
    >>> import os, tempfile
    >>> folder = tempfile.mkdtemp()
    >>> for name in ("a.csv", "notes.txt"):
    ...     with open(os.path.join(folder, name), "w") as handle:
    ...         _ = handle.write("x")
    >>> sorted(previous_tables(folder, ["a.csv", "notes.txt"]))
    ['a.csv', 'notes.txt']
    >>> previous_tables(folder, None)
    Traceback (most recent call last):
    ...
    beamplan.errors.UsageError: the folder ... holds files beamplan did not write (notes.txt); ...
    """
    try:
        entries = set(os.listdir(folder))
    except OSError as exc:
        raise OutputError(f"cannot read the folder {folder!r}: {_why(exc)}") from exc
    ours = set(names or ()) | {TABLES_MARKER}
    with contextlib.suppress(OSError), open(os.path.join(folder, TABLES_MARKER),
                                            encoding="utf-8") as marker:
        ours |= {line.strip() for line in marker if line.strip()}
    foreign = sorted(e for e in entries
                     if (e not in ours and not (names is None and e.endswith(".csv"))) or
                     not os.path.isfile(os.path.join(folder, e)) or
                     os.path.islink(os.path.join(folder, e)))
    if foreign:
        shown = ", ".join(foreign[:3]) + (f" and {len(foreign) - 3} more" if len(foreign) > 3
                                          else "")
        raise UsageError(f"the folder {folder!r} holds files beamplan did not write ({shown}); "
                         "give an empty or new folder for the tables")
    return entries
