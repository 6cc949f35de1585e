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

from collections import ChainMap
from collections.abc import Mapping

from beamplan.network.behaviour import Behaviour, Node
from beamplan.network.graph import Network
from beamplan.optimise.lpmodel import INF, Coefs, LpModel, Row, gc_paused
from beamplan.optimise.lpmodel import plus as _plus
from beamplan.vocabulary import Family

__all__ = ["Coefs", "LpModel", "Row", "RowKey", "Terms", "build_lp", "chain_coefs", "gc_paused",
           "node_rows", "switch_terms"]


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


Terms = tuple[Coefs, float, float]  # a row's coefficients, its low and its high bound
RowKey = tuple[Family, str | None]  # a row of a node: its family and port


def _inflow(m: LpModel, node_id: str, coef: Mapping[int, float]) -> Coefs:
    out: Coefs = {}
    for link in m.network.in_links[node_id]:
        col = m.link_col[link.index]
        out[col] = out.get(col, 0.0) + coef[link.index]
    return out


def _outflow(m: LpModel, node: Node, port: str | None, coef: Mapping[int, float]) -> Coefs:
    index = m.network.out_link[(node.id, port)].index
    return {m.link_col[index]: coef[index]}


def node_rows(m: LpModel, node: Node, link_coef: Mapping[int, float] | None = None
              ) -> dict[RowKey, Terms]:
    """A node's own rows, as the builder writes them: coefficients and bounds.

    Keys are (family, port) in the order the rows are written. A row with
    both bounds infinite is not written (an element without a heat limit, a
    scanner out of use has no power cap), so comparing the rows of a node and
    of :func:`beamplan.network.behaviour.out_of_service` of it gives the
    edits of an outage. ``link_coef`` overrides link coefficients (the
    contracted chain after a failed GAIN element, see :func:`chain_coefs`).

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.behaviour import out_of_service
    >>> from beamplan.network.graph import build_network
    >>> model = build_lp(build_network(load_layout("layouts/pilot-line.yaml")))
    >>> node = model.network.node["halo-fel"]
    >>> node_rows(model, out_of_service(node))[(Family.AVAILABLE, None)][2]
    0.0
    """
    coef = m.link_coef if link_coef is None else ChainMap(dict(link_coef), m.link_coef)
    rows: dict[RowKey, Terms] = {}
    b = node.behaviour
    if b is Behaviour.SOURCE:
        col = m.source_col[node.id]
        link = m.network.out_link.get((node.id, None))
        flow = {m.link_col[link.index]: coef[link.index]} if link is not None else {}
        rows[(Family.SOURCE, None)] = (_plus((1.0, flow), (-1.0, {col: 1.0})), 0.0, 0.0)
        rows[(Family.AVAILABLE, None)] = ({col: 1.0}, -INF, node.available_w)
        return rows
    inflow = _inflow(m, node.id, coef)
    if b is Behaviour.SINK:
        rows[(Family.DEMAND, None)] = (
            _plus((1.0, inflow), (1.0, {m.shortfall_col[node.id]: 1.0}),
                  (-node.need_w, {m.factor_col: 1.0})), 0.0, INF)
        if node.max_w is not None:
            rows[(Family.MAX_POWER, None)] = (inflow, -INF, node.max_w if node.in_use else INF)
        return rows
    absorbed = inflow  # ABSORB: a dump takes everything
    if b is Behaviour.GAIN:  # contracted: out = g × in by construction
        absorbed = {col: (1.0 - node.gain_max) * value for col, value in inflow.items()}
    elif b is Behaviour.RANGE:
        out = _outflow(m, node, None, coef)
        rows[(Family.RANGE_LOW, None)] = (_plus((1.0, out), (-node.gain_min, inflow)), 0.0, INF)
        rows[(Family.RANGE_HIGH, None)] = (_plus((1.0, out), (-node.gain_max, inflow)), -INF, 0.0)
        absorbed = _plus((1.0, inflow), (-1.0, out))
    elif b is Behaviour.SPLIT:
        absorbed = _splitter_rows(m, node, inflow, coef, rows)
    elif b is Behaviour.COMBINE:
        balance, absorbed = switch_terms(m, node, link_coef=coef)
        rows[(Family.BALANCE, None)] = (_plus((1.0, _outflow(m, node, None, coef)),
                                              (1.0, balance)), 0.0, 0.0)
    heat = INF if node.heat_limit_w is None else node.heat_limit_w
    rows[(Family.HEAT, None)] = (absorbed, -INF, heat)
    return rows


def chain_coefs(m: LpModel, node: Node) -> dict[int, float]:
    """The coefficients of the links after a GAIN element, its gain as ``node`` says.

    The contracted chain (see _link_columns): its out link and each link
    after a GAIN element that follows, each g × the one before.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.behaviour import out_of_service
    >>> from beamplan.network.graph import build_network
    >>> model = build_lp(build_network(load_layout("layouts/pilot-line.yaml")))
    >>> set(chain_coefs(model, out_of_service(model.network.node["m3"])).values())
    {0.0}
    """
    net = m.network
    [into] = net.in_links[node.id]
    coef, out, current = m.link_coef[into.index], {}, node
    while True:
        link = net.out_link[(current.id, None)]
        coef *= current.gain_max
        out[link.index] = coef
        current = net.node[link.head]
        if current.behaviour is not Behaviour.GAIN:
            return out


