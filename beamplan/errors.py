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
    "excerpt",
    "printable",
]

EXCERPT_CHARS = 60  # an input value echoed in a message is cut to this length
MESSAGE_CHARS = 1000  # and no message line is longer than this


def _escape_char(char: str) -> str:
    code = ord(char)
    if char == "\n":
        return "\\n"
    if char == "\t":
        return "\\t"
    if char == "\r":
        return "\\r"
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def _unsafe(char: str) -> bool:
    # control and format characters (bidi overrides), line and paragraph separators,
    # unusual spaces, unassigned code points: whatever Python calls unprintable
    return not char.isprintable()


def printable(text: str, limit: int = MESSAGE_CHARS) -> str:
    """``text`` safe for a terminal: control characters escaped, on one line, bounded.

    Examples
    --------
    >>> printable("bad\\x1b[31mred\\nline")
    'bad\\\\x1b[31mred\\\\nline'
    >>> len(printable("x" * 5000))
    1000
    """
    if text.isascii() and text.isprintable():
        out = text
    else:
        out = "".join(_escape_char(c) if _unsafe(c) else c for c in text)
    if len(out) > limit:
        out = out[:limit - 1] + "…"
    return out


def excerpt(value: object, limit: int = EXCERPT_CHARS, quote: bool = True) -> str:
    """A short, escaped, quoted excerpt of an input value, for a message.

    Strings are quoted; other values are shown as Python writes them. Past
    ``limit`` characters the excerpt ends with an ellipsis.

    Examples
    --------
    >>> excerpt("11 kW")
    "'11 kW'"
    >>> excerpt("a\\nb")
    "'a\\\\nb'"
    >>> excerpt("x" * 100)
    "'xxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxx…'"
    >>> excerpt({"a": [1, 2]})
    "{'a': [1, 2]}"
    """
    text = value if isinstance(value, str) else _short_repr(value, limit)
    text = printable(text, limit)
    return f"'{text}'" if quote and isinstance(value, str) else text


def _short_repr(value: object, limit: int) -> str:
    """``repr`` of a value without building the whole text of a huge one."""
    if isinstance(value, (list, tuple, dict)) and len(value) > limit:
        items = list(value.items())[:limit] if isinstance(value, dict) else list(value)[:limit]
        return repr(dict(items) if isinstance(value, dict) else items)[:limit] + "…"
    if isinstance(value, int) and not isinstance(value, bool) and value.bit_length() > 200:
        return f"a number of about {int(value.bit_length() * 0.30103):,} digits"
    try:
        return repr(value)
    except (ValueError, RecursionError):  # a huge int, a deeply nested value
        return f"a {type(value).__name__}"


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
        if self.line <= 0:  # a place without lines, e.g. "--fail, argument 2"
            return self.file
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
        """The one-line form ``FILE:LINE:COL: severity: message; hint``.

        Control characters and line breaks are escaped, so the line is safe
        to print to a terminal.
        """
        where = f"{self.location}: " if self.location else ""
        tail = f"; {self.hint}" if self.hint else ""
        return printable(f"{where}{self.severity}: {self.message}{tail}")

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
    """Base of the errors that the command line turns into an exit code.

    Its text is one line, escaped and bounded (:func:`printable`).

    Examples
    --------
    >>> str(UsageError("no such file: 'a\\x1b[2Jb'"))
    "no such file: 'a\\\\x1b[2Jb'"
    """

    exit_code: ExitCode = ExitCode.INTERNAL

    def __str__(self) -> str:
        return printable(super().__str__())


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
