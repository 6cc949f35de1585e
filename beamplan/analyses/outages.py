"""Outage sweeps: fail elements, sources and scanners one (or two) at a time.

Each case is re-planned on one live model per worker (the LP is built once
and edited in place, see :class:`beamplan.optimise.live.LiveModel`). The
engine runs in process, or on any :class:`concurrent.futures.Executor`
(processes by default), so a distributed executor can be plugged in.

Each outage has two views. **At failure**: re-planned with every switch where
it was. **After switching**: when the layout has switches (with ``select``)
and the outage leaves some scanner worse off, the switch positions that
restore the most service are searched (:mod:`beamplan.analyses.switching`)
and the case is planned again with them; the moves are kept. Outages are
ranked by the view after switching.
"""

from __future__ import annotations

import itertools
import pickle
from collections.abc import Callable, Iterable, Sequence
from concurrent.futures import Executor, Future
from dataclasses import dataclass, field, replace

from beamplan.analyses.chains import chains, group_cases, solve_sharing
from beamplan.analyses.switching import SwitchMove, best_positions, search_kind
from beamplan.analyses.workers import CACHE, live_model, model_key, models_built, packed_model
from beamplan.network.dominators import single_points_of_failure
from beamplan.network.graph import Network
from beamplan.optimise.live import CaseSummary, LiveModel
from beamplan.optimise.planner import MET_RTOL
from beamplan.optimise.result import Plan
from beamplan.vocabulary import Goal, ScannerStatus, Solver

__all__ = ["OutageResult", "OutageView", "SweepReport", "models_built", "outage_cases",
           "run_chunk", "run_packed", "run_sweep"]

LOST_RTOL = 1e-6
# This (main) thread's kept models and bases, under the names tests clear between reruns
# (the tables themselves live in analyses/workers, per worker thread).
_WORKERS, _BASES = CACHE.models, CACHE.bases


@dataclass(frozen=True)
class OutageView:
    """The impact of an outage with the switches in one set of positions."""

    headroom_factor: float
    headroom_lost: float
    source_used_w: float
    delivered_w: float
    delivered_lost_w: float
    losing: tuple[tuple[str, float, float], ...]  # (scanner, base W, case W) that lose power
    short: tuple[tuple[str, float], ...]  # (scanner, shortfall W)
    cut_off: tuple[str, ...]
    status: str
    served_factor: float = 0.0  # the lowest factor of the scanners not cut off


@dataclass(frozen=True)
class OutageResult:
    """The impact of one outage case (one or two nodes out of service), in both views.

    ``after`` is the view after corrective switching, ``at_failure`` the view
    with every switch where it was; they are the same object when no switch
    moved. The attributes of the view (``headroom_factor``, ``cut_off``, ...)
    read from ``after``. ``tried`` counts the switch positions planned.
    """

    failed: tuple[str, ...]
    kinds: tuple[str, ...]
    after: OutageView
    at_failure: OutageView
    moves: tuple[SwitchMove, ...] = ()
    tried: int = 0
    same_as: tuple[str, ...] = ()  # the case whose solve this one shares (same chain)

    @property
    def label(self) -> str:
        """The case as people write it, e.g. ``m2 + t4``."""
        return " + ".join(self.failed)

    @property
    def headroom_factor(self) -> float:
        """The lowest factor delivered ÷ need after switching."""
        return self.after.headroom_factor

    @property
    def headroom_lost(self) -> float:
        """Base lowest factor minus this one, after switching."""
        return self.after.headroom_lost

    @property
    def source_used_w(self) -> float:
        """Source power drawn after switching (W)."""
        return self.after.source_used_w

    @property
    def delivered_w(self) -> float:
        """Power delivered to scanners after switching (W)."""
        return self.after.delivered_w

    @property
    def delivered_lost_w(self) -> float:
        """Delivered power lost against the base, after switching (W)."""
        return self.after.delivered_lost_w

    @property
    def losing(self) -> tuple[tuple[str, float, float], ...]:
        """(scanner, base W, case W) for every scanner that loses power after switching."""
        return self.after.losing

    @property
    def short(self) -> tuple[tuple[str, float], ...]:
        """(scanner, shortfall W) after switching."""
        return self.after.short

    @property
    def cut_off(self) -> tuple[str, ...]:
        """Scanners that get nothing after switching."""
        return self.after.cut_off

    @property
    def status(self) -> str:
        """``met`` or ``short`` after switching."""
        return self.after.status


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
    single_points_at_failure: dict[str, tuple[str, ...]] = field(default_factory=dict)
    switch_search: str = "none"  # "none", "exhaustive" or "greedy" (analyses.switching)
    switches: dict[str, tuple[str, ...]] = field(default_factory=dict)

    @property
    def finished(self) -> int:
        """How many cases were planned."""
        return len(self.results)

    @property
    def distinct(self) -> int:
        """How many cases were solved; the others share the solve of a case of their chain."""
        return sum(1 for r in self.results if not r.same_as)


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
    chosen = [n.id for n in network.nodes if n.in_use and
              (not kinds or n.kind in kinds) and (not ids or n.id in ids)]
    if not pairs:
        return [(c,) for c in chosen]
    count = len(chosen) * (len(chosen) - 1) // 2
    if count > max_pairs:
        raise ValueError(f"{count} pairs of outages exceed the bound of {max_pairs}; narrow "
                         "the sweep with --kind or --only, or raise --max-pairs")
    return list(itertools.combinations(chosen, 2))


