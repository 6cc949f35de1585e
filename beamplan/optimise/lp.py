"""Build the allocation LP once from a network, as a pulp model with explicit maps.

The LP is a generalized network flow with gains. Each family of variables or
constraints has its own small function; :class:`LpModel` keeps the maps from
elements to columns and rows, so that goals and later sweeps can change
bounds and coefficients and re-solve without rebuilding. The formulation is
written out in docs/lp-formulation.md.

Columns: ``x`` power on every link (W); ``p`` source outputs (W); ``s``
splitter shares (W); ``u`` scanner shortfalls (W, enabled only by the elastic
goal); ``t`` the common headroom factor.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import pulp

from beamplan.network.behaviour import Behaviour, Node
from beamplan.network.graph import Network

__all__ = ["LpModel", "Row", "build_lp"]


@dataclass(frozen=True)
class Row:
    """What one constraint means, for reports and explanations.

    ``family`` is one of ``balance``, ``range-low``, ``range-high``,
    ``share-sum``, ``share-low``, ``share-high``, ``share-out``, ``heat``,
    ``source``, ``available``, ``demand``, ``max-power`` (max_power or the
    useful ceiling, whichever is lower).
    """

    name: str
    family: str
    node: str
    port: str | None = None


@dataclass
class LpModel:
    """The pulp problem and the maps from network objects to its columns and rows."""

    network: Network
    problem: Any
    columns: list[Any] = field(default_factory=list)
    rows: list[Any] = field(default_factory=list)
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
    out_of_service: set[str] = field(default_factory=set)  # outages applied in place
    unreachable: set[str] = field(default_factory=set)  # scanners no power can reach

    def add_column(self, name: str, low: float | None = 0.0, high: float | None = None) -> int:
        """Add a variable; return its column number."""
        var = self.problem.add_variable(name, lowBound=low, upBound=high)
        self.columns.append(var)
        return len(self.columns) - 1

    def add_row(self, expression: Any, info: Row) -> int:
        """Add a named constraint; return its row number."""
        self.problem.addConstraint(expression, info.name)
        self.rows.append(self.problem.get_constraint_by_name(info.name))
        self.row_info.append(info)
        return len(self.rows) - 1

    def var(self, col: int) -> Any:
        """The pulp variable of a column."""
        return self.columns[col]

    def link_expr(self, index: int) -> Any:
        """The power on a link: its column times its coefficient (see _link_columns)."""
        return self.link_coef[index] * self.columns[self.link_col[index]]

    def link_value(self, index: int, columns: Any) -> float:
        """The power on a link in a solution's column values."""
        return self.link_coef[index] * float(columns[self.link_col[index]])

    def inflow(self, node_id: str) -> Any:
        """The expression for the power entering a node."""
        links = self.network.in_links[node_id]
        return pulp.lpSum(self.link_expr(link.index) for link in links)


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
        flow = m.link_expr(out.index) if out is not None else 0
        m.add_row(flow - m.var(col) == 0, Row(f"src{_tag(i)}", "source", node.id))
        m.available_row[node.id] = m.add_row(m.var(col) <= node.available_w,
                                             Row(f"avl{_tag(i)}", "available", node.id))


def _out_var(m: LpModel, node: Node, port: str | None) -> Any:
    return m.link_expr(m.network.out_link[(node.id, port)].index)


def _element_rows(m: LpModel, i: int, node: Node) -> Any:
    """Balance rows of one element; return its absorbed-power expression."""
    inflow = m.inflow(node.id)
    tag = _tag(i)
    if node.behaviour is Behaviour.GAIN:  # contracted: out = g × in by construction
        return (1.0 - node.gain_max) * inflow
    if node.behaviour is Behaviour.RANGE:
        out = _out_var(m, node, None)
        m.add_row(out - node.gain_min * inflow >= 0, Row(f"rlo{tag}", "range-low", node.id))
        m.add_row(out - node.gain_max * inflow <= 0, Row(f"rhi{tag}", "range-high", node.id))
        return inflow - out
    if node.behaviour is Behaviour.SPLIT:
        return _splitter_rows(m, tag, node, inflow)
    if node.behaviour is Behaviour.COMBINE:
        out = _out_var(m, node, None)
        m.add_row(out - node.gain_max * inflow == 0, Row(f"bal{tag}", "balance", node.id))
        if node.select is not None:
            for link in m.network.in_links[node.id]:
                if link.tail != node.select:
                    m.var(m.link_col[link.index]).upBound = 0.0
        return (1.0 - node.gain_max) * inflow
    return inflow  # ABSORB: a dump takes everything


def _splitter_rows(m: LpModel, tag: str, node: Node, inflow: Any) -> Any:
    shares = []
    absorbed = []
    for k, port in enumerate(node.ports):
        col = m.add_column(f"s{tag}_{k:02d}")
        m.share_col[(node.id, port.name)] = col
        share = m.var(col)
        shares.append(share)
        absorbed.append((1.0 - port.efficiency) * share)
        ptag = f"{tag}_{k:02d}"
        if port.fraction_min > 0.0:
            m.add_row(share - port.fraction_min * inflow >= 0,
                      Row(f"slo{ptag}", "share-low", node.id, port.name))
        if port.fraction_max < 1.0:
            m.add_row(share - port.fraction_max * inflow <= 0,
                      Row(f"shi{ptag}", "share-high", node.id, port.name))
        m.add_row(_out_var(m, node, port.name) - port.efficiency * share == 0,
                  Row(f"sout{ptag}", "share-out", node.id, port.name))
    m.add_row(pulp.lpSum(shares) - inflow == 0, Row(f"ssum{tag}", "share-sum", node.id))
    return pulp.lpSum(absorbed)


def _element_families(m: LpModel) -> None:
    for i, node in enumerate(m.network.elements):
        absorbed = _element_rows(m, i, node)
        if node.heat_limit_w is not None:
            m.heat_row[node.id] = m.add_row(absorbed <= node.heat_limit_w,
                                            Row(f"heat{_tag(i)}", "heat", node.id))


def _scanner_families(m: LpModel) -> None:
    m.factor_col = m.add_column("t", 0.0, None)
    factor = m.var(m.factor_col)
    for j, node in enumerate(m.network.scanners):
        tag = _tag(j)
        inflow = m.inflow(node.id)
        short = m.add_column(f"u{tag}", 0.0, 0.0)
        m.shortfall_col[node.id] = short
        m.demand_row[node.id] = m.add_row(inflow + m.var(short) - node.need_w * factor >= 0,
                                          Row(f"dem{tag}", "demand", node.id))
        if node.max_w is not None and node.in_service:
            m.max_row[node.id] = m.add_row(inflow <= node.max_w,
                                           Row(f"cap{tag}", "max-power", node.id))


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
    problem = pulp.LpProblem("beamplan", pulp.LpMinimize)
    model = LpModel(network, problem)
    _link_columns(model)
    _source_columns(model)
    _element_families(model)
    _scanner_families(model)
    problem.setObjective(pulp.lpSum([]))
    return model
