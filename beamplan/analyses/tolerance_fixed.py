"""Fixed settings: each scanner's delivered power per sample as products of gains.

With the plan's splitter shares and attenuator settings held, the power a
scanner receives is a sum over its source-to-scanner paths of the planned
power along the path times the factors of every knob on it (a product of
gains). The path structure is found once from the plan; per sample,

    delivered = Σ_paths p0_path · exp(Σ_knobs on path log f_knob)

which is one matrix product of the log-factors with a (knob × path) count
matrix, an exponential, and a sum over each scanner's paths. Zero tolerance
gives factors of exactly 1, so the plan's delivered powers come back exactly.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from typing import Any

import numpy as np

from beamplan.analyses.tolerance_model import Knob, ToleranceModel
from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import Network
from beamplan.optimise.result import Plan
from beamplan.vocabulary import ScannerStatus

__all__ = ["FixedPaths", "fixed_paths"]


@dataclass(frozen=True)
class FixedPaths:
    """The path structure of a plan, ready to evaluate over samples.

    ``count`` is (factor columns × paths): how often each column's factor
    multiplies each path; ``to_scanner`` maps paths to scanners.
    """

    scanners: tuple[str, ...]
    need_w: np.ndarray
    p0_w: np.ndarray
    count: np.ndarray
    to_scanner: np.ndarray
    need_column: np.ndarray  # per scanner: its need's factor column, or -1
    complements: tuple[tuple[int, float], ...] = ()  # derived columns: (fraction column, share)
    heat_count: np.ndarray | None = None  # (columns × incident paths of heat-limited optics)
    heat_p0_w: np.ndarray | None = None  # planned power of each of those paths
    heat_owner: np.ndarray | None = None  # which optic each path feeds
    heat_gain: np.ndarray | None = None  # per heat-limited plain optic: nominal gain
    heat_column: np.ndarray | None = None  # its gain's factor column, or -1
    heat_limit_w: np.ndarray | None = None

    @cached_property
    def _prepared(self) -> _Prepared:
        return _prepare(self)

    def extended(self, columns: np.ndarray, logs: np.ndarray) -> np.ndarray:
        """The log-factors with the derived complement columns appended."""
        if not self.complements or logs.shape[1] > columns.shape[1]:
            return logs
        return np.column_stack([logs, *self._complement_logs(columns)])

    def _complement_logs(self, columns: np.ndarray) -> list[np.ndarray]:
        return [np.log(np.maximum(1.0 - s * columns[:, c], 1e-300) / (1.0 - s))
                for c, s in self.complements]

    def _logs(self, columns: np.ndarray, wanted: np.ndarray) -> np.ndarray:
        """Log-factors of the (extended) columns ``wanted`` only, in that order."""
        width = columns.shape[1]
        base = wanted[wanted < width]
        out = np.empty((columns.shape[0], len(wanted)))
        out[:, wanted < width] = log_factors(columns[:, base])
        if len(base) < len(wanted):
            extra = self._complement_logs(columns)
            for k in np.nonzero(wanted >= width)[0]:
                out[:, k] = extra[wanted[k] - width]
        return out

    def evaluate(self, columns: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Factors (n × scanners), the lowest factor and overheated, per sample.

        The same numbers as :meth:`factors` and :meth:`overheated`, with the
        logarithms taken once, of the columns some path or heat check uses.

        Examples
        --------
        >>> paths = FixedPaths(("a",), np.array([100.0]), np.array([120.0]),
        ...                    np.array([[1.0]]), np.array([0]), np.array([-1]))
        >>> f, low, hot = paths.evaluate(np.array([[0.5], [1.0]]))
        >>> low.tolist(), hot.tolist()
        ([0.6, 1.2], [False, False])
        """
        pre = self._prepared
        logs = self._logs(columns, pre.wanted)
        factors = self._factors(columns, logs[:, pre.path_logs])
        low = factors.min(axis=1) if factors.shape[1] else np.ones(len(columns))
        return factors, low, self._overheated(columns, logs[:, pre.heat_logs],
                                              logs[:, pre.gain_logs])

    def overheated(self, columns: np.ndarray, logs: np.ndarray | None = None) -> np.ndarray:
        """Whether any heat-limited plain optic absorbs more than its limit, per sample."""
        pre = self._prepared
        if logs is None:
            return self._overheated(columns, self._logs(columns, pre.heat_used),
                                    self._logs(columns, pre.gain_used))
        logs = self.extended(columns, logs)
        return self._overheated(columns, logs[:, pre.heat_used], logs[:, pre.gain_used])

    def _overheated(self, columns: np.ndarray, logs: np.ndarray, gain_logs: np.ndarray
                    ) -> np.ndarray:
        n = columns.shape[0]
        pre = self._prepared
        if self.heat_limit_w is None or not len(self.heat_limit_w) or not n:
            return np.zeros(n, dtype=bool)
        assert self.heat_p0_w is not None and self.heat_owner is not None
        assert self.heat_gain is not None and self.heat_column is not None
        # A bound first, from each column's largest and smallest factor in this chunk:
        # only optics that might exceed their limit are evaluated sample by sample.
        high = np.exp(logs.max(axis=0) @ pre.heat_count) * self.heat_p0_w
        incident_ub = np.bincount(self.heat_owner, high, minlength=len(self.heat_limit_w))
        low_gain = self.heat_gain.copy()
        if len(pre.gain_used):
            low_gain[pre.gain_has] *= np.exp(gain_logs.min(axis=0))[pre.gain_index]
        maybe = np.nonzero(incident_ub * (1.0 - low_gain) > self.heat_limit_w)[0]
        if not len(maybe):
            return np.zeros(n, dtype=bool)
        keep = np.nonzero(np.isin(self.heat_owner, maybe))[0]
        keep = keep[np.argsort(self.heat_owner[keep], kind="stable")]  # by optic
        per_path = np.exp(_product(logs, pre.heat_count[:, keep])) * self.heat_p0_w[keep]
        starts = np.searchsorted(self.heat_owner[keep], maybe)
        incident = per_path if len(keep) == len(maybe) else \
            np.add.reduceat(per_path, starts, axis=1)
        gain = np.broadcast_to(self.heat_gain[maybe], incident.shape).copy()
        cols = self.heat_column[maybe]
        has = cols >= 0
        gain[:, has] *= columns[:, cols[has]]
        hot = incident * (1.0 - gain) > self.heat_limit_w[maybe] * (1.0 + 1e-6)
        return np.asarray(hot.any(axis=1))

    def factors(self, columns: np.ndarray, logs: np.ndarray | None = None) -> np.ndarray:
        """Delivered ÷ need per sample and scanner (n × scanners) from factor columns.

        Examples
        --------
        >>> paths = FixedPaths(("a",), np.array([100.0]), np.array([120.0]),
        ...                    np.array([[1.0]]), np.array([0]), np.array([-1]))
        >>> paths.factors(np.array([[0.5], [1.0]])).ravel().tolist()
        [0.6, 1.2]
        """
        pre = self._prepared
        if logs is None:
            return self._factors(columns, self._logs(columns, pre.used))
        return self._factors(columns, self.extended(columns, logs)[:, pre.used])

    def _factors(self, columns: np.ndarray, logs: np.ndarray) -> np.ndarray:
        n = columns.shape[0]
        pre = self._prepared
        if len(pre.used):
            per_path = _product(logs, pre.count)
            np.exp(per_path, out=per_path)
        else:
            per_path = np.ones((n, len(self.p0_w)))
        per_path *= self.p0_w
        if pre.identity:
            delivered = per_path
        else:
            delivered = np.zeros((n, len(self.scanners)))
            np.add.at(delivered.T, self.to_scanner, per_path.T)
        with np.errstate(divide="ignore", invalid="ignore"):
            delivered /= self.need_w  # a need of 0 gives inf (always met)
            if pre.need_all:
                delivered /= columns[:, self.need_column]
            elif pre.need_has.any():
                delivered[:, pre.need_has] /= columns[:, self.need_column[pre.need_has]]
        return delivered


