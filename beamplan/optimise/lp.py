"""Build the allocation LP once from a network, as sparse arrays with explicit maps.

The LP is a generalized network flow with gains. Each family of variables or
constraints has its own small function; :class:`LpModel` keeps the maps from
elements to columns and rows, so that goals and later sweeps can change
bounds and coefficients and re-solve without rebuilding. The formulation is
written out in docs/lp-formulation.md.

Columns: ``x`` power on every link (W); ``p`` source outputs (W); ``s``
splitter shares (W); ``u`` scanner shortfalls (W, enabled only by the elastic
goal); ``t`` the common headroom factor.

Rows are kept as plain ``{column: coefficient}`` maps with bounds and handed
to HiGHS as one column-wise sparse matrix; the pulp problem (for the CBC
fallback) is built from the same rows only when asked for.
"""

from __future__ import annotations

import contextlib
import gc
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from beamplan.network.behaviour import Behaviour, Node
from beamplan.network.graph import Network
from beamplan.vocabulary import Family

__all__ = ["Coefs", "LpModel", "Row", "build_lp", "gc_paused", "switch_terms"]

INF = float("inf")
Coefs = dict[int, float]  # a linear expression: column -> coefficient


@dataclass(frozen=True)
class Row:
    """What one constraint means, for reports and explanations.

    ``family`` is one of ``balance``, ``range-low``, ``range-high``,
    ``share-sum``, ``share-low``, ``share-high``, ``share-out``, ``heat``,
    ``source``, ``available``, ``demand``, ``max-power`` (max_power or the
    useful ceiling, whichever is lower).
    """

    name: str
    family: Family
    node: str
    port: str | None = None


def _plus(*terms: tuple[float, Coefs]) -> Coefs:
    """Σ scale × expression, as one coefficient map."""
    out: Coefs = {}
    for scale, coefs in terms:
        for col, value in coefs.items():
            out[col] = out.get(col, 0.0) + scale * value
    return out