def switch_terms(m: LpModel, node: Node, select: str | None = None,
                 link_coef: Mapping[int, float] | None = None) -> tuple[Coefs, Coefs]:
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
    coefs = m.link_coef if link_coef is None else link_coef
    balance: Coefs = {}
    heat: Coefs = {}
    for link in m.network.in_links[node.id]:
        col, coef = m.link_col[link.index], coefs[link.index]
        live = 1.0 if chosen is None or link.tail == chosen else 0.0
        balance[col] = balance.get(col, 0.0) - live * node.gain_max * coef
        heat[col] = heat.get(col, 0.0) + live * (1.0 - node.gain_max) * coef
    return balance, heat


def _splitter_rows(m: LpModel, node: Node, inflow: Coefs, coef: Mapping[int, float],
                   rows: dict[RowKey, Terms]) -> Coefs:
    shares: Coefs = {}
    absorbed: Coefs = {}
    for port in node.ports:
        col = m.share_col[(node.id, port.name)]
        share = {col: 1.0}
        shares[col] = 1.0
        absorbed[col] = 1.0 - port.efficiency
        if port.fraction_min > 0.0:
            rows[(Family.SHARE_LOW, port.name)] = (
                _plus((1.0, share), (-port.fraction_min, inflow)), 0.0, INF)
        if port.fraction_max < 1.0:
            rows[(Family.SHARE_HIGH, port.name)] = (
                _plus((1.0, share), (-port.fraction_max, inflow)), -INF, 0.0)
        rows[(Family.SHARE_OUT, port.name)] = (
            _plus((1.0, _outflow(m, node, port.name, coef)), (-port.efficiency, share)), 0.0, 0.0)
    rows[(Family.SHARE_SUM, None)] = (_plus((1.0, shares), (-1.0, inflow)), 0.0, 0.0)
    return absorbed


_PREFIX = {Family.BALANCE: "bal", Family.RANGE_LOW: "rlo", Family.RANGE_HIGH: "rhi",
           Family.SHARE_LOW: "slo", Family.SHARE_HIGH: "shi", Family.SHARE_OUT: "sout",
           Family.SHARE_SUM: "ssum", Family.HEAT: "heat", Family.SOURCE: "src",
           Family.AVAILABLE: "avl", Family.DEMAND: "dem", Family.MAX_POWER: "cap"}
_PER_PORT = (Family.SHARE_LOW, Family.SHARE_HIGH, Family.SHARE_OUT)


def _write_rows(m: LpModel, tag: str, node: Node, rows: dict[RowKey, Terms]) -> dict[Family, int]:
    """Add a node's rows (those with a finite bound); return the row of each family."""
    port_no = {p.name: k for k, p in enumerate(node.ports)}
    written: dict[Family, int] = {}
    for (family, port), (coefs, low, high) in rows.items():
        if low == -INF and high == INF:
            continue
        name = _PREFIX[family] + (f"{tag}_{port_no[port]:02d}" if family in _PER_PORT else tag)
        written[family] = m.add_row(coefs, Row(name, family, node.id, port), low, high)
    return written


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
            m.heat_row[node.id] = m.add_row(absorbed, Row(f"heat{_tag(i)}", Family.HEAT, node.id),
                                            high=node.heat_limit_w)  # type: ignore[arg-type]
            continue
        tag = _tag(i)
        for k, port in enumerate(node.ports if node.behaviour is Behaviour.SPLIT else ()):
            m.share_col[(node.id, port.name)] = m.add_column(f"s{tag}_{k:02d}")
        rows = node_rows(m, node)
        if node.behaviour is Behaviour.COMBINE:
            balance = rows[(Family.BALANCE, None)][0]
            for link in in_links[node.id]:
                m.switch_coef[(node.id, link.index)] = balance[link_col[link.index]]
        written = _write_rows(m, tag, node, rows)
        if Family.HEAT in written:
            m.heat_row[node.id] = written[Family.HEAT]


def _source_columns(m: LpModel) -> None:
    for i, node in enumerate(m.network.sources):
        m.source_col[node.id] = m.add_column(f"p{_tag(i)}", 0.0, None)
        written = _write_rows(m, _tag(i), node, node_rows(m, node))
        m.available_row[node.id] = written[Family.AVAILABLE]


def _scanner_families(m: LpModel) -> None:
    m.factor_col = m.add_column("t", 0.0, None)
    for j, node in enumerate(m.network.scanners):
        m.shortfall_col[node.id] = m.add_column(f"u{_tag(j)}", 0.0, 0.0)
        written = _write_rows(m, _tag(j), node, node_rows(m, node))
        m.demand_row[node.id] = written[Family.DEMAND]
        if Family.MAX_POWER in written:
            m.max_row[node.id] = written[Family.MAX_POWER]


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
