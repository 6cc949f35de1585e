"""Write output files atomically, and never over an input file.

Rules (docs/exit-codes.md, README "Outputs"):

- A regular file is written to a temporary file in the same folder (named
  ``.beamplan-*.tmp``), flushed to disk, renamed over the final name, and the
  folder is flushed too: a reader sees the old file or the new one, never a part.
  The temporary file is removed on any error or interruption; ones left behind
  by a killed run are removed by a later run once they are an hour old.
- An existing file keeps its mode; a new one gets the umask default.
- A symlink is written through: its target is replaced atomically.
- A FIFO, a character device or ``/dev/stdout``-like path is written directly.
- A CSV folder is written as a whole (:func:`write_tables`).
- Any failure to write raises :class:`~beamplan.errors.OutputError` (exit 5).
"""

from __future__ import annotations

import contextlib
import os
import re
import secrets
import shutil
import stat
import tempfile
import time
from collections.abc import Iterable, Iterator

from beamplan.errors import OutputError, UsageError

__all__ = ["STDOUT", "TABLES_MARKER", "check_outputs", "refuse_inputs", "write_atomic",
           "write_tables"]

STDOUT = "-"
"""The output name that means standard output, for every output option."""

TABLES_MARKER = ".beamplan-tables"
"""The file in a CSV folder that lists the tables beamplan wrote there."""

_PREFIX = ".beamplan-"
_SUFFIX = ".tmp"
_STALE_S = 3600.0
_DIRECT = re.compile(r"^/(?:dev/(?:stdout|stderr|fd/\d+)|proc/(?:self|\d+)/fd/\d+)$")


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
        if real in seen and not _DIRECT.match(path):
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
            _previous_tables(path, None)
    for option, path in wanted_files:
        if path == STDOUT or _DIRECT.match(path):
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


def _umask() -> int:
    """The process umask (new files get ``0o666 & ~umask``, folders ``0o777 & ~umask``)."""
    try:
        with open("/proc/self/status", encoding="ascii") as status:
            for line in status:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError):
        pass
    mask = os.umask(0o022)  # no other way to read it; put it straight back
    os.umask(mask)
    return mask


def _fsync_folder(folder: str) -> None:
    with contextlib.suppress(OSError):  # some file systems cannot sync a folder
        handle = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(handle)
        finally:
            os.close(handle)


def _remove_stale(folder: str) -> None:
    """Remove our temporary files and folders left by a killed run, once they are old."""
    now = time.time()
    with contextlib.suppress(OSError), os.scandir(folder) as entries:
        for entry in entries:
            if not (entry.name.startswith(_PREFIX) and entry.name.endswith(_SUFFIX)):
                continue
            with contextlib.suppress(OSError):
                info = entry.stat(follow_symlinks=False)
                if now - info.st_mtime < _STALE_S or info.st_uid != os.getuid():
                    continue
                if stat.S_ISDIR(info.st_mode):
                    shutil.rmtree(entry.path, ignore_errors=True)
                elif stat.S_ISREG(info.st_mode):
                    os.unlink(entry.path)


def _write_all(handle: int, data: bytes) -> None:
    view = memoryview(data)
    while view:
        view = view[os.write(handle, view):]


def _as_bytes(text: str | bytes) -> bytes:
    return text if isinstance(text, bytes) else text.encode("utf-8")


def _write_direct(path: str, data: bytes) -> None:
    """Write to a FIFO, a device or an open descriptor's path, as it is."""
    try:
        handle = os.open(path, os.O_WRONLY | os.O_APPEND)
        try:
            _write_all(handle, data)
        finally:
            os.close(handle)
    except OSError as exc:
        raise OutputError(f"cannot write {path!r}: {_why(exc)}") from exc


@contextlib.contextmanager
def _temporary_file(folder: str, mode: int) -> Iterator[tuple[int, str]]:
    """A new temporary file in ``folder``, removed unless renamed away."""
    handle, temp = tempfile.mkstemp(prefix=_PREFIX, suffix=_SUFFIX, dir=folder)
    try:
        os.fchmod(handle, mode)
        yield handle, temp
    finally:
        with contextlib.suppress(OSError):
            os.close(handle)
        with contextlib.suppress(OSError):
            os.unlink(temp)