@dataclass
class LpModel:
    """The LP's columns and rows, and the maps from network objects to them.

    Each row reads ``low ≤ Σ coef × column ≤ high`` with one side infinite,
    or ``low == high`` for an equality; its ``sense`` is +1 (≥), −1 (≤) or 0
    (=), as pulp numbers them.
    """

    network: Network
    col_name: list[str] = field(default_factory=list)
    col_low: list[float] = field(default_factory=list)
    col_high: list[float] = field(default_factory=list)
    row_coefs: list[Coefs] = field(default_factory=list)
    row_low: list[float] = field(default_factory=list)
    row_high: list[float] = field(default_factory=list)
    row_info: list[Row] = field(default_factory=list)
    link_col: dict[int, int] = field(default_factory=dict)
    link_coef: dict[int, float] = field(default_factory=dict)
    source_col: dict[str, int] = field(default_factory=dict)
    share_col: dict[tuple[str, str | None], int] = field(default_factory=dict)
    shortfall_col: dict[str, int] = field(default_factory=dict)
    factor_col: int = -1
    demand_row: dict[str, int] = field(default_factory=dict)
    heat_row: dict[str, int] = field(default_factory=dict)
    available_row: dict[str, int] = field(default_factory=dict)
    max_row: dict[str, int] = field(default_factory=dict)
    # (switch, input link) -> the input column's coefficient in the switch's balance row
    switch_coef: dict[tuple[str, int], float] = field(default_factory=dict)
    out_of_service: set[str] = field(default_factory=set)  # outages applied in place
    unreachable: set[str] = field(default_factory=set)  # scanners no power can reach
    _pulp: Any = field(default=None, repr=False)  # (problem, variables, constraints)

    # -- building -------------------------------------------------------------------
    def add_column(self, name: str, low: float | None = 0.0, high: float | None = None) -> int:
        """Add a variable; return its column number."""
        self.col_name.append(name)
        self.col_low.append(-INF if low is None else low)
        self.col_high.append(INF if high is None else high)
        return len(self.col_name) - 1

    def add_row(self, expression: Any, info: Row, low: float = -INF, high: float = INF) -> int:
        """Add a named constraint ``low ≤ expression ≤ high``; return its row number.

        ``expression`` is a coefficient map (column -> coefficient), or a pulp
        constraint over :meth:`var` variables (then ``low`` and ``high`` come
        from it).
        """
        if not isinstance(expression, dict):
            expression, low, high = self._from_pulp(expression)
        self.row_coefs.append(expression)
        self.row_low.append(low)
        self.row_high.append(high)
        self.row_info.append(info)
        return len(self.row_info) - 1

    def _from_pulp(self, constraint: Any) -> tuple[Coefs, float, float]:
        index = {id(var): col for col, var in enumerate(self.columns)}
        coefs = _plus(*((float(value), {index[id(var)]: 1.0})
                        for var, value in constraint.items()))
        rhs = -float(constraint.constant)
        sense = int(constraint.sense)
        return coefs, (rhs if sense >= 0 else -INF), (rhs if sense <= 0 else INF)

    # -- reading --------------------------------------------------------------------
    @property
    def sense(self) -> list[int]:
        """Each row's sense: +1 (≥ low), −1 (≤ high), 0 (equality)."""
        return [0 if lo == hi else (1 if hi == INF else -1)
                for lo, hi in zip(self.row_low, self.row_high, strict=True)]

    def coefficient(self, row: int, col: int) -> float:
        """The built matrix entry of a row and a column (0 when absent)."""
        return self.row_coefs[row].get(col, 0.0)

    def triplets(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """The matrix's non-zero entries: columns, rows, values (in row order)."""
        cols: list[int] = []
        rows: list[int] = []
        values: list[float] = []
        for r, coefs in enumerate(self.row_coefs):
            for col, value in coefs.items():
                if value != 0.0:
                    cols.append(col)
                    rows.append(r)
                    values.append(value)
        return (np.asarray(cols, dtype=np.int64), np.asarray(rows, dtype=np.int32),
                np.asarray(values, dtype=float))

    def csc(self, order: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """The matrix column-wise: starts, row indices, values (zeros left out).

        ``order`` lists the model's columns in the order wanted (default: theirs).
        """
        cols, rows, values = self.triplets()
        ncol = len(self.col_name)
        if order is not None:
            rank = np.empty(ncol, dtype=np.int64)
            rank[order] = np.arange(ncol, dtype=np.int64)
            cols = rank[cols]
        sort = np.argsort(cols, kind="stable")
        starts = np.zeros(ncol + 1, dtype=np.int32)
        np.cumsum(np.bincount(cols, minlength=ncol), out=starts[1:])
        return starts, rows[sort], values[sort]

    def link_coefs(self, index: int, scale: float = 1.0) -> Coefs:
        """The power on a link: its column times its coefficient (see _link_columns)."""
        return {self.link_col[index]: scale * self.link_coef[index]}

    def inflow_coefs(self, node_id: str, scale: float = 1.0) -> Coefs:
        """The power entering a node, as a coefficient map."""
        out: Coefs = {}
        for link in self.network.in_links[node_id]:
            col = self.link_col[link.index]
            out[col] = out.get(col, 0.0) + scale * self.link_coef[link.index]
        return out

    def link_value(self, index: int, columns: Any) -> float:
        """The power on a link in a solution's column values."""
        return self.link_coef[index] * float(columns[self.link_col[index]])

    # -- the pulp view, for the CBC fallback and pulp-written extra rows -------------
    def _pulp_view(self) -> tuple[Any, list[Any], list[Any]]:
        """The pulp problem, its variables and constraints, extended to the rows added so far."""
        import pulp

        if self._pulp is None:
            self._pulp = (pulp.LpProblem("beamplan", pulp.LpMinimize), [], [])
            self._pulp[0].setObjective(pulp.lpSum([]))
        problem, variables, constraints = self._pulp
        for col in range(len(variables), len(self.col_name)):
            lo, hi = self.col_low[col], self.col_high[col]
            variables.append(problem.add_variable(self.col_name[col],
                                                  lowBound=None if lo == -INF else lo,
                                                  upBound=None if hi == INF else hi))
        for row in range(len(constraints), len(self.row_info)):
            lo, hi = self.row_low[row], self.row_high[row]
            expr = pulp.LpAffineExpression([(variables[c], v)
                                            for c, v in self.row_coefs[row].items()])
            name = self.row_info[row].name
            problem.addConstraint(expr == lo if lo == hi else
                                  (expr >= lo if hi == INF else expr <= hi), name)
            constraints.append(problem.get_constraint_by_name(name))
        return problem, variables, constraints

    @property
    def problem(self) -> Any:
        """The same LP as a pulp problem (built on first use)."""
        return self._pulp_view()[0]

    @property
    def columns(self) -> list[Any]:
        """The pulp variables, in column order (built on first use)."""
        return self._pulp_view()[1]

    @property
    def rows(self) -> list[Any]:
        """The pulp constraints, in row order (built on first use)."""
        return self._pulp_view()[2]

    def var(self, col: int) -> Any:
        """The pulp variable of a column."""
        return self.columns[col]

    def link_expr(self, index: int) -> Any:
        """The power on a link as a pulp expression."""
        return self.link_coef[index] * self.columns[self.link_col[index]]

    def inflow(self, node_id: str) -> Any:
        """The power entering a node as a pulp expression."""
        import pulp

        return pulp.lpSum(self.link_expr(link.index) for link in self.network.in_links[node_id])


@contextlib.contextmanager
def gc_paused() -> Iterator[None]:
    """Pause the cyclic garbage collector while a plan makes its many small objects.

    Building the LP and the result of a large network makes hundreds of
    thousands of dicts and records that all stay alive; each automatic
    collection would walk every live object again, which makes the whole
    quadratic. Reference counting still frees what dies.

    Examples
    --------
    >>> with gc_paused():
    ...     gc.isenabled()
    False
    """
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


def _tag(index: int) -> str:
    return f"{index:05d}"


def _link_columns(m: LpModel) -> None:
    """A column per link, except after a fixed-gain element: chains are contracted.

    The link out of a GAIN element (mirror, drift, fixed attenuator) carries
    g × its input, so it is written as g × (the input's column) and needs
    neither a column nor a balance row: a chain of plain optics costs one
    column, plus one row per heat limit.
    """
    for node in m.network.nodes:
        for port in node.ports:
            link = m.network.out_link.get((node.id, port.name))
            if link is None:
                continue
            if node.behaviour is Behaviour.GAIN:
                [into] = m.network.in_links[node.id]
                m.link_col[link.index] = m.link_col[into.index]
                m.link_coef[link.index] = m.link_coef[into.index] * node.gain_max
            else:
                m.link_col[link.index] = m.add_column(f"x{_tag(link.index)}")
                m.link_coef[link.index] = 1.0


def _source_columns(m: LpModel) -> None:
    for i, node in enumerate(m.network.sources):
        col = m.add_column(f"p{_tag(i)}", 0.0, None)
        m.source_col[node.id] = col
        out = m.network.out_link.get((node.id, None))
        flow = m.link_coefs(out.index) if out is not None else {}
        m.add_row(_plus((1.0, flow), (-1.0, {col: 1.0})),
                  Row(f"src{_tag(i)}", Family.SOURCE, node.id), 0.0, 0.0)
        m.available_row[node.id] = m.add_row({col: 1.0}, Row(f"avl{_tag(i)}", Family.AVAILABLE,
                                                             node.id), high=node.available_w)


def _out(m: LpModel, node: Node, port: str | None) -> Coefs:
    return m.link_coefs(m.network.out_link[(node.id, port)].index)


def _element_rows(m: LpModel, i: int, node: Node) -> Coefs:
    """Balance rows of one element; return its absorbed-power expression."""
    inflow = m.inflow_coefs(node.id)
    tag = _tag(i)
    if node.behaviour is Behaviour.GAIN:  # contracted: out = g × in by construction
        loss = 1.0 - node.gain_max
        return {col: loss * value for col, value in inflow.items()}
    if node.behaviour is Behaviour.RANGE:
        out = _out(m, node, None)
        m.add_row(_plus((1.0, out), (-node.gain_min, inflow)),
                  Row(f"rlo{tag}", Family.RANGE_LOW, node.id), low=0.0)
        m.add_row(_plus((1.0, out), (-node.gain_max, inflow)),
                  Row(f"rhi{tag}", Family.RANGE_HIGH, node.id), high=0.0)
        return _plus((1.0, inflow), (-1.0, out))
    if node.behaviour is Behaviour.SPLIT:
        return _splitter_rows(m, tag, node, inflow)
    if node.behaviour is Behaviour.COMBINE:
        balance, heat = switch_terms(m, node)
        for link in m.network.in_links[node.id]:
            m.switch_coef[(node.id, link.index)] = balance[m.link_col[link.index]]
        m.add_row(_plus((1.0, _out(m, node, None)), (1.0, balance)),
                  Row(f"bal{tag}", Family.BALANCE, node.id), 0.0, 0.0)
        return heat
    return inflow  # ABSORB: a dump takes everything


def switch_terms(m: LpModel, node: Node, select: str | None = None) -> tuple[Coefs, Coefs]:
    """A switch's input terms: in its balance row, and in its absorbed (heat) power.

    The switch passes gain × the power on the input it selects (``select``,
    default the node's own; every input when it has none). Power arriving on
    an input it does not select ends on the switch's beam stop: it is dumped,
    so it is neither in the balance nor in the heat, and the flows upstream
    are not bound by the switch. Every input column has an entry (0 when
    deselected), so a live model can move the switch by setting them.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> model = build_lp(build_network(load_layout("layouts/two-bay.yaml")))
    >>> node = model.network.node["sw-source"]
    >>> balance, heat = switch_terms(model, node, "sb-drift")
    >>> sorted(v != 0.0 for v in balance.values())
    [False, True]
    """
    chosen = node.select if select is None else select
    balance: Coefs = {}
    heat: Coefs = {}
    for link in m.network.in_links[node.id]:
        col, coef = m.link_col[link.index], m.link_coef[link.index]
        live = 1.0 if chosen is None or link.tail == chosen else 0.0
        balance[col] = balance.get(col, 0.0) - live * node.gain_max * coef
        heat[col] = heat.get(col, 0.0) + live * (1.0 - node.gain_max) * coef
    return balance, heat


def _splitter_rows(m: LpModel, tag: str, node: Node, inflow: Coefs) -> Coefs:
    shares: Coefs = {}
    absorbed: Coefs = {}
    for k, port in enumerate(node.ports):
        col = m.add_column(f"s{tag}_{k:02d}")
        m.share_col[(node.id, port.name)] = col
        share = {col: 1.0}
        shares[col] = 1.0
        absorbed[col] = 1.0 - port.efficiency
        ptag = f"{tag}_{k:02d}"
        if port.fraction_min > 0.0:
            m.add_row(_plus((1.0, share), (-port.fraction_min, inflow)),
                      Row(f"slo{ptag}", Family.SHARE_LOW, node.id, port.name), low=0.0)
        if port.fraction_max < 1.0:
            m.add_row(_plus((1.0, share), (-port.fraction_max, inflow)),
                      Row(f"shi{ptag}", Family.SHARE_HIGH, node.id, port.name), high=0.0)
        m.add_row(_plus((1.0, _out(m, node, port.name)), (-port.efficiency, share)),
                  Row(f"sout{ptag}", Family.SHARE_OUT, node.id, port.name), 0.0, 0.0)
    m.add_row(_plus((1.0, shares), (-1.0, inflow)), Row(f"ssum{tag}", Family.SHARE_SUM, node.id),
              0.0, 0.0)
    return absorbed


_ROWLESS = (Behaviour.GAIN, Behaviour.ABSORB)  # no rows of their own but a heat limit


def _element_families(m: LpModel) -> None:
    in_links, link_col, link_coef = m.network.in_links, m.link_col, m.link_coef
    for i, node in enumerate(m.network.elements):
        if node.heat_limit_w is None and node.behaviour in _ROWLESS:
            continue
        into = in_links[node.id]
        if node.behaviour is Behaviour.GAIN and len(into) == 1:  # the common case, inline
            index = into[0].index
            absorbed = {link_col[index]: (1.0 - node.gain_max) * link_coef[index]}
        else:
            absorbed = _element_rows(m, i, node)
        if node.heat_limit_w is not None:
            m.heat_row[node.id] = m.add_row(absorbed, Row(f"heat{_tag(i)}", Family.HEAT, node.id),
                                            high=node.heat_limit_w)


def _scanner_families(m: LpModel) -> None:
    m.factor_col = m.add_column("t", 0.0, None)
    for j, node in enumerate(m.network.scanners):
        tag = _tag(j)
        inflow = m.inflow_coefs(node.id)
        short = m.add_column(f"u{tag}", 0.0, 0.0)
        m.shortfall_col[node.id] = short
        m.demand_row[node.id] = m.add_row(
            _plus((1.0, inflow), (1.0, {short: 1.0}), (-node.need_w, {m.factor_col: 1.0})),
            Row(f"dem{tag}", Family.DEMAND, node.id), low=0.0)
        if node.max_w is not None and node.in_use:
            m.max_row[node.id] = m.add_row(inflow, Row(f"cap{tag}", Family.MAX_POWER, node.id),
                                           high=node.max_w)


def build_lp(network: Network) -> LpModel:
    """Build the allocation LP of a network (objective left empty for the goals).

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> model = build_lp(build_network(load_layout("layouts/pilot-line.yaml")))
    >>> len(model.link_col), len(model.demand_row)
    (10, 3)
    """
    from beamplan.optimise.magnitudes import check_magnitudes

    check_magnitudes(network)
    model = LpModel(network)
    with gc_paused():
        _link_columns(model)
        _source_columns(model)
        _element_families(model)
        _scanner_families(model)
    return model