def _impact(base: CaseSummary, case: CaseSummary, network: Network) -> OutageView:
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
    served = min((got / network.node[sid].need_w for sid, got in case.delivered_w.items()
                  if sid not in cut), default=0.0)
    base_factor = min((got / network.node[sid].need_w for sid, got in base.delivered_w.items()),
                      default=0.0)
    total, base_total = sum(case.delivered_w.values()), sum(base.delivered_w.values())
    return OutageView(factor, base_factor - factor, case.source_used_w, total,
                      base_total - total, tuple(losing), tuple(short), tuple(cut),
                      ScannerStatus.SHORT if short else ScannerStatus.MET, served)


def _service_key(view: OutageView) -> tuple[int, int, float, float]:
    """Smaller is better: fewer cut off, fewer short, a higher lowest factor of the
    scanners still served, less power lost.

    Rounded, so that round-off does not reorder ties between runs or workers.
    """
    return (len(view.cut_off), len(view.short), -round(view.served_factor, 7),
            round(view.delivered_lost_w, 3))


def _switch_back(live: LiveModel, goal: str, base: CaseSummary, failed: tuple[str, ...],
                 at: OutageView) -> tuple[OutageView, tuple[SwitchMove, ...], int]:
    """Corrective switching for one outage (inside its ``live.outage`` block)."""
    network = live.network
    movable = {s: inputs for s, inputs in live.switches.items() if s not in failed}
    if not movable or not at.losing:
        return at, (), 0
    current = {s: str(network.node[s].select) for s in movable}

    def evaluate(positions: dict[str, str]) -> OutageView:
        with live.switched(positions):
            return _impact(base, live.summary(goal), network)

    return best_positions(movable, current, evaluate, _service_key, at)


def _plan_case(live: LiveModel, goal: str, base: CaseSummary, failed: tuple[str, ...]
               ) -> OutageResult:
    network = live.network
    with live.outage(failed):
        at = _impact(base, live.summary(goal), network)
        after, moves, tried = _switch_back(live, goal, base, failed, at)
    kinds = tuple(network.node[f].kind for f in failed)
    return OutageResult(failed, kinds, after, at, moves, tried)


def run_chunk(network: Network, goal: str, solver: str, cases: Sequence[tuple[str, ...]],
              share: bool = True) -> list[OutageResult]:
    """Plan a chunk of outage cases on this process's live model (a worker's task).

    ``goal`` may also be ``"screen"``: the sweep's fast form of ``headroom``
    (see :func:`beamplan.optimise.goals.run_goal`). Single outages of one
    fixed-gain chain that follow each other in ``cases`` share one solve where
    that is exact (:mod:`beamplan.analyses.chains`); the shared results name
    the case solved in ``same_as``.
    """
    return _run(live_model(network, solver), model_key(network, solver), goal, cases, share)


def run_packed(packed: bytes, key: tuple[str, int, int, str], goal: str, solver: str,
               cases: Sequence[tuple[str, ...]], share: bool = True) -> list[OutageResult]:
    """:func:`run_chunk` for a network sent pickled: a worker that already holds the
    live model for ``key`` does not unpickle it again (a worker's task)."""
    return _run(packed_model(packed, key, solver), key, goal, cases, share)


