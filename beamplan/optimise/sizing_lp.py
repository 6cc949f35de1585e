"""The sizing LP: the allocation constraints with every limit relaxable at a cost.

Built from the Network alone (one small function per family, explicit maps)
and solved in process with HiGHS. Every constant right-hand side b is written
as b × z with a scale column z, fixed at 1 for plain solves and freed for the
Charnes–Cooper form of a linear-fractional objective (A. Charnes, W. W.
Cooper, *Naval Res. Logist. Q.* 9 (1962) 181), which gives the least share or
transmission bound exactly. Each limit row carries its own relaxation column
r (W), fixed at 0 unless a question frees it. The formulation is written out
in docs/lp-formulation.md, section "Sizing".
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from beamplan.network.behaviour import Behaviour, Node
from beamplan.network.graph import Link, Network
from beamplan.vocabulary import FAMILIES, Family

__all__ = ["Limit", "SizingLp", "build_sizing_lp", "reachable_scanners"]

INF = float("inf")


@dataclass(frozen=True)
class Limit:
    """A relaxable limit: its row, relaxation column and what it bounds.

    ``family`` is ``source``, ``heat``, ``max-power`` (W limits, relaxed
    upwards), ``share-high``, ``range-high`` (fractions, relaxed upwards),
    ``share-low`` or ``range-low`` (fractions, relaxed downwards). For a
    fraction, ``numerator`` / ``denominator`` are the columns whose ratio the
    bound limits (a share or an output over the element's input).
    """

    family: Family
    element: str
    port: str | None
    value: float  # the limit as the layout gives it (W or a fraction)
    row: int
    relax_col: int
    used: dict[int, float]  # the row's left side without z and r (W limits)
    numerator: int = -1
    denominator: dict[int, float] = field(default_factory=dict)

    @property
    def is_fraction(self) -> bool:
        """Whether the limit is a fraction (share or transmission) rather than watts."""
        return FAMILIES[self.family].per_element

    @property
    def key(self) -> str:
        """A stable name, e.g. ``heat:cs-fold`` or ``share-high:c-split.north``."""
        where = f"{self.element}.{self.port}" if self.port else self.element
        return f"{self.family}:{where}"


@dataclass
class SizingLp:
    """Columns, rows and the maps from network objects to them."""

    network: Network
    col_low: list[float] = field(default_factory=list)
    col_high: list[float] = field(default_factory=list)
    rows: list[tuple[dict[int, float], float, float]] = field(default_factory=list)
    link_col: dict[int, int] = field(default_factory=dict)
    share_col: dict[tuple[str, str | None], int] = field(default_factory=dict)
    demand_row: dict[str, int] = field(default_factory=dict)
    limits: list[Limit] = field(default_factory=list)
    z: int = -1
    served: tuple[str, ...] = ()  # scanners whose need is enforced
    _csc: tuple[np.ndarray, ...] | None = field(default=None, repr=False)
    _live: Any = field(default=None, repr=False)

    def add_column(self, low: float = 0.0, high: float = INF) -> int:
        """Add a column; return its number."""
        self.col_low.append(low)
        self.col_high.append(high)
        return len(self.col_low) - 1

    def add_row(self, coefs: dict[int, float], low: float, high: float) -> int:
        """Add ``low ≤ Σ coef × column ≤ high``; return its number."""
        self.rows.append((coefs, low, high))
        return len(self.rows) - 1

    def inflow(self, node_id: str, scale: float = 1.0) -> dict[int, float]:
        """The power entering a node, as column coefficients."""
        return {self.link_col[lk.index]: scale for lk in self.network.in_links[node_id]}

    def out(self, node_id: str, port: str | None = None) -> int:
        """The column of the link leaving a node's output."""
        return self.link_col[self.network.out_link[(node_id, port)].index]

    def _matrix(self) -> tuple[np.ndarray, ...]:
        """Row bounds and the column-wise matrix, built once per model."""
        if self._csc is None or self._csc[0].size != len(self.rows):
            columns: list[list[tuple[int, float]]] = [[] for _ in self.col_low]
            for i, (coefs, _, _) in enumerate(self.rows):
                for col, value in coefs.items():
                    if value != 0.0:
                        columns[col].append((i, value))
            starts, index, values = [0], [], []
            for entries in columns:
                for i, value in entries:
                    index.append(i)
                    values.append(value)
                starts.append(len(index))
            self._csc = (np.array([r[1] for r in self.rows], dtype=float),
                         np.array([r[2] for r in self.rows], dtype=float),
                         np.array(starts, dtype=np.int32), np.array(index, dtype=np.int32),
                         np.array(values, dtype=float))
        return self._csc

    def solve(self, cost: Mapping[int, float], bounds: Mapping[int, tuple[float, float]],
              extra_rows: tuple[tuple[dict[int, float], float, float], ...] = ()
              ) -> tuple[str, float, np.ndarray]:
        """Minimise Σ cost × column with some column bounds changed.

        Returns the status (``optimal`` or ``infeasible``), the objective and
        the column values (empty unless optimal).
        """
        import highspy

        highs = self._highs()
        inf = highspy.kHighsInf
        low = np.array(self.col_low)
        high = np.array(self.col_high)
        for col, (lo, hi) in bounds.items():
            low[col], high[col] = lo, hi
        costs = np.zeros(len(low))
        for col, value in cost.items():
            costs[col] += value
        every = np.arange(len(low), dtype=np.int32)
        highs.changeColsCost(len(low), every, costs)
        highs.changeColsBounds(len(low), every, np.maximum(low, -inf), np.minimum(high, inf))
        for coefs, lo, hi in extra_rows:
            cols = np.array(list(coefs), dtype=np.int32)
            highs.addRow(max(lo, -inf), min(hi, inf), len(cols), cols,
                         np.array(list(coefs.values()), dtype=float))
        try:
            highs.run()
            status = highs.getModelStatus()
            if status != highspy.HighsModelStatus.kOptimal:
                highs.clearSolver()  # a warm start from a stale basis may misjudge: afresh
                highs.run()
                status = highs.getModelStatus()
            if status != highspy.HighsModelStatus.kOptimal:
                return "infeasible", float("nan"), np.empty(0)
            values = np.asarray(highs.getSolution().col_value)
            return "optimal", float(highs.getInfo().objective_function_value), values
        finally:
            if extra_rows:
                first = len(self.rows)
                extra = np.arange(first, first + len(extra_rows), dtype=np.int32)
                highs.deleteRows(len(extra), extra)

    def _highs(self) -> Any:
        """The live HiGHS model of the base rows, built on first use, re-solved warm."""
        if self._live is not None:
            return self._live
        import highspy

        from beamplan.optimise.backend import quiet_stdout

        inf = highspy.kHighsInf
        lp = highspy.HighsLp()
        lp.num_col_ = len(self.col_low)
        lp.num_row_ = len(self.rows)
        lp.col_cost_ = np.zeros(len(self.col_low))
        lp.col_lower_ = np.maximum(np.array(self.col_low), -inf)
        lp.col_upper_ = np.minimum(np.array(self.col_high), inf)
        row_low, row_high, starts, index, values = self._matrix()
        lp.row_lower_ = np.maximum(row_low, -inf)
        lp.row_upper_ = np.minimum(row_high, inf)
        lp.a_matrix_.format_ = highspy.MatrixFormat.kColwise
        lp.a_matrix_.start_ = starts
        lp.a_matrix_.index_ = index
        lp.a_matrix_.value_ = values
        with quiet_stdout():
            highs = highspy.Highs()  # type: ignore[no-untyped-call]
        for option, value in (("output_flag", False), ("primal_feasibility_tolerance", 1e-10),
                              ("dual_feasibility_tolerance", 1e-10)):
            highs.setOptionValue(option, value)
        highs.passModel(lp)
        self._live = highs
        return highs


def _may_pass(network: Network, link: Link) -> bool:
    """Whether some change of the relaxable limits lets power pass ``link``.

    Share and transmission bounds are relaxable, so a splitter output passes
    when its efficiency is positive and an adjustable attenuator in service
    passes; an outage passes nothing.
    """
    tail = network.node[link.tail]
    if not tail.in_use:
        return False
    if tail.behaviour is Behaviour.SPLIT:
        return any(p.efficiency > 0.0 for p in tail.ports if p.name == link.port)
    if tail.behaviour is Behaviour.RANGE:
        return True
    return network.port_gain_max(link) > 0.0


def reachable_scanners(network: Network) -> frozenset[str]:
    """Scanners in service that some in-service source can send power to.

    A link carries nothing when its tail passes nothing whatever its bounds
    (gain or efficiency 0, an outage) or when a switch selects another input.
    No change of a limit serves the other scanners.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> sorted(reachable_scanners(build_network(load_layout("layouts/pilot-line.yaml"))))
    ['litho-p1', 'litho-p2', 'litho-p3']
    """
    carry: dict[str, list[str]] = {}
    for link in network.links:
        head = network.node[link.head]
        blocked = head.behaviour is Behaviour.COMBINE and head.select not in (None, link.tail)
        if not blocked and _may_pass(network, link):
            carry.setdefault(link.tail, []).append(link.head)
    stack = [s.id for s in network.sources if s.in_use and s.available_w > 0.0]
    seen = set(stack)
    while stack:
        for nxt in carry.get(stack.pop(), ()):
            if nxt not in seen:
                seen.add(nxt)
                stack.append(nxt)
    return frozenset(n.id for n in network.scanners if n.id in seen and n.in_use)


def _limit(m: SizingLp, family: Family, node: Node, port: str | None, value: float,
           used: dict[int, float], sense: int, numerator: int = -1,
           denominator: dict[int, float] | None = None) -> None:
    """A limit row: used − value × z − r ≤ 0 (sense +1) or used + r ≥ 0 (sense −1).

    For fraction bounds ``used`` already holds the share minus the bound times
    the input, so the limit value enters only through it.
    """
    r = m.add_column(0.0, 0.0)
    coefs = dict(used)
    if not FAMILIES[family].per_element:
        coefs[m.z] = coefs.get(m.z, 0.0) - value
    coefs[r] = -1.0 if sense > 0 else 1.0
    row = m.add_row(coefs, -INF, 0.0) if sense > 0 else m.add_row(coefs, 0.0, INF)
    m.limits.append(Limit(family, node.id, port, value, row, r, used, numerator,
                          denominator or {}))


def _plus(*terms: dict[int, float]) -> dict[int, float]:
    out: dict[int, float] = {}
    for term in terms:
        for col, value in term.items():
            out[col] = out.get(col, 0.0) + value
    return out


def _sources(m: SizingLp) -> None:
    for node in m.network.sources:
        link = m.network.out_link.get((node.id, None))
        if link is None:
            continue
        col = m.link_col[link.index]
        if node.in_use:
            _limit(m, Family.SOURCE, node, None, node.available_w, {col: 1.0}, +1)
        else:
            m.col_high[col] = 0.0


def _element(m: SizingLp, node: Node) -> dict[int, float]:
    """Balance rows and bound limits of one element; return its absorbed power."""
    inflow = m.inflow(node.id)
    b = node.behaviour
    if b in (Behaviour.GAIN, Behaviour.COMBINE):
        # A switch passes its selected input only; the others end on its beam stop
        # (dumped, neither passed nor absorbed), without binding the flows upstream.
        live = [m.link_col[lk.index] for lk in m.network.in_links[node.id]
                if b is Behaviour.GAIN or node.select in (None, lk.tail)]
        m.add_row(_plus({m.out(node.id): 1.0}, {c: -node.gain_max for c in live}), 0.0, 0.0)
        return {c: 1.0 - node.gain_max for c in live}
    if b is Behaviour.RANGE:
        out = m.out(node.id)
        m.add_row(_plus({out: 1.0}, m.inflow(node.id, -1.0)), -INF, 0.0)  # T ≤ 1 always
        if node.gain_min > 0.0:
            _limit(m, Family.RANGE_LOW, node, None, node.gain_min,
                   _plus({out: 1.0}, m.inflow(node.id, -node.gain_min)), -1, out, inflow)
        if node.gain_max < 1.0:
            _limit(m, Family.RANGE_HIGH, node, None, node.gain_max,
                   _plus({out: 1.0}, m.inflow(node.id, -node.gain_max)), +1, out, inflow)
        return _plus(inflow, {out: -1.0})
    if b is Behaviour.SPLIT:
        absorbed: dict[int, float] = {}
        for port in node.ports:
            s = m.add_column()
            m.share_col[(node.id, port.name)] = s
            absorbed[s] = 1.0 - port.efficiency
            m.add_row({m.out(node.id, port.name): 1.0, s: -port.efficiency}, 0.0, 0.0)
            if port.fraction_min > 0.0:
                _limit(m, Family.SHARE_LOW, node, port.name, port.fraction_min,
                       _plus({s: 1.0}, m.inflow(node.id, -port.fraction_min)), -1, s, inflow)
            if port.fraction_max < 1.0:
                _limit(m, Family.SHARE_HIGH, node, port.name, port.fraction_max,
                       _plus({s: 1.0}, m.inflow(node.id, -port.fraction_max)), +1, s, inflow)
        shares = {m.share_col[(node.id, p.name)]: 1.0 for p in node.ports}
        m.add_row(_plus(shares, m.inflow(node.id, -1.0)), 0.0, 0.0)
        return absorbed
    return inflow  # ABSORB


def _elements(m: SizingLp) -> None:
    for node in m.network.elements:
        absorbed = _element(m, node)
        if node.heat_limit_w is not None:
            _limit(m, Family.HEAT, node, None, node.heat_limit_w, absorbed, +1)


def _scanners(m: SizingLp) -> None:
    served = reachable_scanners(m.network)
    for node in m.network.scanners:
        if not node.in_use:
            continue
        inflow = m.inflow(node.id)
        if node.id in served and node.need_w > 0.0:
            m.demand_row[node.id] = m.add_row(_plus(inflow, {m.z: -node.need_w}), 0.0, INF)
        if node.max_w is not None:
            _limit(m, Family.MAX_POWER, node, None, node.max_w, inflow, +1)
    m.served = tuple(sid for sid in m.demand_row)


def build_sizing_lp(network: Network) -> SizingLp:
    """Build the sizing LP of a network: every need enforced, every limit relaxable.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> lp = build_sizing_lp(build_network(load_layout("layouts/overbooked.yaml")))
    >>> sorted({limit.family for limit in lp.limits})
    ['heat', 'max-power', 'range-low', 'share-high', 'share-low', 'source']
    """
    m = SizingLp(network)
    for link in network.links:
        m.link_col[link.index] = m.add_column()
    m.z = m.add_column(1.0, 1.0)
    _sources(m)
    _elements(m)
    _scanners(m)
    return m