def write_atomic(path: str, text: str | bytes, inputs: Iterable[str] = ()) -> None:
    """Write ``text`` (or bytes) to ``path`` through a temporary file and a rename.

    Raises
    ------
    UsageError
        ``path`` is one of ``inputs`` (beamplan never writes over an input).
    OutputError
        The file cannot be written (exit 5).

    Examples
    --------
    >>> import os, tempfile
    >>> folder = tempfile.mkdtemp()
    >>> target = os.path.join(folder, "out.txt")
    >>> write_atomic(target, "hello\\n")
    >>> with open(target) as handle:
    ...     handle.read()
    'hello\\n'
    >>> write_atomic(target, "x", inputs=[target])
    Traceback (most recent call last):
    ...
    beamplan.errors.UsageError: refusing to write over the input file ...
    >>> os.listdir(folder)
    ['out.txt']
    """
    refuse_inputs([path], inputs)
    data = _as_bytes(text)
    if _DIRECT.match(path):
        _write_direct(path, data)
        return
    target = os.path.realpath(path)  # a symlink is written through, at its target
    try:
        info: os.stat_result | None = os.stat(target)
    except OSError:
        info = None
    if info is not None and stat.S_ISDIR(info.st_mode):
        raise OutputError(f"cannot write {path!r}: it is a folder")
    if info is not None and not stat.S_ISREG(info.st_mode):
        _write_direct(target, data)  # a FIFO, a device, a socket: write into it
        return
    mode = stat.S_IMODE(info.st_mode) if info is not None else 0o666 & ~_umask()
    folder = os.path.dirname(target)
    if not os.path.isdir(folder):
        raise OutputError(f"cannot write {path!r}: the folder {folder!r} does not exist")
    try:
        with _temporary_file(folder, mode) as (handle, temp):
            _write_all(handle, data)
            os.fsync(handle)
            os.replace(temp, target)
        _fsync_folder(folder)
    except OSError as exc:
        raise OutputError(f"cannot write {path!r}: {_why(exc)}") from exc
    _remove_stale(folder)


def _previous_tables(folder: str, names: Iterable[str] | None) -> set[str]:
    """The entries of an existing CSV folder, refused unless they are our tables.

    Ours: the tables its ``.beamplan-tables`` file lists, and ``names`` (the
    new set; ``None`` for the early check, which takes any ``*.csv`` file).
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


def write_tables(folder: str, tables: dict[str, str], inputs: Iterable[str] = ()) -> list[str]:
    """Write named texts (CSV tables) as one folder that appears, or is replaced, as a whole.

    The tables go into a temporary folder beside ``folder`` (parents are created
    if needed), with a ``.beamplan-tables`` file that lists them; that folder is
    then renamed into place. A previous set is renamed aside first and removed
    after, so a reader sees the old set or the new one, never a mix. A folder
    that holds anything but a previous set of our tables is refused, as is a
    folder that holds an input. Existing tables keep their mode.

    Raises
    ------
    UsageError
        An input lies in the folder, or the folder holds files of its own.
    OutputError
        The folder cannot be written (exit 5).

    Examples
    --------
    >>> import os, tempfile
    >>> folder = os.path.join(tempfile.mkdtemp(), "tables")
    >>> [os.path.basename(p) for p in write_tables(folder, {"a.csv": "x\\n"})]
    ['a.csv']
    >>> sorted(os.listdir(folder))
    ['.beamplan-tables', 'a.csv']
    """
    sources = list(inputs)
    check_outputs([], [("the CSV folder", folder)], sources)
    final = os.path.realpath(folder)
    parent = os.path.dirname(final)
    previous = _previous_tables(final, tables) if os.path.isdir(final) else None
    try:
        os.makedirs(parent, exist_ok=True)
        new = tempfile.mkdtemp(prefix=_PREFIX, suffix=_SUFFIX, dir=parent)
    except OSError as exc:
        raise OutputError(f"cannot write the folder {folder!r}: {_why(exc)} (the tables are "
                          f"written beside it, in {parent!r}, then renamed into place)") from exc
    aside: str | None = None
    try:
        mask = _umask()
        file_mode = 0o666 & ~mask
        if previous is not None:
            os.chmod(new, stat.S_IMODE(os.stat(final).st_mode))
        else:
            os.chmod(new, 0o777 & ~mask)
        listed = {**tables, TABLES_MARKER: "".join(f"{name}\n" for name in tables)}
        for name, text in listed.items():
            mode = file_mode
            if previous is not None and name in previous:
                mode = stat.S_IMODE(os.stat(os.path.join(final, name)).st_mode)
            handle = os.open(os.path.join(new, name), os.O_WRONLY | os.O_CREAT | os.O_EXCL, mode)
            try:
                os.fchmod(handle, mode)
                _write_all(handle, _as_bytes(text))
                os.fsync(handle)
            finally:
                os.close(handle)
        _fsync_folder(new)
        if previous is not None:
            aside = os.path.join(parent, f"{_PREFIX}old-{secrets.token_hex(8)}{_SUFFIX}")
            os.rename(final, aside)
        try:
            os.rename(new, final)
        except OSError:
            if aside is not None:  # put the previous set back
                os.rename(aside, final)
                aside = None
            raise
        _fsync_folder(parent)
    except OSError as exc:
        raise OutputError(f"cannot write the folder {folder!r}: {_why(exc)}") from exc
    finally:
        shutil.rmtree(new, ignore_errors=True)
        if aside is not None:
            if os.path.lexists(final):
                shutil.rmtree(aside, ignore_errors=True)
            else:  # interrupted between the two renames: put the previous set back
                with contextlib.suppress(OSError):
                    os.rename(aside, final)
    _remove_stale(parent)
    return [os.path.join(folder, name) for name in tables]
