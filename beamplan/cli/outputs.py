"""Output glue shared by the commands: ``-`` is stdout for every output option.

Every output option (``--json``, ``--html``, ``draw -o``) takes ``-`` for
standard output; ``--csv`` takes a folder and refuses ``-``. Everything else
goes through :mod:`beamplan.report.files` (atomic, never over an input).
"""

from __future__ import annotations

import sys
from collections.abc import Iterable

from beamplan.errors import OutputError, UsageError
from beamplan.report.files import write_atomic
from beamplan.report.output_paths import STDOUT, check_outputs

__all__ = ["STDOUT", "check", "emit"]


def check(files: Iterable[tuple[str, str | None]], folders: Iterable[tuple[str, str | None]],
          inputs: Iterable[str | None]) -> bool:
    """Check the outputs before any work (:func:`check_outputs`); True if one goes to stdout.

    Examples
    --------
    >>> check([("--json", "-"), ("--html", None)], [("--csv", None)], ["layouts/two-bay.yaml"])
    True
    """
    files = list(files)
    check_outputs(files, folders, [p for p in inputs if p])
    return any(path == STDOUT for _, path in files)


def emit(path: str, data: str | bytes, inputs: Iterable[str | None] = ()) -> None:
    """Write ``data`` to ``path``, or to stdout when ``path`` is ``-``.

    Raises
    ------
    OutputError
        The output cannot be written, stdout included (exit 5).
    """
    try:
        sys.stdout.flush()  # whatever is printed so far comes first, also for /dev/stdout
        if path == STDOUT:
            if isinstance(data, bytes):  # the commands refuse binary formats on '-'
                raise UsageError("binary output cannot go to stdout; give a file name")
            sys.stdout.write(data)
            sys.stdout.flush()
            return
    except OSError as exc:  # a closed pipe, a full disk behind a redirect
        raise OutputError(f"cannot write to stdout: {exc.strerror or exc}") from exc
    write_atomic(path, data, [p for p in inputs if p])
