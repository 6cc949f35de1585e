"""Retuned settings: re-plan every sample on one live model, editing coefficients only.

The LP of :mod:`beamplan.optimise.lp` is built once (a
:class:`~beamplan.optimise.live.LiveModel`). Every matrix entry that depends
on a toleranced knob is listed once with the knobs it depends on: a link's
coefficient is the product of the gains of the plain optics before it
(contracted chains), so it scales with their factors; a bound row scales with
the setting or share it bounds; a heat row of a plain optic reads
``(1 - g)·coefficient``. Per sample the new values are computed for a whole
chunk with numpy, then written into the live model (warm start) before the
re-plan:

1. the goal's first stage, the largest common factor ``t*`` of delivered ÷ need
   (every scanner can meet its need exactly when ``t* ≥ 1``);
2. only when ``t* < 1``: progressive filling capped at 1 (as the headroom
   goal does), which says which scanners a re-plan still serves.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from beamplan.analyses.tolerance_model import Knob, ToleranceModel
from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import Link, Network
from beamplan.optimise.backend import INF
from beamplan.optimise.goals import DUAL_TOL
from beamplan.optimise.live import LiveModel
from beamplan.optimise.planner import MET_RTOL
from beamplan.vocabulary import Family, Solver

__all__ = ["Entry", "RetuneModel"]


@dataclass(frozen=True)
class Entry:
    """A matrix entry: value = base · Π factor[columns] (heat rows: see the module)."""

    row: int
    col: int
    base: float
    columns: tuple[int, ...]
    heat_column: int = -1
    heat_gain: float = 0.0


class RetuneModel:
    """A live model whose coefficients follow the knob factors of each sample.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.layout.tolerances import ToleranceSet
    >>> from beamplan.network.graph import build_network
    >>> from beamplan.analyses.tolerance_model import build_model
    >>> lay = load_layout("layouts/pilot-line.yaml")
    >>> net = build_network(lay)
    >>> rm = RetuneModel(net, build_model(ToleranceSet(()), lay, net))
    >>> factors, best = rm.evaluate(np.ones((1, 0)))
    >>> round(float(best[0]), 3)
    1.35
    """

    def __init__(self, network: Network, model: ToleranceModel,
                 solver: Solver | str = Solver.AUTO) -> None:
        self.live = LiveModel(network, solver)
        self.network = network
        m = self.live.model
        self.column = {k: model.knob_column[i] for i, k in enumerate(model.knobs)}
        self.ncols = len(model.columns)
        self.entries = self._entries()
        self.scanners = [s for s in network.scanners if s.in_use]
        self.need_w = np.array([s.need_w for s in self.scanners])
        self.need_col = np.array([self.column.get(Knob(s.id, "need"), -1)
                                  for s in self.scanners], dtype=int)
        self.sources = [(m.available_row[s.id], s.available_w,
                         self.column.get(Knob(s.id, "power"), -1)) for s in network.sources]
        self.stages = 0

    def _chain(self, link: Link) -> list[int]:
        """Factor columns of the plain optics whose gain sits in a link's coefficient."""
        out = []
        net = self.network
        while net.node[link.tail].behaviour is Behaviour.GAIN:
            col = self.column.get(Knob(link.tail, "gain"))
            if col is not None:
                out.append(col)
            [link] = net.in_links[link.tail]
        return out

    def _entries(self) -> list[Entry]:
        m, net = self.live.model, self.network
        out: list[Entry] = []
        col_index = {id(v): i for i, v in enumerate(m.columns)}
        for r, info in enumerate(m.row_info):
            if info.family in (Family.SOURCE, Family.AVAILABLE):
                continue
            node = net.node[info.node]
            by_col = {m.link_col[link.index]: link for link in net.in_links[info.node]}
            for var, coef in m.rows[r].expr.items():
                c = col_index[id(var)]
                if c == m.factor_col:
                    continue
                link = by_col.get(c)
                cols: list[int] = [] if link is None else self._chain(link)
                heat_col, heat_gain, base = -1, 0.0, float(coef)
                k = None
                if link is not None and info.family in (Family.RANGE_LOW, Family.RANGE_HIGH):
                    k = Knob(node.id, "setting")
                elif link is not None and info.family in (Family.SHARE_LOW, Family.SHARE_HIGH):
                    k = Knob(node.id, "fraction", info.port)
                elif link is not None and info.family == Family.BALANCE:
                    k = Knob(node.id, "gain")
                elif info.family == Family.SHARE_OUT and link is None and \
                        c == m.share_col.get((node.id, info.port)):
                    k = Knob(node.id, "efficiency", info.port)
                elif info.family == Family.HEAT and node.behaviour in (Behaviour.GAIN,
                                                                   Behaviour.COMBINE) and link:
                    heat_col = self.column.get(Knob(node.id, "gain"), -1)
                    heat_gain, base = node.gain_max, m.link_coef[link.index]
                elif info.family == Family.HEAT and node.behaviour is Behaviour.SPLIT:
                    port = next((p for (n, p), sc in m.share_col.items()
                                 if n == node.id and sc == c), None)
                    eff = next(p.efficiency for p in node.ports if p.name == port)
                    heat_col = self.column.get(Knob(node.id, "efficiency", port), -1)
                    heat_gain, base = eff, 1.0
                if k is not None and k in self.column:
                    cols.append(self.column[k])
                if cols or heat_col >= 0:
                    out.append(Entry(r, c, base, tuple(cols), heat_col, heat_gain))
        return out

    def values(self, columns: np.ndarray) -> np.ndarray:
        """Entry values per sample (n × entries) from factor columns (n × columns)."""
        n = columns.shape[0]
        out = np.empty((n, len(self.entries)))
        for e, entry in enumerate(self.entries):
            v = np.full(n, entry.base)
            for c in entry.columns:
                v = v * columns[:, c]
            if entry.heat_column >= 0:
                v = v * (1.0 - entry.heat_gain * columns[:, entry.heat_column])
            elif entry.heat_gain:
                v = v * (1.0 - entry.heat_gain)
            out[:, e] = v
        return out

    def evaluate(self, columns: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Re-plan every sample; return (factor per scanner (n × scanners), t* per sample).

        A scanner's factor is ``t*`` when every need can be met, else its level
        from progressive filling capped at 1.
        """
        n = columns.shape[0]
        values = self.values(columns)
        live, b = self.live, self.live.backend
        m = live.model
        factors = np.empty((n, len(self.scanners)))
        best = np.empty(n)
        b.set_objective({m.factor_col: -1.0})
        for col in m.shortfall_col.values():
            b.set_bounds(col, 0.0, 0.0)
        # One list of edits per sample: the entries, then each demand row's factor column.
        rows = [e.row for e in self.entries] + [m.demand_row[s.id] for s in self.scanners]
        cols = [e.col for e in self.entries] + [m.factor_col] * len(self.scanners)
        demand = [m.demand_row[s.id] for s in self.scanners]
        batch = getattr(b, "set_coefficients", None)
        has = self.need_col >= 0
        for i in range(n):
            needs = self.need_w.copy()
            needs[has] *= columns[i, self.need_col[has]]
            edits = values[i].tolist() + (-needs).tolist()
            if batch is not None:
                batch(rows, cols, edits)
            else:
                for row, col, value in zip(rows, cols, edits, strict=True):
                    b.set_coefficient(row, col, value)
            for row, avail, col in self.sources:
                b.set_rhs(row, avail * (float(columns[i, col]) if col >= 0 else 1.0))
            for row in demand:
                b.set_rhs(row, 0.0)
            b.set_bounds(m.factor_col, 0.0, INF)
            sol = b.solve()
            self.stages += 1
            t = float(sol.columns[m.factor_col]) if sol.status == "optimal" else 0.0
            best[i] = t
            if t >= 1.0 - MET_RTOL or sol.status != "optimal":
                factors[i] = t
                continue
            factors[i] = self._fill(t, sol.row_duals, needs)
        return factors, best

    def _fill(self, level: float, duals: np.ndarray, needs: np.ndarray) -> np.ndarray:
        """Progressive filling capped at 1 from the first stage's level (as the goals do)."""
        b, m = self.live.backend, self.live.model
        out = np.full(len(self.scanners), np.nan)
        todo = list(range(len(self.scanners)))
        while todo:
            blocked = [j for j in todo if duals[m.demand_row[self.scanners[j].id]] > DUAL_TOL]
            if level >= 1.0 - MET_RTOL or not blocked:
                blocked = list(todo)
            for j in blocked:
                out[j] = min(level, 1.0)
                row = m.demand_row[self.scanners[j].id]
                b.set_coefficient(row, m.factor_col, 0.0)
                held = max(level, 0.0) * needs[j]
                b.set_rhs(row, max(held * (1.0 - b.freeze_slack) -
                                   min(b.freeze_abs_w, 1e-4 * needs[j]), 0.0))
            todo = [j for j in todo if j not in blocked]
            if not todo:
                break
            b.set_bounds(m.factor_col, level, 1.0)
            sol = b.solve()
            self.stages += 1
            if sol.status != "optimal":
                out[todo] = level
                break
            level, duals = float(sol.columns[m.factor_col]), sol.row_duals
        return out
