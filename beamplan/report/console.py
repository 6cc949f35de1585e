"""The rich console that the command line prints report renderables to."""

from __future__ import annotations

from typing import Any

__all__ = ["make_console"]


def make_console(stream: Any) -> Any:
    """A rich console on ``stream`` (colour only on a terminal; ``NO_COLOR`` is honoured).

    Examples
    --------
    >>> import io
    >>> make_console(io.StringIO()).is_terminal
    False
    """
    from rich.console import Console

    return Console(file=stream, highlight=False)
