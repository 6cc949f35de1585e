"""Margin under uncertainty: Monte Carlo over tolerances, in two modes, with sensitivity.

Samples are drawn in chunks (seeded per chunk, so the result does not depend
on how chunks are scheduled), turned into knob factors
(:mod:`~beamplan.analyses.tolerance_model`) and evaluated with the plan's
settings held (:mod:`~beamplan.analyses.tolerance_fixed`) or re-planned per
sample (:mod:`~beamplan.analyses.tolerance_retune`). Each chunk returns
counts and histograms only, which add up exactly in any order: the same seed
gives the same bytes on any executor.
"""

from __future__ import annotations

import threading
import warnings
from collections.abc import Callable
from concurrent.futures import Executor, Future, ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np

from beamplan.analyses.tolerance_fixed import FixedPaths, fixed_paths
from beamplan.analyses.tolerance_model import ToleranceModel
from beamplan.analyses.tolerance_stats import SobolIndices, sobol_indices
from beamplan.network.graph import Network
from beamplan.optimise.planner import MET_RTOL
from beamplan.optimise.result import Plan
from beamplan.vocabulary import ScannerStatus, Solver

__all__ = ["CHUNK", "EDGES", "MODES", "SAMPLERS", "Tally", "ToleranceRun", "run_tolerance",
           "uniforms"]

MODES = ("fixed", "retuned")
SAMPLERS = ("random", "sobol", "lhs")
CHUNK = 8192  # samples per chunk: a power of two keeps Sobol' points balanced
EDGES = np.linspace(0.0, 4.0, 4001)  # histogram of delivered ÷ need: steps of 0.001
MEET = 1.0 - MET_RTOL


@dataclass(frozen=True)
class Tally:
    """What a chunk adds up to: counts of needs met and histograms of the factors."""

    samples: int
    met: np.ndarray  # per scanner
    all_met: int  # every need met (fixed mode: and no heat limit exceeded)
    histograms: np.ndarray  # (scanners × bins) of delivered ÷ need
    min_histogram: np.ndarray  # the lowest factor per sample
    overheated: int = 0  # fixed mode: samples in which a heat limit is exceeded

    def __add__(self, other: Tally) -> Tally:
        return Tally(self.samples + other.samples, self.met + other.met,
                     self.all_met + other.all_met, self.histograms + other.histograms,
                     self.min_histogram + other.min_histogram,
                     self.overheated + other.overheated)


_STEP = 0.001


def _bins(values: np.ndarray) -> np.ndarray:
    """Histogram bin of each value: floor(value / step), NaN and below 0 in the first
    bin, above 4 (and +inf) in the last; EDGES are evenly spaced."""
    scaled = values / _STEP
    np.fmax(scaled, 0.0, out=scaled)  # NaN and -inf to the first bin
    np.fmin(scaled, len(EDGES) - 2, out=scaled)  # +inf to the last
    return scaled.astype(np.intp)


def _histogram(values: np.ndarray) -> np.ndarray:
    return np.bincount(_bins(values), minlength=len(EDGES) - 1)


def tally(factors: np.ndarray, lowest: np.ndarray | None = None,
          overheated: np.ndarray | None = None) -> Tally:
    """The tally of factors (samples × scanners); ``lowest`` overrides their row minimum.

    ``overheated`` marks samples that fail the fab-wide check whatever the factors.

    Examples
    --------
    >>> t = tally(np.array([[1.2, 0.9], [1.1, 1.05]]))
    >>> t.met.tolist(), t.all_met
    ([2, 1], 1)
    """
    n, s = factors.shape
    low = factors.min(axis=1) if lowest is None else lowest
    bins = len(EDGES) - 1
    if s:  # every scanner's histogram in one count: bin + scanner × bins
        index = _bins(factors)
        index += np.arange(s) * bins
        hist = np.bincount(index.ravel(), minlength=s * bins).reshape(s, bins)
        met = np.count_nonzero(factors >= MEET, axis=0)
    else:
        hist = np.zeros((0, bins), dtype=np.int64)
        met = np.zeros(0, dtype=np.int64)
    ok = low >= MEET if lowest is not None else (factors >= MEET).all(axis=1)
    if overheated is not None:
        ok &= ~overheated
    return Tally(n, met, int(np.count_nonzero(ok)), hist, _histogram(low),
                 0 if overheated is None else int(np.count_nonzero(overheated)))