@dataclass(frozen=True)
class _Prepared:
    """Index arrays of a :class:`FixedPaths`, derived once."""

    used: np.ndarray  # extended columns on some scanner path
    count: np.ndarray  # their rows of the count matrix
    identity: bool  # one path per scanner, in order
    need_has: np.ndarray
    need_all: bool
    heat_used: np.ndarray  # extended columns on some heat path
    heat_count: np.ndarray
    gain_used: np.ndarray  # the distinct gain columns of heat-limited optics
    gain_has: np.ndarray  # per heat-limited optic: whether it has a gain column
    gain_index: np.ndarray  # for those: which of gain_used
    wanted: np.ndarray  # the union of the three, and where each lies in it
    path_logs: np.ndarray
    heat_logs: np.ndarray
    gain_logs: np.ndarray


def _prepare(paths: FixedPaths) -> _Prepared:
    used = np.nonzero(paths.count.any(axis=1))[0]  # columns on some path (not the needs)
    n = len(paths.scanners)
    identity = len(paths.to_scanner) == n and np.array_equal(paths.to_scanner, np.arange(n))
    has = paths.need_column >= 0
    heat = paths.heat_count if paths.heat_count is not None else \
        np.zeros((paths.count.shape[0], 0))
    heat_used = np.nonzero(heat.any(axis=1))[0]
    column = paths.heat_column if paths.heat_column is not None else np.zeros(0, dtype=int)
    gain_has = column >= 0
    gain_used, gain_index = np.unique(column[gain_has], return_inverse=True)
    wanted = np.unique(np.concatenate([used, heat_used, gain_used])).astype(np.intp)
    return _Prepared(used, np.ascontiguousarray(paths.count[used]), identity, has,
                     bool(has.all()) and n > 0, heat_used,
                     np.ascontiguousarray(heat[heat_used]), gain_used, gain_has,
                     gain_index.reshape(-1), wanted, np.searchsorted(wanted, used),
                     np.searchsorted(wanted, heat_used), np.searchsorted(wanted, gain_used))


