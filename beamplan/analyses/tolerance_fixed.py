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
from typing import Any

import numpy as np

from beamplan.analyses.tolerance_model import Knob, ToleranceModel
from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import Network
from beamplan.optimise.result import Plan

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
    heat: tuple[tuple[str, float, int, float, np.ndarray, np.ndarray], ...] = ()
    # per heat-limited plain optic: id, nominal gain, gain column, limit W, its incident
    # paths' planned powers and their (columns × paths) counts

    def overheated(self, columns: np.ndarray) -> np.ndarray:
        """Whether any heat-limited plain optic absorbs more than its limit, per sample."""
        out = np.zeros(columns.shape[0], dtype=bool)
        with np.errstate(divide="ignore"):
            logs = np.log(columns)
        for _, gain, col, limit, p0, count in self.heat:
            incident = (np.exp(logs @ count) * p0).sum(axis=1) if p0.size else 0.0
            g = gain * (columns[:, col] if col >= 0 else 1.0)
            out |= incident * (1.0 - g) > limit * (1.0 + 1e-6)
        return out

    def factors(self, columns: np.ndarray) -> np.ndarray:
        """Delivered ÷ need per sample and scanner (n × scanners) from factor columns.

        Examples
        --------
        >>> paths = FixedPaths(("a",), np.array([100.0]), np.array([120.0]),
        ...                    np.array([[1.0]]), np.array([0]), np.array([-1]))
        >>> paths.factors(np.array([[0.5], [1.0]])).ravel().tolist()
        [0.6, 1.2]
        """
        n = columns.shape[0]
        with np.errstate(divide="ignore"):
            logs = np.log(columns)
        exponent = logs @ self.count if self.count.size else np.zeros((n, len(self.p0_w)))
        per_path = np.exp(exponent) * self.p0_w
        if len(self.to_scanner) == len(self.scanners) and \
                np.array_equal(self.to_scanner, np.arange(len(self.scanners))):
            delivered = per_path
        else:
            delivered = np.zeros((n, len(self.scanners)))
            np.add.at(delivered.T, self.to_scanner, per_path.T)
        need = np.broadcast_to(self.need_w, delivered.shape).copy()
        has = self.need_column >= 0
        if has.any():
            need[:, has] *= columns[:, self.need_column[has]]
        with np.errstate(divide="ignore", invalid="ignore"):
            out: np.ndarray = np.where(need > 0, delivered / np.where(need > 0, need, 1.0),
                                       np.inf)
        return out


def _link_knobs(network: Network, plan: Plan, tail: str, port: str | None
                ) -> tuple[float, list[Knob]]:
    node = network.node[tail]
    settings = {e.id: e.setting for e in plan.elements}
    if node.behaviour in (Behaviour.GAIN, Behaviour.COMBINE):
        return node.gain_max, [Knob(tail, "gain")]
    if node.behaviour is Behaviour.RANGE:
        setting = settings.get(tail)
        return (float(setting) if isinstance(setting, float) else node.gain_max,
                [Knob(tail, "setting")])
    if node.behaviour is Behaviour.SPLIT:
        shares: dict[Any, float] = dict(settings.get(tail) or ())  # type: ignore
        eff = next(p.efficiency for p in node.ports if p.name == port)
        return float(shares.get(port, 0.0)) * eff, [Knob(tail, "efficiency", port),
                                                    Knob(tail, "fraction", port)]
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
            gain, knobs = _link_knobs(network, plan, link.tail, link.port)
            out.extend((power * gain, [*path_knobs, *knobs])
                       for power, path_knobs in into(link.tail) if power * gain > 0.0)
        memo[node_id] = out
        return out

    column = {k: model.knob_column[i] for i, k in enumerate(model.knobs)}
    ncols = len(model.columns)
    scanners = [s for s in plan.scanners if s.status != "out of service"]
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
    heat = []
    for node in network.elements:
        if node.heat_limit_w is None or node.behaviour not in (Behaviour.GAIN,
                                                                Behaviour.COMBINE):
            continue
        paths = into(node.id)
        hcount = np.zeros((ncols, len(paths)))
        for i, (_, knobs) in enumerate(paths):
            for k in knobs:
                if k in column:
                    hcount[column[k], i] += 1.0
        heat.append((node.id, node.gain_max, column.get(Knob(node.id, "gain"), -1),
                     node.heat_limit_w, np.array([p for p, _ in paths]), hcount))
    need_column = np.array([column.get(Knob(s.id, "need"), -1) for s in scanners], dtype=int)
    return FixedPaths(tuple(s.id for s in scanners), np.array([s.need_w for s in scanners]),
                      np.array(p0), count.reshape(ncols, len(p0)), np.array(owners, dtype=int),
                      need_column, tuple(heat))