def uniforms(sampler: str, dims: int, start: int, size: int, seed: int) -> np.ndarray:
    """Uniform inputs for samples ``start .. start+size`` (the same whoever draws them).

    Examples
    --------
    >>> a = uniforms("sobol", 3, 8, 4, seed=1)
    >>> bool(np.array_equal(a, uniforms("sobol", 3, 0, 12, seed=1)[8:]))
    True
    """
    if dims == 0:
        return np.zeros((size, 0))
    if sampler == "random":
        return np.random.default_rng([seed, start]).random((size, dims))
    from scipy.stats import qmc

    if sampler == "sobol":
        engine = qmc.Sobol(dims, scramble=True, seed=seed)
        if start:
            engine.fast_forward(start)
        with warnings.catch_warnings():  # a last chunk short of a power of two is expected
            warnings.simplefilter("ignore", UserWarning)
            return np.asarray(engine.random(size))
    if sampler == "lhs":
        return np.asarray(qmc.LatinHypercube(dims, seed=np.random.default_rng([seed, start]))
                          .random(size))
    raise ValueError(f"unknown sampler {sampler!r}; the samplers are {', '.join(SAMPLERS)}")


@dataclass(frozen=True)
class _Job:
    network: Network
    plan: Plan
    model: ToleranceModel
    mode: str
    sampler: str
    seed: int
    solver: str


_EVALUATORS: dict[tuple[object, ...], object] = {}
_LAST: list[object] = [None, None]  # the last job and its evaluator: no key to hash
_BUILDING = threading.Lock()


Evaluator = Callable[[np.ndarray], tuple[np.ndarray, np.ndarray, np.ndarray | None]]


def _evaluator(job: _Job) -> Evaluator:
    """(factors, lowest factor, overheated or None) per sample for factor columns."""
    last = tuple(_LAST)
    if last[0] is job:
        return last[1]  # type: ignore[return-value]
    with _BUILDING:
        evaluator = _build_evaluator(job)
        _LAST[:] = [job, evaluator]
    return evaluator


def _build_evaluator(job: _Job) -> Evaluator:
    # By content, not identity: a worker process gets a fresh copy with every task.
    key = (job.network.sha256, len(job.network.nodes), job.mode, job.solver, job.model.knobs,
           job.model.dim_labels, job.plan.headroom_factor)
    if key in _EVALUATORS:
        return _EVALUATORS[key]  # type: ignore[return-value]
    _EVALUATORS.clear()
    evaluator: Evaluator
    if job.mode == "fixed":
        paths: FixedPaths = fixed_paths(job.network, job.plan, job.model)
        # A heat limit exceeded fails the fab-wide check (a re-plan obeys it).
        evaluator = paths.evaluate
    else:
        from beamplan.analyses.tolerance_retune import RetuneModel

        live = RetuneModel(job.network, job.model, job.solver)

        def retuned(cols: np.ndarray) -> tuple[np.ndarray, np.ndarray, None]:
            factors, best = live.evaluate(cols)
            return factors, best, None

        evaluator = retuned
    _EVALUATORS[key] = evaluator
    return evaluator


def run_chunk(job: _Job, start: int, size: int) -> Tally:
    """Draw and evaluate samples ``start .. start+size`` (a worker's task)."""
    u = uniforms(job.sampler, job.model.dimensions, start, size, job.seed)
    factors, best, hot = _evaluator(job)(job.model.factors(u))
    return tally(factors, best, hot)


def run_chunks(job: _Job, starts: list[tuple[int, int]]) -> Tally:
    """Several chunks in one task (fewer round trips to a worker); the same tally."""
    total = run_chunk(job, *starts[0])
    for start, size in starts[1:]:
        total = total + run_chunk(job, start, size)
    return total


def evaluate_uniforms(job: _Job, u: np.ndarray) -> np.ndarray:
    """Each scanner's factor and the lowest (last column) for given uniforms."""
    factors, best, _ = _evaluator(job)(job.model.factors(u))
    return np.column_stack([factors, best])