def _product(logs: np.ndarray, count: np.ndarray) -> np.ndarray:
    """Path exponents: ``logs @ count`` with numpy's own loop (no BLAS threads).

    A product with a few factor columns is memory-bound; the threaded BLAS
    routine spends more on waking its threads than on the sums, and stalls
    when the machine is busy.
    """
    out: np.ndarray = np.einsum("nk,kp->np", logs, count)
    return out


def log_factors(columns: np.ndarray) -> np.ndarray:
    """Natural logarithms of factor columns; a factor of 0 gives -745 (exp gives 0 back).

    Examples
    --------
    >>> log_factors(np.array([[1.0, 0.0]])).tolist()
    [[0.0, -745.0]]
    """
    with np.errstate(divide="ignore"):
        out: np.ndarray = np.maximum(np.log(columns), -745.0)
    return out


def _link_knobs(network: Network, settings: dict[str, Any], tail: str, port: str | None
                ) -> tuple[float, list[Knob]]:
    node = network.node[tail]
    if node.behaviour in (Behaviour.GAIN, Behaviour.COMBINE):
        return node.gain_max, [Knob(tail, "gain")]
    if node.behaviour is Behaviour.RANGE:
        setting = settings.get(tail)
        return (float(setting) if isinstance(setting, float) else node.gain_max,
                [Knob(tail, "setting")])
    if node.behaviour is Behaviour.SPLIT:
        shares: dict[Any, float] = dict(settings.get(tail) or ())  # type: ignore
        eff = next(p.efficiency for p in node.ports if p.name == port)
        others = [Knob(tail, "complement", p.name) for p in node.ports if p.name != port]
        return float(shares.get(port, 0.0)) * eff, [Knob(tail, "efficiency", port),
                                                    Knob(tail, "fraction", port), *others]
    return 0.0, []