def _run(live: LiveModel, key: tuple[str, int, int, str], goal: str,
         cases: Sequence[tuple[str, ...]], share: bool) -> list[OutageResult]:
    base_key = (*key, goal)
    if base_key not in CACHE.bases:
        CACHE.bases[base_key] = live.summary(goal)
    base = CACHE.bases[base_key]
    chain = CACHE.chains.setdefault(key, chains(live.network)) if share else {}

    def shared(first: OutageResult, failed: tuple[str, ...]) -> OutageResult:
        kinds = tuple(live.network.node[f].kind for f in failed)
        return replace(first, failed=failed, kinds=kinds, same_as=first.failed)

    return solve_sharing(live, chain, cases, lambda failed: _plan_case(live, goal, base, failed),
                         shared)


def _rank(result: OutageResult) -> tuple[int, int, float, float, str]:
    # Rounded, so that round-off does not reorder ties between runs or workers.
    return (-len(result.cut_off), -len(result.short), -round(result.headroom_lost, 7),
            -round(result.delivered_lost_w, 3), result.label)


def _cross_check(results: Iterable[OutageResult], spof: dict[str, tuple[str, ...]],
                 spof_at_failure: dict[str, tuple[str, ...]] | None = None
                 ) -> tuple[str, ...]:
    """Dominators against re-plans (single outages only).

    ``spof`` is checked against the view after switching; ``spof_at_failure``,
    when the layout has switches, against the view at failure.
    """
    problems = []
    for r in results:
        if len(r.failed) != 1:
            continue
        checks = [(r.after, spof, "")]
        if spof_at_failure is not None:
            checks = [(r.after, spof, " (after switching)"),
                      (r.at_failure, spof_at_failure, " (at failure)")]
        for view, table, when in checks:
            expected = set(table.get(r.failed[0], ()))
            if expected != set(view.cut_off):
                problems.append(f"{r.failed[0]}{when}: dominators say {sorted(expected)}, "
                                f"the re-plan cuts off {sorted(view.cut_off)}")
    return tuple(problems)


def run_sweep(network: Network, cases: Sequence[tuple[str, ...]], *,
              goal: Goal | str = Goal.HEADROOM, solver: Solver | str = Solver.AUTO,
              executor: Executor | None = None, chunk_size: int = 0,
              progress: Callable[[int, int], None] | None = None,
              exact: bool = False, share: bool = True) -> SweepReport:
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
    share
        Let the single outages of one fixed-gain chain share one solve where
        an exact check allows it (:mod:`beamplan.analyses.chains`); ``False``
        solves every case.

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
    if goal == Goal.HEADROOM and not exact:
        goal = Goal.SCREEN
    size = chunk_size or max(8, min(200, len(cases) // 16 or 1))
    chunks: list[list[tuple[str, ...]]] = [[]]
    for group in group_cases(network, cases):  # a chain's outages stay in one chunk
        if len(chunks[-1]) >= size:
            chunks.append([])
        chunks[-1].extend(group)
    chunks = [chunk for chunk in chunks if chunk]
    results: list[OutageResult] = []
    interrupted = False
    try:
        if executor is None:
            for chunk in chunks:
                results.extend(run_chunk(network, goal, solver, chunk, share))
                if progress:
                    progress(len(results), len(cases))
        else:
            # Pickled once here; a worker unpickles it only the first time it sees it.
            packed, key = pickle.dumps(network, pickle.HIGHEST_PROTOCOL), model_key(network, solver)
            futures: list[Future[list[OutageResult]]] = [
                executor.submit(run_packed, packed, key, goal, solver, chunk, share)
                for chunk in chunks]
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
    at_failure = single_points_of_failure(network)
    switches = LiveModel.switches_of(network)
    spof = single_points_of_failure(network, any_position=True) if switches else at_failure
    ranked = tuple(sorted(results, key=_rank))
    return SweepReport(network.name, base.goal, base, ranked, len(cases), spof,
                       _cross_check(ranked, spof, at_failure if switches else None),
                       interrupted, at_failure,
                       search_kind(switches), switches)
