"""A progress bar for long sweeps (rich), shown only on a terminal."""

from __future__ import annotations

import contextlib
import time
from collections.abc import Callable, Iterator
from typing import Any

__all__ = ["progress_bar"]


@contextlib.contextmanager
def progress_bar(label: str, stream: Any) -> Iterator[Callable[[int, int], None]]:
    """Yield a ``(done, total)`` callback that draws a bar once a second has passed.

    On a non-terminal stream the callback does nothing, so logs stay clean.

    Examples
    --------
    >>> import io
    >>> with progress_bar("cases", io.StringIO()) as step:
    ...     step(1, 2)
    """
    out = stream
    if not getattr(out, "isatty", lambda: False)():
        yield lambda done, total: None
        return
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TimeRemainingColumn

    start = time.monotonic()
    bar = Progress("[progress.description]{task.description}", BarColumn(),
                   MofNCompleteColumn(), TimeRemainingColumn(),
                   console=Console(file=out), transient=True)
    task: list[Any] = []

    def step(done: int, total: int) -> None:
        if not task and time.monotonic() - start < 1.0:
            return
        if not task:
            bar.start()
            task.append(bar.add_task(label, total=total))
        bar.update(task[0], completed=done, total=total)

    try:
        yield step
    finally:
        if task:
            bar.stop()
