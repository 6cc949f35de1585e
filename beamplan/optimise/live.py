"""A model built once and re-solved for many cases by editing it in place.

:class:`LiveModel` keeps one LP and one solver back end (a warm HiGHS model).
An outage is applied by changing coefficients and right-hand sides, derived
from :func:`beamplan.network.behaviour.out_of_service`: where the rows
:func:`beamplan.optimise.lp.node_rows` writes for the nodes as they are and
as out of service differ (:meth:`LiveModel.outage_edits`); tests check them
against a rebuilt LP.
A switch position is applied the way the LP builder writes ``select``: the
selected input's entry in the switch's balance (and heat) row gets its
coefficient, the other inputs' entries 0, so their power is dumped at the
switch (:meth:`LiveModel.switched`), again checked against a rebuilt layout.
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, replace

from beamplan.network.behaviour import Behaviour, Node, out_of_service
from beamplan.network.graph import Link, Network
from beamplan.optimise.backend import INF, Backend, make_backend
from beamplan.optimise.goals import run_goal
from beamplan.optimise.lp import LpModel, build_lp, chain_coefs, node_rows, switch_terms
from beamplan.optimise.planner import solve_model
from beamplan.optimise.result import Plan
from beamplan.vocabulary import Family, Goal, Solver

__all__ = ["CaseSummary", "LiveModel"]


@dataclass(frozen=True)
class CaseSummary:
    """Delivered power per scanner in service, and source power drawn."""

    delivered_w: dict[str, float]
    source_used_w: float


class LiveModel:
    """One LP and back end for a network, re-solved for cases.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> live = LiveModel(build_network(load_layout("layouts/pilot-line.yaml")))
    >>> base = live.plan("headroom")
    >>> with live.outage(["t2"]):
    ...     case = live.plan("headroom")
    >>> case.scanner("litho-p2").delivered_w
    0.0
    >>> abs(live.plan("headroom").headroom_factor - base.headroom_factor) < 1e-9
    True
    """

    def __init__(self, network: Network, solver: Solver | str = Solver.AUTO) -> None:
        self.network = network
        self.model: LpModel = build_lp(network)
        self.backend: Backend = make_backend(self.model, solver)
        self._succ: dict[str, list[str]] = {}
        for link in network.links:
            self._succ.setdefault(link.tail, []).append(link.head)
        self._built: dict[tuple[int, int], float] = {}  # entries as they are in service
        self._held: dict[tuple[int, int], float] = {}  # entries an outage sets
        self._edits: dict[tuple[str, ...], tuple[dict[tuple[int, int], float],
                                                 dict[int, float]]] = {}  # single outages
        self._dead: set[int] = set()  # links after a failed GAIN element carry nothing
        self._dominated: dict[str, tuple[str, ...]] | None = None
        self._base_cut: set[str] = set()
        self._rows: dict[str, list[int]] = {}
        self._row: dict[tuple[str, Family, str | None], int] = {}
        for index, info in enumerate(self.model.row_info):
            self._rows.setdefault(info.node, []).append(index)
            self._row[(info.node, info.family, info.port)] = index
        self.switches = self.switches_of(network)
        self._failed: set[str] = set()
        self._where = {family: {n.id: i for i, n in enumerate(getattr(network, family))}
                       for family in ("nodes", "sources", "scanners", "elements")}

    @staticmethod
    def switches_of(network: Network) -> dict[str, tuple[str, ...]]:
        """Every switch with a ``select`` (a knob with positions) and its inputs, in order."""
        return {n.id: tuple(link.tail for link in network.in_links[n.id])
                for n in network.elements
                if n.behaviour is Behaviour.COMBINE and n.select is not None}

    def plan(self, goal: Goal | str = Goal.HEADROOM) -> Plan:
        """Solve ``goal`` for the network as it stands (with any outage applied)."""
        return solve_model(self.model, self.backend, goal)

    def summary(self, goal: Goal | str = Goal.HEADROOM) -> CaseSummary:
        """Solve ``goal`` and return only what a sweep ranks by (no report, fast).

        Delivered powers are read from the LP's link columns; the full
        :meth:`plan` propagates, explains and verifies on top of that.
        """
        outcome = run_goal(self.model, self.backend, goal)
        cols = outcome.solution.columns
        network = self.model.network
        delivered = {}
        for node in network.scanners:
            if node.in_use and node.id not in self.model.out_of_service:
                delivered[node.id] = sum(self.model.link_value(link.index, cols)
                                         for link in network.in_links[node.id]
                                         if link.index not in self._dead)
        used = float(sum(cols[c] for c in self.model.source_col.values()))
        return CaseSummary(delivered, used)

    def _rows_of(self, node_id: str, family: Family) -> list[int]:
        return [r for r in self._rows.get(node_id, []) if self.model.row_info[r].family == family]

    def outage_edits(self, node_ids: Iterable[str]
                     ) -> tuple[dict[tuple[int, int], float], dict[int, float]]:
        """The matrix entries and right-hand sides an outage of ``node_ids`` changes.

        Derived, not re-coded: the rows of every node the outage touches (the
        failed nodes, and the nodes fed by the contracted chain after a failed
        GAIN element) as :func:`~beamplan.optimise.lp.node_rows` writes them
        for the nodes as they stand and for the nodes as
        :func:`~beamplan.network.behaviour.out_of_service` makes them (with
        the chain's coefficients as :func:`~beamplan.optimise.lp.chain_coefs`
        gives them); the edits are where the two differ.

        Examples
        --------
        >>> from beamplan.layout.loader import load_layout
        >>> from beamplan.network.graph import build_network
        >>> live = LiveModel(build_network(load_layout("layouts/pilot-line.yaml")))
        >>> entries, rhs = live.outage_edits(["halo-fel"])
        >>> entries, list(rhs.values())
        ({}, [0.0])
        """
        m, current = self.model, self.model.network.node
        failed = {i: out_of_service(current[i]) for i in node_ids if current[i].in_use}
        link_coef: dict[int, float] = {}
        for node in failed.values():
            if node.behaviour is Behaviour.GAIN:
                link_coef.update(chain_coefs(m, node))
        touched = dict.fromkeys([*failed, *(self.network.links[i].head for i in link_coef)])
        entries: dict[tuple[int, int], float] = {}
        rhs: dict[int, float] = {}
        for node_id in touched:
            before = node_rows(m, current[node_id])
            after = node_rows(m, failed.get(node_id, current[node_id]), link_coef)
            for (family, port), (coefs, low, high) in after.items():
                row = self._row.get((node_id, family, port))
                if row is None:
                    continue  # not written: free before, so free after
                old, old_low, old_high = before[(family, port)]
                for col in coefs.keys() | old.keys():
                    value = coefs.get(col, 0.0)
                    if value != old.get(col, 0.0):
                        entries[(row, col)] = value
                if (low, high) != (old_low, old_high):
                    rhs[row] = high if m.row_high[row] != INF else low
        return entries, rhs

    def _apply(self, entries: Mapping[tuple[int, int], float], rhs: Mapping[int, float]) -> None:
        """Apply an outage's edits, remembering the entries as they were in service."""
        for key, value in entries.items():
            if key not in self._built:
                self._built[key] = self.model.coefficient(*key)
            self._held[key] = value
            self.backend.set_coefficient(key[0], key[1], value)
        for row, value in rhs.items():
            self.backend.set_rhs(row, value)

    def _restore(self, entries: Mapping[tuple[int, int], float], rhs: Mapping[int, float]
                 ) -> None:
        """Undo :meth:`_apply`: the entries and bounds as they are in service."""
        m = self.model
        for key in entries:
            self._held.pop(key, None)
            self.backend.set_coefficient(key[0], key[1], self._built[key])
        for row in rhs:
            self.backend.set_rhs(row, m.row_high[row] if m.row_high[row] != INF
                                 else m.row_low[row])

    def _after(self, node_id: str) -> list[Link]:
        """The links whose power passes a GAIN element: its out-link and the chain after it."""
        out: list[Link] = []
        current = node_id
        while True:
            link = self.network.out_link[(current, None)]
            out.append(link)
            if self.network.node[link.head].behaviour is not Behaviour.GAIN:
                return out
            current = link.head

    def _cut_off(self, failed: set[str]) -> set[str]:
        """Scanners that no source in service reaches once ``failed`` are out.

        One failure: the scanners it dominates (computed once), else a search.
        """
        if len(failed) == 1:
            if self._dominated is None:
                from beamplan.network.dominators import single_points_of_failure

                self._dominated = single_points_of_failure(self.network)
                self._base_cut = self._search(set())
            [node_id] = failed
            return set(self._dominated.get(node_id, ())) | self._base_cut
        return self._search(failed)

    def _search(self, failed: set[str], positions: Mapping[str, str] | None = None
                ) -> set[str]:
        """Scanners that no source in service reaches once ``failed`` are out (a search).

        A switch passes only the input it selects (``positions`` overrides the layout's).
        """
        net = self.network
        select = {sid: net.node[sid].select for sid in self.switches}
        select.update(positions or {})
        seen = {n.id for n in net.sources if n.in_use and n.available_w > 0
                and n.id not in failed}
        stack = list(seen)
        while stack:
            tail = stack.pop()
            for head in self._succ.get(tail, ()):
                if head in seen or head in failed or not net.node[head].in_use:
                    continue
                if select.get(head, tail) != tail:
                    continue  # a switch set to another input
                seen.add(head)
                stack.append(head)
        return {s.id for s in net.scanners if s.id not in seen}

    def _select(self, switch_id: str, selected: str) -> None:
        """Move a switch: its input entries in its balance and heat rows (see switch_terms).

        The selected input's entry is −gain × link coefficient in the balance
        row, the others' 0 (their power is dumped at the switch). An entry an
        outage holds at zero stays zero until the outage ends.
        """
        m = self.model
        balance, heat = switch_terms(m, self.network.node[switch_id], selected)
        for family, terms in ((Family.BALANCE, balance), (Family.HEAT, heat)):
            for row in self._rows_of(switch_id, family):
                for col, value in terms.items():
                    key = (row, col)
                    self._built[key] = value  # the entry while in service
                    if key not in self._held:
                        self.backend.set_coefficient(row, col, value)
        for link in self.network.in_links[switch_id]:
            m.switch_coef[(switch_id, link.index)] = balance[m.link_col[link.index]]

    @contextlib.contextmanager
    def switched(self, positions: Mapping[str, str]) -> Iterator[Network]:
        """Set switches to other inputs (``{switch: input}``) for the ``with`` block.

        It may be nested inside :meth:`outage`; the scanners that no source
        reaches are found again for the new positions.

        Examples
        --------
        >>> from beamplan.layout.loader import load_layout
        >>> from beamplan.network.graph import build_network
        >>> live = LiveModel(build_network(load_layout("layouts/two-bay.yaml")))
        >>> live.switches
        {'sw-source': ('src-tunnel', 'sb-drift')}
        >>> with live.outage(["fel-main"]), live.switched({"sw-source": "sb-drift"}):
        ...     round(live.summary().source_used_w)
        4000
        """
        for switch_id, selected in positions.items():
            if selected not in self.switches.get(switch_id, ()):
                raise ValueError(f"'{selected}' is not an input of switch '{switch_id}'")
        before_network, before_cut = self.model.network, self.model.unreachable
        changed = {sid: replace(before_network.node[sid], select=sel)
                   for sid, sel in positions.items()}
        for switch_id, selected in positions.items():
            self._select(switch_id, selected)
        self.model.network = before_network.with_nodes(changed)
        self.model.unreachable = self._search(self._failed, positions)
        try:
            yield self.model.network
        finally:
            for switch_id in positions:
                self._select(switch_id, str(self.network.node[switch_id].select))
            self.model.network, self.model.unreachable = before_network, before_cut

    def _with_nodes(self, changed: dict[str, Node]) -> Network:
        """``self.network.with_nodes(changed)``, patching positions rather than
        rebuilding every table in Python (a sweep makes one per case)."""
        net = self.network
        other = replace(net, nodes=self._patched("nodes", changed))
        for name in ("in_links", "out_link"):
            other.__dict__[name] = getattr(net, name)
        other.__dict__["node"] = {**net.node, **changed}
        for name in ("sources", "scanners", "elements"):
            other.__dict__[name] = self._patched(name, changed)
        return other

    def _patched(self, family: str, changed: dict[str, Node]) -> tuple[Node, ...]:
        where = self._where[family]
        nodes = list(getattr(self.network, family))
        for node_id, node in changed.items():
            if node_id in where:
                nodes[where[node_id]] = node
        return tuple(nodes)

    @contextlib.contextmanager
    def outage(self, node_ids: Iterable[str]) -> Iterator[Network]:
        """Take nodes out of service for the duration of the ``with`` block."""
        ids = list(node_ids)
        originals = [self.network.node[i] for i in ids]
        failed = {n.id: out_of_service(n) for n in originals}
        case_network = self._with_nodes(failed)
        key = tuple(ids)
        if len(ids) != 1 or self.model.network is not self.network:  # pairs, switches moved
            entries, rhs = self.outage_edits(ids)
        elif key in self._edits:
            entries, rhs = self._edits[key]
        else:
            entries, rhs = self._edits[key] = self.outage_edits(ids)
        self._apply(entries, rhs)
        for node in originals:
            if node.in_use:
                if node.is_scanner:
                    self.model.out_of_service.add(node.id)
                if node.behaviour is Behaviour.GAIN:
                    self._dead.update(link.index for link in self._after(node.id))
        self.model.network = case_network
        self.model.unreachable = self._cut_off(set(ids))
        self._failed = set(ids)
        try:
            yield case_network
        finally:
            self.model.network = self.network
            self.model.unreachable = set()
            self._dead = set()
            self._failed = set()
            self._restore(entries, rhs)
            self.model.out_of_service.difference_update(ids)
