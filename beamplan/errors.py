"""Diagnostics, exceptions and exit codes shared by every layer.

Every problem that beamplan finds in a user's input becomes a
:class:`Diagnostic`: a located, one-line message that names the element,
says what is wrong and what would be right. Problems are collected, not
raised one at a time, so that a user sees all of them at once.
"""

from __future__ import annotations

import difflib
import enum
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

__all__ = [
    "BeamplanError",
    "Diagnostic",
    "ExitCode",
    "InternalError",
    "LayoutError",
    "Location",
    "OutputError",
    "UsageError",
    "did_you_mean",
]


class ExitCode(enum.IntEnum):
    """Exit codes of the ``beamplan`` command (documented in docs/exit-codes.md)."""

    OK = 0
    INVALID = 1
    USAGE = 2
    SHORT = 3
    INTERNAL = 4
    OUTPUT = 5


@dataclass(frozen=True, order=True)
class Location:
    """A position in an input file, 1-based line and column.

    Examples
    --------
    >>> str(Location("bay.yaml", 12, 5))
    'bay.yaml:12:5'
    """

    file: str
    line: int
    column: int

    def __str__(self) -> str:
        return f"{self.file}:{self.line}:{self.column}"

    def shifted(self, columns: int) -> Location:
        """The same line, ``columns`` further right."""
        return Location(self.file, self.line, self.column + columns)


@dataclass(frozen=True)
class Diagnostic:
    """One problem found in an input.

    Attributes
    ----------
    severity
        ``"error"`` (the input cannot be used) or ``"warning"``.
    code
        A short stable slug, e.g. ``"unknown-id"``, for scripts and tests.
    message
        What is wrong, naming the element.
    location
        Where, or ``None`` when the problem has no single place.
    hint
        What would be right; empty when there is nothing to add.

    Examples
    --------
    >>> d = Diagnostic("error", "bad-value", "element 'm1': reflectivity 1.2 is above 1",
    ...                Location("a.yaml", 3, 18), "give a value between 0 and 1")
    >>> d.format()
    "a.yaml:3:18: error: element 'm1': reflectivity 1.2 is above 1; give a value between 0 and 1"
    """

    severity: str
    code: str
    message: str
    location: Location | None = None
    hint: str = ""

    def format(self) -> str:
        """The one-line form ``FILE:LINE:COL: severity: message; hint``."""
        where = f"{self.location}: " if self.location else ""
        tail = f"; {self.hint}" if self.hint else ""
        return f"{where}{self.severity}: {self.message}{tail}"

    @property
    def is_error(self) -> bool:
        """True for errors, False for warnings."""
        return self.severity == "error"

    def sort_key(self) -> tuple[str, int, int, str]:
        """Order by file position, then message."""
        loc = self.location
        if loc is None:
            return ("~", 0, 0, self.message)
        return (loc.file, loc.line, loc.column, self.message)


class BeamplanError(Exception):
    """Base of the errors that the command line turns into an exit code."""

    exit_code: ExitCode = ExitCode.INTERNAL


class LayoutError(BeamplanError):
    """An input (layout or case file) has errors; carries all diagnostics found.

    Examples
    --------
    >>> err = LayoutError([Diagnostic("error", "x", "broken")])
    >>> err.exit_code, len(err.errors)
    (<ExitCode.INVALID: 1>, 1)
    """

    exit_code = ExitCode.INVALID

    def __init__(self, diagnostics: Iterable[Diagnostic]) -> None:
        self.diagnostics = tuple(sorted(diagnostics, key=Diagnostic.sort_key))
        errors = [d for d in self.diagnostics if d.is_error]
        first = errors[0].format() if errors else "invalid input"
        more = f" (and {len(errors) - 1} more)" if len(errors) > 1 else ""
        super().__init__(first + more)

    @property
    def errors(self) -> tuple[Diagnostic, ...]:
        """The diagnostics of severity ``error``."""
        return tuple(d for d in self.diagnostics if d.is_error)


class UsageError(BeamplanError):
    """The command line is wrong (bad option, missing file, refusing to overwrite)."""

    exit_code = ExitCode.USAGE


class OutputError(BeamplanError):
    """An output could not be written."""

    exit_code = ExitCode.OUTPUT


class InternalError(BeamplanError):
    """A bug: a result failed its own verification. Please report it."""

    exit_code = ExitCode.INTERNAL


def did_you_mean(word: str, choices: Sequence[str] | Iterable[str]) -> str:
    """A "did you mean" hint for a near-miss name, or an empty string.

    Examples
    --------
    >>> did_you_mean("m22", ["m1", "m2", "litho-01"])
    "did you mean 'm2'?"
    >>> did_you_mean("zzz", ["m1"])
    ''
    """
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.5)
    return f"did you mean {close[0]!r}?" if close else ""