def fixed_paths(network: Network, plan: Plan, model: ToleranceModel) -> FixedPaths:
    """Every source-to-scanner path of a plan with its planned power and knobs.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.layout.tolerances import ToleranceSet
    >>> from beamplan.network.graph import build_network
    >>> from beamplan.optimise.planner import plan_network
    >>> from beamplan.analyses.tolerance_model import build_model
    >>> lay = load_layout("layouts/pilot-line.yaml")
    >>> net = build_network(lay)
    >>> plan = plan_network(net)
    >>> paths = fixed_paths(net, plan, build_model(ToleranceSet(()), lay, net, plan))
    >>> bool(np.allclose(paths.factors(np.ones((1, 0)))[0],
    ...                  [s.delivered_w / s.need_w for s in plan.scanners]))
    True
    """
    outputs = {s.id: s.output_w for s in plan.sources}
    settings: dict[str, Any] = {e.id: e.setting for e in plan.elements}
    memo: dict[str, list[tuple[float, list[Knob]]]] = {}

    def into(node_id: str) -> list[tuple[float, list[Knob]]]:
        if node_id in memo:
            return memo[node_id]
        node = network.node[node_id]
        if node.is_source:
            memo[node_id] = [(outputs.get(node_id, 0.0), [Knob(node_id, "power")])]
            return memo[node_id]
        out: list[tuple[float, list[Knob]]] = []
        for link in network.in_links[node_id]:
            if node.behaviour is Behaviour.COMBINE and node.select not in (None, link.tail):
                continue
            if network.node[link.tail].is_source:
                out.extend(p for p in into(link.tail) if p[0] > 0.0)
                continue
            gain, knobs = _link_knobs(network, settings, link.tail, link.port)
            out.extend((power * gain, [*path_knobs, *knobs])
                       for power, path_knobs in into(link.tail) if power * gain > 0.0)
        memo[node_id] = out
        return out

    column = {k: model.knob_column[i] for i, k in enumerate(model.knobs)}
    # When one output's realised share moves (a fraction tolerance), the other outputs
    # share the rest in proportion: a derived column (1 - s f) / (1 - s) on their paths.
    complements: list[tuple[int, float]] = []
    for i, k in enumerate(model.knobs):
        share = model.variables[i].nominal
        if k.quantity == "fraction" and 0.0 < share < 1.0:
            column[Knob(k.node, "complement", k.port)] = len(model.columns) + len(complements)
            complements.append((model.knob_column[i], share))
    ncols = len(model.columns) + len(complements)
    scanners = [s for s in plan.scanners if s.status != ScannerStatus.OUT_OF_SERVICE]
    p0: list[float] = []
    owners: list[int] = []
    rows: list[np.ndarray] = []
    for j, s in enumerate(scanners):
        paths = into(s.id)
        total = sum(p for p, _ in paths)
        scale = s.delivered_w / total if total > 0 else 0.0
        for power, knobs in paths:
            row = np.zeros(ncols)
            for k in knobs:
                if k in column:
                    row[column[k]] += 1.0
            p0.append(power * scale if len(paths) > 1 else s.delivered_w)
            owners.append(j)
            rows.append(row)
    count = np.array(rows).T if rows else np.zeros((ncols, 0))
    heat_ids = [n for n in network.elements if n.heat_limit_w is not None and
                n.behaviour in (Behaviour.GAIN, Behaviour.COMBINE)]
    heat_rows, heat_p0, heat_owner = [], [], []
    for h, node in enumerate(heat_ids):
        for power, knobs in into(node.id):
            row = np.zeros(ncols)
            for k in knobs:
                if k in column:
                    row[column[k]] += 1.0
            heat_rows.append(row)
            heat_p0.append(power)
            heat_owner.append(h)
    need_column = np.array([column.get(Knob(s.id, "need"), -1) for s in scanners], dtype=int)
    return FixedPaths(tuple(s.id for s in scanners), np.array([s.need_w for s in scanners]),
                      np.array(p0), count.reshape(ncols, len(p0)), np.array(owners, dtype=int),
                      need_column, tuple(complements),
                      np.array(heat_rows).T.reshape(ncols, len(heat_p0)), np.array(heat_p0),
                      np.array(heat_owner, dtype=int),
                      np.array([n.gain_max for n in heat_ids]),
                      np.array([column.get(Knob(n.id, "gain"), -1) for n in heat_ids],
                               dtype=int),
                      np.array([n.heat_limit_w for n in heat_ids], dtype=float))

