"""Progress on a terminal (rich): a bar for sweeps, a named stage for other long work."""

from __future__ import annotations

import contextlib
import time
from collections.abc import Callable, Iterator
from typing import Any

__all__ = ["Stages", "progress_bar", "progress_stages"]


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


class Stages:
    """Names the stage of a long command on a terminal: ``stages.show("planning")``.

    Built by :func:`progress_stages`; on a non-terminal stream it does nothing.
    """

    def __init__(self, bar: Any = None) -> None:
        self._bar = bar
        self._task: Any = None

    def show(self, label: str) -> None:
        """Show ``label`` as the current stage (with a spinner and the time taken)."""
        if self._bar is None:
            return
        if self._task is None:
            self._task = self._bar.add_task(label, total=None)
        self._bar.update(self._task, description=label)
        self._bar.refresh()  # at once, so that even a short stage is named


@contextlib.contextmanager
def progress_stages(stream: Any, quiet: bool = False) -> Iterator[Stages]:
    """Yield a :class:`Stages` that shows what a command is doing, on a terminal only.

    Nothing is shown when ``quiet`` or when ``stream`` is not a terminal, so
    logs and pipes stay clean; the line is erased when the command is done.

    Examples
    --------
    >>> import io
    >>> with progress_stages(io.StringIO()) as stages:
    ...     stages.show("loading")
    """
    if quiet or not getattr(stream, "isatty", lambda: False)():
        yield Stages()
        return
    from rich.console import Console
    from rich.progress import Progress, SpinnerColumn, TextColumn, TimeElapsedColumn

    bar = Progress(SpinnerColumn(), TextColumn("[progress.description]{task.description}"),
                   TimeElapsedColumn(), console=Console(file=stream), transient=True,
                   refresh_per_second=8, redirect_stdout=False)
    bar.start()
    try:
        yield Stages(bar)
    finally:
        bar.stop()