@dataclass(frozen=True)
class ToleranceRun:
    """The outcome of a tolerance run (see :func:`run_tolerance`)."""

    layout: str
    mode: str
    sampler: str
    seed: int
    requested: int
    scanners: tuple[str, ...]
    need_w: tuple[float, ...]
    planned_factor: tuple[float, ...]
    tally: Tally
    model: ToleranceModel
    sensitivity: SobolIndices | None
    interrupted: bool
    width: float | None = None


def run_tolerance(network: Network, plan: Plan, model: ToleranceModel, *, samples: int = 20000,
                  mode: str = "fixed", sampler: str = "random", seed: int = 0,
                  solver: Solver | str = Solver.AUTO, executor: Executor | None = None,
                  progress: Callable[[int, int], None] | None = None,
                  sensitivity_samples: int = 512, width: float | None = None,
                  threads: int = 1) -> ToleranceRun:
    """Sample the tolerances and tally how often each scanner (and all) meet their need.

    Parameters
    ----------
    mode
        ``fixed``: the plan's settings stay; ``retuned``: re-plan every sample.
    executor
        Run chunks on it (any ``concurrent.futures.Executor``); ``None`` runs here.
    threads
        Fixed mode without an executor: run chunks on this many threads of this
        process (numpy releases the GIL); the same tally as one thread.
    sensitivity_samples
        Saltelli base samples for the Sobol' indices (a power of two; 0: none).
    progress
        Called with (samples done, samples in all).

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.layout.tolerances import load_tolerances
    >>> from beamplan.network.graph import build_network
    >>> from beamplan.optimise.planner import plan_network
    >>> from beamplan.analyses.tolerance_model import build_model
    >>> lay = load_layout("layouts/two-bay.yaml")
    >>> net = build_network(lay)
    >>> plan = plan_network(net)
    >>> model = build_model(load_tolerances("layouts/tolerances/two-bay.yaml"), lay, net, plan)
    >>> run = run_tolerance(net, plan, model, samples=2000, sensitivity_samples=0)
    >>> run.tally.samples, 0 <= run.tally.all_met <= 2000
    (2000, True)
    """
    if mode not in MODES:
        raise ValueError(f"unknown mode {mode!r}; the modes are {', '.join(MODES)}")
    uniforms(sampler, 1, 0, 1, seed)  # refuse an unknown sampler before any work
    job = _Job(network, plan, model, mode, sampler, seed, solver)
    chunk = CHUNK if mode == "fixed" else 256
    starts = [(s, min(chunk, samples - s)) for s in range(0, samples, chunk)]
    serving = [s for s in plan.scanners if s.status != ScannerStatus.OUT_OF_SERVICE]
    total = tally(np.zeros((0, len(serving))))
    interrupted = False
    pool = ThreadPoolExecutor(threads) if executor is None and threads > 1 and \
        mode == "fixed" else None  # a live model is not shared between threads
    executor = executor or pool
    try:
        if executor is None:
            for start, size in starts:
                total = total + run_chunk(job, start, size)
                if progress:
                    progress(total.samples, samples)
        else:
            # About eight tasks per worker-sized share: each returns one tally.
            per = max(1, len(starts) // 16) if mode == "fixed" else 1
            futures: list[Future[Tally]] = [executor.submit(run_chunks, job, starts[i:i + per])
                                            for i in range(0, len(starts), per)]
            try:
                from concurrent.futures import as_completed

                for future in as_completed(futures):
                    total = total + future.result()
                    if progress:
                        progress(total.samples, samples)
            except KeyboardInterrupt:
                for future in futures:
                    future.cancel()
                raise
    except KeyboardInterrupt:
        interrupted = True
    finally:
        if pool is not None:
            pool.shutdown(wait=True, cancel_futures=True)
    indices = None
    if sensitivity_samples and model.dimensions and not interrupted:
        try:
            indices = sobol_indices(model.dim_labels, lambda u: evaluate_uniforms(job, u),
                                    sensitivity_samples, seed)
        except KeyboardInterrupt:
            interrupted = True
    return ToleranceRun(network.name, mode, sampler, seed, samples,
                        tuple(s.id for s in serving), tuple(s.need_w for s in serving),
                        tuple(s.delivered_w / s.need_w for s in serving), total, model,
                        indices, interrupted, width)
