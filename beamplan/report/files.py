"""Write output files atomically, and never over an input file."""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterable

from beamplan.errors import OutputError, UsageError

__all__ = ["refuse_inputs", "write_atomic", "write_tables"]


def _same_file(a: str, b: str) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return os.path.realpath(a) == os.path.realpath(b)


def refuse_inputs(outputs: Iterable[str | None], inputs: Iterable[str]) -> None:
    """Refuse, before any work, an output path that names an input file.

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
        if path and path != "-":
            for source in sources:
                if os.path.exists(path) and _same_file(path, source):
                    raise UsageError(f"refusing to write over the input file {path!r}; "
                                     "choose another output name")


def write_atomic(path: str, text: str | bytes, inputs: Iterable[str] = ()) -> None:
    """Write ``text`` (or bytes) to ``path`` through a temporary file and a rename.

    Raises
    ------
    UsageError
        ``path`` is one of ``inputs`` (beamplan never writes over an input).
    OutputError
        The file cannot be written.

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
    """
    refuse_inputs([path], inputs)
    folder = os.path.dirname(os.path.abspath(path))
    try:
        handle, temp = tempfile.mkstemp(prefix=".beamplan-", suffix=".tmp", dir=folder)
    except OSError as exc:
        raise OutputError(f"cannot write {path!r}: {exc.strerror or exc}") from exc
    try:
        if isinstance(text, bytes):
            with os.fdopen(handle, "wb") as raw:
                raw.write(text)
        else:
            with os.fdopen(handle, "w", encoding="utf-8", newline="") as out:
                out.write(text)
        os.chmod(temp, 0o644)
        os.replace(temp, path)
    except OSError as exc:
        with contextlib.suppress(OSError):
            os.unlink(temp)
        raise OutputError(f"cannot write {path!r}: {exc.strerror or exc}") from exc


def write_tables(folder: str, tables: dict[str, str], inputs: Iterable[str] = ()) -> list[str]:
    """Write named texts (CSV tables) into ``folder``, created if needed; return the paths.

    Examples
    --------
    >>> import os, tempfile
    >>> folder = os.path.join(tempfile.mkdtemp(), "tables")
    >>> [os.path.basename(p) for p in write_tables(folder, {"a.csv": "x\\n"})]
    ['a.csv']
    """
    try:
        os.makedirs(folder, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"cannot create the folder {folder!r}: {exc.strerror}") from exc
    written = []
    for name, text in tables.items():
        path = os.path.join(folder, name)
        write_atomic(path, text, inputs)
        written.append(path)
    return written
