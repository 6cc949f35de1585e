"""Outage sweeps: fail elements, sources and scanners one (or two) at a time.

Each case is re-planned on one live model per worker (the LP is built once
and edited in place, see :class:`beamplan.optimise.live.LiveModel`). The
engine runs in process, or on any :class:`concurrent.futures.Executor`
(processes by default), so a distributed executor can be plugged in.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Iterable, Sequence
from concurrent.futures import Executor, Future
from dataclasses import dataclass, field

from beamplan.network.dominators import single_points_of_failure
from beamplan.network.graph import Network
from beamplan.optimise.live import CaseSummary, LiveModel
from beamplan.optimise.planner import MET_RTOL
from beamplan.optimise.result import Plan

__all__ = ["OutageResult", "SweepReport", "outage_cases", "run_sweep"]

LOST_RTOL = 1e-6


@dataclass(frozen=True)
class OutageResult:
    """The impact of one outage case (one or two nodes out of service)."""

    failed: tuple[str, ...]
    kinds: tuple[str, ...]
    headroom_factor: float
    headroom_lost: float
    source_used_w: float
    delivered_w: float
    delivered_lost_w: float
    losing: tuple[tuple[str, float, float], ...]  # (scanner, base W, case W) that lose power
    short: tuple[tuple[str, float], ...]  # (scanner, shortfall W)
    cut_off: tuple[str, ...]
    status: str

    @property
    def label(self) -> str:
        """The case as people write it, e.g. ``m2 + t4``."""
        return " + ".join(self.failed)


@dataclass(frozen=True)
class SweepReport:
    """A finished (or interrupted) sweep, ranked by impact."""

    layout: str
    goal: str
    base: Plan
    results: tuple[OutageResult, ...]
    total_cases: int
    single_points: dict[str, tuple[str, ...]] = field(default_factory=dict)
    disagreements: tuple[str, ...] = ()
    interrupted: bool = False

    @property
    def finished(self) -> int:
        """How many cases were planned."""
        return len(self.results)


def outage_cases(network: Network, *, kinds: Sequence[str] = (), ids: Sequence[str] = (),
                 pairs: bool = False, max_pairs: int = 5000) -> list[tuple[str, ...]]:
    """The cases of a sweep: every node (or those of ``kinds`` / in ``ids``), singly or in pairs.

    Raises
    ------
    ValueError
        For an unknown id or kind, or more pairs than ``max_pairs``.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
    >>> len(outage_cases(net)), outage_cases(net, kinds=["splitter"])
    (11, [('t1',), ('t2',)])
    """
    known = {n.id for n in network.nodes}
    for node_id in ids:
        if node_id not in known:
            from beamplan.errors import did_you_mean

            hint = did_you_mean(node_id, sorted(known))
            raise ValueError(f"no element, source or scanner '{node_id}'" +
                             (f"; {hint}" if hint else ""))
    kinds_known = {n.kind for n in network.nodes}
    for kind in kinds:
        if kind not in kinds_known:
            raise ValueError(f"no node of kind '{kind}' in this layout; its kinds are: "
                             f"{', '.join(sorted(kinds_known))}")
    chosen = [n.id for n in network.nodes if n.in_service and
              (not kinds or n.kind in kinds) and (not ids or n.id in ids)]
    if not pairs:
        return [(c,) for c in chosen]
    count = len(chosen) * (len(chosen) - 1) // 2
    if count > max_pairs:
        raise ValueError(f"{count} pairs of outages exceed the bound of {max_pairs}; narrow "
                         "the sweep with --kind or --only, or raise --max-pairs")
    return list(itertools.combinations(chosen, 2))


def _impact(base: CaseSummary, case: CaseSummary, failed: tuple[str, ...],
            network: Network) -> OutageResult:
    losing, short, cut = [], [], []
    factor = float("inf")
    for sid, got in case.delivered_w.items():
        node = network.node[sid]
        was = base.delivered_w.get(sid, 0.0)
        factor = min(factor, got / node.need_w)
        if got < was * (1 - LOST_RTOL) - 1e-9:
            losing.append((sid, was, got))
        if got < node.need_w * (1 - MET_RTOL):
            short.append((sid, node.need_w - got))
        if got <= 1e-9 * node.need_w and was > 0:
            cut.append(sid)
    factor = 0.0 if factor == float("inf") else factor
    base_factor = min((got / network.node[sid].need_w for sid, got in base.delivered_w.items()),
                      default=0.0)
    total, base_total = sum(case.delivered_w.values()), sum(base.delivered_w.values())
    return OutageResult(failed, tuple(network.node[f].kind for f in failed), factor,
                        base_factor - factor, case.source_used_w, total, base_total - total,
                        tuple(losing), tuple(short), tuple(cut), "short" if short else "met")


_WORKERS: dict[tuple[str, int, int, str], LiveModel] = {}
_BASES: dict[tuple[str, int, int, str, str], CaseSummary] = {}


def _key(network: Network, solver: str) -> tuple[str, int, int, str]:
    # By content, not identity: a worker process gets a fresh copy with every chunk.
    return (network.sha256, len(network.nodes), len(network.links), solver)


def _live(network: Network, solver: str) -> LiveModel:
    key = _key(network, solver)
    if key not in _WORKERS:
        _WORKERS.clear()
        _BASES.clear()
        _WORKERS[key] = LiveModel(network, solver)
    return _WORKERS[key]


def run_chunk(network: Network, goal: str, solver: str, cases: Sequence[tuple[str, ...]]
              ) -> list[OutageResult]:
    """Plan a chunk of outage cases on this process's live model (a worker's task).

    ``goal`` may also be ``"screen"``: the sweep's fast form of ``headroom``
    (see :func:`beamplan.optimise.goals.run_goal`).
    """
    live = _live(network, solver)
    base_key = (*_key(network, solver), goal)
    if base_key not in _BASES:
        _BASES[base_key] = live.summary(goal)
    base = _BASES[base_key]
    network = live.network
    out = []
    for failed in cases:
        with live.outage(failed):
            summary = live.summary(goal)
        out.append(_impact(base, summary, failed, network))
    return out


def _rank(result: OutageResult) -> tuple[int, int, float, float, str]:
    # Rounded, so that round-off does not reorder ties between runs or workers.
    return (-len(result.cut_off), -len(result.short), -round(result.headroom_lost, 7),
            -round(result.delivered_lost_w, 3), result.label)


def _cross_check(results: Iterable[OutageResult], spof: dict[str, tuple[str, ...]]
                 ) -> tuple[str, ...]:
    problems = []
    for r in results:
        if len(r.failed) != 1:
            continue
        expected = set(spof.get(r.failed[0], ()))
        if expected != set(r.cut_off):
            problems.append(f"{r.failed[0]}: dominators say {sorted(expected)}, the re-plan "
                            f"cuts off {sorted(r.cut_off)}")
    return tuple(problems)


def run_sweep(network: Network, cases: Sequence[tuple[str, ...]], *, goal: str = "headroom",
              solver: str = "auto", executor: Executor | None = None, chunk_size: int = 0,
              progress: Callable[[int, int], None] | None = None,
              exact: bool = False) -> SweepReport:
    """Re-plan every outage case and rank them by impact.

    Parameters
    ----------
    exact
        For goal ``headroom``: re-plan each case by full progressive filling.
        By default the sweep screens: the lowest factor and every shortfall are
        exact, and the power above the needs is spread by one LP.
    executor
        Run chunks of cases on it (any ``concurrent.futures.Executor``);
        ``None`` runs them in this process.
    progress
        Called with (cases done, cases in all) as chunks finish.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
    >>> report = run_sweep(net, outage_cases(net))
    >>> report.results[0].label, report.disagreements
    ('halo-fel', ())
    """
    base = LiveModel(network, solver).plan(goal)
    if goal == "headroom" and not exact:
        goal = "screen"
    size = chunk_size or max(8, min(200, len(cases) // 16 or 1))
    chunks = [list(cases[i:i + size]) for i in range(0, len(cases), size)]
    results: list[OutageResult] = []
    interrupted = False
    try:
        if executor is None:
            for chunk in chunks:
                results.extend(run_chunk(network, goal, solver, chunk))
                if progress:
                    progress(len(results), len(cases))
        else:
            futures: list[Future[list[OutageResult]]] = [
                executor.submit(run_chunk, network, goal, solver, chunk) for chunk in chunks]
            try:
                from concurrent.futures import as_completed

                for future in as_completed(futures):
                    results.extend(future.result())
                    if progress:
                        progress(len(results), len(cases))
            except KeyboardInterrupt:
                for future in futures:
                    future.cancel()
                raise
    except KeyboardInterrupt:
        interrupted = True
    spof = single_points_of_failure(network)
    ranked = tuple(sorted(results, key=_rank))
    return SweepReport(network.name, base.goal, base, ranked, len(cases), spof,
                       _cross_check(ranked, spof), interrupted)
