"""Where a command's many re-plans run: here, in worker processes, or on a Dask cluster.

Two functions, so that any command that farms out work takes the same options:

* :func:`add_executor_options` adds ``--jobs N`` (worker processes on this
  machine) and ``--cluster ADDRESS`` (a Dask distributed scheduler such as
  ``tcp://host:8786``, or ``local:N`` to start N local worker processes for
  this run only); the two exclude each other;
* :func:`executor_from` turns the parsed options into a
  :class:`concurrent.futures.Executor` (or ``None``: run in this process) for
  the duration of a ``with`` block, and closes what it started.

dask and distributed are an optional extra (``pip install "beamplan[cluster]"``);
they are imported only when ``--cluster`` is given, and their absence is one
clear line (exit 2). A command adopts the options with two lines::

    add_executor_options(parser)                      # in register()
    with executor_from(args, work=len(cases)) as executor:   # in the handler
        ...run_sweep(..., executor=executor)
"""

from __future__ import annotations

import argparse
import contextlib
import logging
import os
import re
from collections.abc import Iterator
from concurrent.futures import Executor
from types import ModuleType
from typing import Any, TextIO

from beamplan.errors import UsageError

__all__ = ["SERIAL_BELOW", "add_executor_options", "executor_from", "parse_cluster"]

SERIAL_BELOW = 300  # tasks: below this a default run stays in process (start-up would dominate)
CONNECT_TIMEOUT = "10s"  # how long to wait for a remote scheduler (common practice, no source)
INSTALL_HINT = 'pip install "beamplan[cluster]"'
_LOCAL = re.compile(r"local:(\d+)")


def add_executor_options(parser: argparse.ArgumentParser) -> None:
    """Add ``--jobs`` and ``--cluster`` (mutually exclusive) to a command's parser.

    Examples
    --------
    >>> parser = argparse.ArgumentParser()
    >>> add_executor_options(parser)
    >>> args = parser.parse_args(["--cluster", "local:2"])
    >>> args.jobs, args.cluster
    (0, 'local:2')
    """
    group = parser.add_mutually_exclusive_group()
    group.add_argument("--jobs", type=int, default=0, metavar="N",
                       help="worker processes on this machine (default: 1 for small runs, "
                       "else every core)")
    group.add_argument("--cluster", metavar="ADDRESS",
                       help="run on a Dask distributed cluster: a scheduler address such as "
                       "tcp://host:8786, or local:N to start N local worker processes for "
                       f"this run (needs {INSTALL_HINT})")


def parse_cluster(text: str) -> tuple[str, int]:
    """Read a ``--cluster`` value: ``("", N)`` for ``local:N``, else ``(address, 0)``.

    Raises
    ------
    UsageError
        For ``local:`` without a positive worker count, or an empty address.

    Examples
    --------
    >>> parse_cluster("local:2"), parse_cluster("tcp://10.0.0.5:8786")
    (('', 2), ('tcp://10.0.0.5:8786', 0))
    """
    value = text.strip()
    match = _LOCAL.fullmatch(value)
    if match and int(match[1]) > 0:
        return "", int(match[1])
    if value.startswith("local") or not value:
        raise UsageError(f"--cluster {text!r}: write local:N with N workers (e.g. local:2), "
                         "or a scheduler address such as tcp://host:8786")
    return value, 0


def _distributed() -> ModuleType:
    """Import distributed lazily; its absence is a usage error naming the extra."""
    try:
        import distributed
    except ImportError:
        raise UsageError(f"--cluster needs dask and distributed, which are not installed: "
                         f"{INSTALL_HINT}") from None
    return distributed


def _note(stream: TextIO | None, text: str) -> None:
    if stream is not None and getattr(stream, "isatty", lambda: False)():
        stream.write(f"beamplan: {text}\n")
        stream.flush()


@contextlib.contextmanager
def _dask(address: str, workers: int, progress: TextIO | None) -> Iterator[Executor]:
    distributed = _distributed()
    cluster: Any = None
    client: Any = None
    try:
        if workers:
            _note(progress, f"starting a local Dask cluster of {workers} worker processes")
            cluster = distributed.LocalCluster(
                n_workers=workers, threads_per_worker=1, processes=True,
                dashboard_address=":0", silence_logs=logging.ERROR)  # any free port
            client = distributed.Client(cluster)
        else:
            _note(progress, f"connecting to the Dask scheduler at {address}")
            try:
                client = distributed.Client(address, timeout=CONNECT_TIMEOUT)
            except (OSError, TimeoutError, ValueError) as exc:
                raise UsageError(f"--cluster {address}: cannot reach a Dask scheduler there "
                                 f"({exc})") from None
        executor: Executor = client.get_executor(pure=False)
        try:
            yield executor
        finally:
            executor.shutdown(wait=False)
    finally:
        if client is not None:
            client.close()
        if cluster is not None:
            cluster.close()


@contextlib.contextmanager
def executor_from(args: argparse.Namespace, *, work: int = 0,
                  progress: TextIO | None = None) -> Iterator[Executor | None]:
    """The executor the options ask for, for a ``with`` block; ``None`` means in process.

    Parameters
    ----------
    args
        Parsed options with ``jobs`` and ``cluster`` (:func:`add_executor_options`).
    work
        How many tasks the command has: without ``--jobs`` or ``--cluster``,
        fewer than :data:`SERIAL_BELOW` run in process, more on every core.
    progress
        Where to say that a cluster is starting or being reached (only on a
        terminal; pass ``None`` for quiet runs).

    Raises
    ------
    UsageError
        For a bad ``--cluster`` value, a scheduler that cannot be reached, or
        dask and distributed missing (exit 2).

    Examples
    --------
    >>> with executor_from(argparse.Namespace(jobs=1, cluster=None)) as executor:
    ...     executor is None
    True
    """
    cluster = getattr(args, "cluster", None)
    if cluster:
        address, workers = parse_cluster(cluster)
        with _dask(address, workers, progress) as executor:
            yield executor
        return
    jobs = int(getattr(args, "jobs", 0) or 0)
    if jobs <= 0:
        jobs = 1 if work < SERIAL_BELOW else (os.cpu_count() or 1)
    if jobs <= 1:
        yield None
        return
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    method = "forkserver" if "forkserver" in multiprocessing.get_all_start_methods() \
        else "spawn"
    pool = ProcessPoolExecutor(jobs, mp_context=multiprocessing.get_context(method))
    try:
        yield pool
    finally:
        pool.shutdown(wait=False, cancel_futures=True)
