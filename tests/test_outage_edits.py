"""The live model's outage edits: derived from out_of_service, equal to a rebuilt LP's."""

from __future__ import annotations

from typing import Any

from hypothesis import HealthCheck, given, settings

from beamplan.layout.loader import load_layout
from beamplan.layout.model import Layout
from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import build_network
from beamplan.optimise.live import LiveModel
from beamplan.optimise.lp import LpModel, build_lp
from tests.conftest import layout_from_text
from tests.layoutgen import layouts
from tests.test_outages import DEMOS, SEVEN_SWITCHES, _out_of_service

INF = float("inf")


class Recorder:
    """A back end that passes every call on and writes down the edits."""

    def __init__(self, inner: Any) -> None:
        self.inner = inner
        self.entries: dict[tuple[int, int], float] = {}
        self.rhs: dict[int, float] = {}

    def set_coefficient(self, row: int, col: int, value: float) -> None:
        self.entries[(row, col)] = value
        self.inner.set_coefficient(row, col, value)

    def set_rhs(self, row: int, value: float) -> None:
        self.rhs[row] = value
        self.inner.set_rhs(row, value)

    def __getattr__(self, name: str) -> Any:
        return getattr(self.inner, name)


def _rebuilt_difference(built: LpModel, rebuilt: LpModel
                        ) -> tuple[dict[tuple[int, int], float], dict[int, float], set[int]]:
    """Entries and right-hand sides where the rebuilt LP differs, in the built numbering,
    and the built rows the rebuilt LP leaves out."""
    rows = {info.name: r for r, info in enumerate(rebuilt.row_info)}
    cols = {name: c for c, name in enumerate(rebuilt.col_name)}
    assert set(cols) == set(built.col_name)  # an outage keeps every column
    entries: dict[tuple[int, int], float] = {}
    rhs: dict[int, float] = {}
    missing: set[int] = set()
    built_cols = {name: c for c, name in enumerate(built.col_name)}
    for r, info in enumerate(built.row_info):
        if info.name not in rows:
            missing.add(r)
            continue
        other = rows[info.name]
        here, there = built.row_coefs[r], rebuilt.row_coefs[other]
        for name in {built.col_name[c] for c in here} | {rebuilt.col_name[c] for c in there}:
            value, col = there.get(cols[name], 0.0), built_cols[name]
            if value != here.get(col, 0.0):
                entries[(r, col)] = value
        if (rebuilt.row_low[other], rebuilt.row_high[other]) != (built.row_low[r],
                                                                 built.row_high[r]):
            rhs[r] = (rebuilt.row_high[other] if built.row_high[r] != INF
                      else rebuilt.row_low[other])
    return entries, rhs, missing


def _check_every_node(layout: Layout) -> set[Behaviour]:
    """Each node's outage: live applies exactly outage_edits, which are exactly the
    difference to the LP rebuilt for the layout with the node out of use."""
    live = LiveModel(build_network(layout))
    recorder = Recorder(live.backend)
    live.backend = recorder  # type: ignore[assignment]
    edited: set[Behaviour] = set()
    for node_id in layout.node_ids:
        node = live.network.node[node_id]
        derived = live.outage_edits([node_id])
        recorder.entries.clear()
        recorder.rhs.clear()
        with live.outage([node_id]):
            applied = (dict(recorder.entries), dict(recorder.rhs))
        assert applied == derived, node_id
        restored = {key: live.model.coefficient(*key) for key in derived[0]}
        assert {k: recorder.entries[k] for k in restored} == restored, node_id
        # Independent reference: the LP built afresh from the rebuilt layout.
        rebuilt = build_lp(build_network(_out_of_service(layout, node_id)))
        entries, rhs, missing = _rebuilt_difference(live.model, rebuilt)
        freed = {r for r in missing if r in derived[1]}
        assert freed == missing, node_id  # a row left out is made free, ...
        assert all(derived[1][r] == INF for r in freed), node_id
        kept = {k: v for k, v in derived[0].items() if k[0] not in missing}
        assert kept == entries, node_id  # ... every other row edited exactly as rebuilt
        assert {r: v for r, v in derived[1].items() if r not in missing} == rhs, node_id
        if derived != ({}, {}):
            edited.add(node.behaviour)
    return edited


def test_outage_edits_equal_the_rebuilt_lp_for_every_node_kind() -> None:
    # Reference: build_lp on each demo rebuilt with one node out of use.
    edited: set[Behaviour] = set()
    for name in DEMOS:
        edited |= _check_every_node(load_layout(f"layouts/{name}.yaml"))
    edited |= _check_every_node(layout_from_text(SEVEN_SWITCHES))
    assert edited >= {Behaviour.SOURCE, Behaviour.GAIN, Behaviour.RANGE, Behaviour.SPLIT,
                      Behaviour.COMBINE, Behaviour.SINK}


def test_a_failed_mirror_edits_the_rows_its_chain_feeds() -> None:
    # pilot-line (hand reading of the layout): m3 feeds litho-p2 alone, so its
    # outage zeroes that scanner's inflow in its demand row.
    live = LiveModel(build_network(load_layout("layouts/pilot-line.yaml")))
    entries, _ = live.outage_edits(["m3"])
    demand = live.model.demand_row["litho-p2"]
    assert any(row == demand and value == 0.0 for (row, _), value in entries.items())


@settings(max_examples=10, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(layouts(max_scanners=6))
def test_outage_edits_equal_the_rebuilt_lp_on_random_layouts(text: str) -> None:
    _check_every_node(layout_from_text(text))
