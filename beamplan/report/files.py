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
- What may be written at all is checked first, in :mod:`beamplan.report.output_paths`.
- Any failure to write raises :class:`~beamplan.errors.OutputError` (exit 5).
"""

from __future__ import annotations

import contextlib
import os
import secrets
import shutil
import stat
import tempfile
import time
from collections.abc import Iterable, Iterator

from beamplan.errors import OutputError
from beamplan.report.output_paths import (
    TABLES_MARKER,
    check_outputs,
    is_direct,
    previous_tables,
    refuse_inputs,
)

__all__ = ["write_atomic", "write_tables"]

_PREFIX = ".beamplan-"
_SUFFIX = ".tmp"
_STALE_S = 3600.0


def _why(exc: OSError) -> str:
    return exc.strerror or str(exc)


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
    if is_direct(path):
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
    previous = previous_tables(final, tables) if os.path.isdir(final) else None
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
