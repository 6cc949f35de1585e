"""The fast fixed-settings path: block sampling against scipy.stats, heat checks by hand,
the same tally on any number of threads."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from beamplan.analyses.tolerance import run_tolerance, uniforms
from beamplan.analyses.tolerance_fixed import fixed_paths
from beamplan.analyses.tolerance_model import Knob, build_model
from beamplan.layout.loader import load_layout, parse_layout
from beamplan.layout.tolerances import load_tolerances, parse_tolerances
from beamplan.layout.yamlpos import parse_yaml
from beamplan.network.graph import build_network
from beamplan.optimise.planner import plan_network

# Every plain distribution, a correlation group mixed by the Gaussian copula and a
# truncated normal, on one chain (invented values, common practice, no source).
MIXED = """\
layout: mixed
format: 1
sources: {src: {power: 1 kW}}
elements:
  m1: {kind: mirror, reflectivity: 0.95}
  m2: {kind: mirror, reflectivity: 0.9}
  m3: {kind: mirror, reflectivity: 0.8}
  d1: {kind: drift, transmission: 0.99}
scanners: {s1: {power: 500 W}}
beamlines: ["src -> m1 -> m2 -> m3 -> d1 -> s1"]
tolerances:
  groups: {batch: {correlation: 0.6}}
  items:
    - {source: src, property: power, spread: 4%}
    - {element: m1, property: reflectivity, spread: 0.02, distribution: uniform}
    - {element: m2, property: reflectivity, spread: 2%, distribution: lognormal}
    - {element: m3, property: reflectivity, spread: 0.01, group: batch}
    - {scanner: s1, property: power, spread: 3%, group: batch}
    - {element: d1, property: transmission, spread: 0.005, distribution: truncnormal,
       bounds: [0.98, 1.0]}
"""


def _build(text: str, name: str):  # type: ignore[no-untyped-def]
    doc = parse_yaml(text, name)
    layout = parse_layout(doc)
    network = build_network(layout)
    plan = plan_network(network)
    return network, plan, build_model(parse_tolerances(doc, in_layout=True), layout,
                                      network, plan)


def test_block_factors_follow_the_scipy_distributions() -> None:
    _, _, model = _build(MIXED, "mixed.yaml")
    u = uniforms("random", model.dimensions, 0, 4000, seed=7)
    u[0], u[1] = 1e-15, 1.0 - 1e-15  # the clipped tails (a fraction stays at most 1)
    cols = model.factors(u)
    eps = 1e-12  # the model keeps uniforms inside [eps, 1 - eps]
    q = np.clip(u, eps, 1 - eps)

    def column(node: str, quantity: str) -> np.ndarray:
        i = model.knobs.index(Knob(node, quantity))
        return cols[:, model.knob_column[i]]

    def dims(node: str, quantity: str) -> tuple[int, int, float]:
        return model.var_dims[model.knobs.index(Knob(node, quantity))]

    norm, uniform, lognorm, truncnorm = stats.norm, stats.uniform, stats.lognorm, \
        stats.truncnorm
    # scipy.stats inverse CDFs, then the clip and the division by the nominal value.
    own = dims("src", "power")[0]
    expected = np.maximum(norm.ppf(q[:, own], 1000.0, 40.0), 0.0) / 1000.0
    assert column("src", "power") == pytest.approx(expected, rel=1e-12)
    own = dims("m1", "gain")[0]
    expected = np.clip(uniform.ppf(q[:, own], 0.93, 0.04), 0.0, 1.0) / 0.95
    assert column("m1", "gain") == pytest.approx(expected, rel=1e-12)
    own = dims("m2", "gain")[0]
    expected = np.clip(lognorm.ppf(q[:, own], 0.02, scale=0.9), 0.0, 1.0) / 0.9
    assert column("m2", "gain") == pytest.approx(expected, rel=1e-12)
    assert column("m2", "gain").max() == 1.0 / 0.9  # the clipped tail
    own = dims("d1", "gain")[0]
    expected = truncnorm.ppf(q[:, own], (0.98 - 0.99) / 0.005, (1.0 - 0.99) / 0.005,
                             0.99, 0.005) / 0.99
    assert column("d1", "gain") == pytest.approx(expected, rel=1e-12)
    for node, quantity, mu, sigma in (("m3", "gain", 0.8, 0.01), ("s1", "need", 500.0, 15.0)):
        own, group, rho = dims(node, quantity)
        assert group >= 0 and own >= 0 and rho == 0.6
        z = math.sqrt(rho) * norm.ppf(q[:, group]) + math.sqrt(1 - rho) * norm.ppf(q[:, own])
        p = np.clip(norm.cdf(z), eps, 1 - eps)
        expected = norm.ppf(p, mu, sigma) / mu
        if quantity == "gain":
            expected = np.clip(expected * mu, 0.0, 1.0) / mu
        assert column(node, quantity) == pytest.approx(expected, rel=1e-12)
    # The two members of the group move together: correlation about 0.6.
    r = np.corrcoef(column("m3", "gain"), column("s1", "need"))[0, 1]
    assert 0.55 < r < 0.65  # 4000 samples: standard error about 0.01


# Two paths merge on a heat-limited switch: 1 kW split 40/60 over mirrors of 0.9 and 0.8,
# so the switch takes 840 W and absorbs 10 % of it, 84 W of its 85 W (hand calculation).
MERGE = """\
layout: merge
format: 1
sources: {src: {power: 1 kW}}
elements:
  sp: {kind: splitter, outputs: {a: {fraction: 0.4}, b: {}}}
  ma: {kind: mirror, reflectivity: 0.9}
  mb: {kind: mirror, reflectivity: 0.8}
  sw: {kind: switch, efficiency: 0.9, heat_limit: 85 W}
scanners: {s1: {power: 600 W}}
beamlines: ["src -> sp", "sp.a -> ma -> sw", "sp.b -> mb -> sw", "sw -> s1"]
tolerances:
  items:
    - {source: src, property: power, spread: 1%}
    - {element: ma, property: reflectivity, spread: 0.01}
    - {element: sw, property: efficiency, spread: 0.002}
"""


def test_heat_check_on_merging_paths_matches_a_hand_calculation() -> None:
    network, plan, model = _build(MERGE, "merge.yaml")
    assert plan.sources[0].output_w == pytest.approx(1000.0)  # the plan uses all the source
    # The uniforms run_tolerance draws: one stream per chunk of 8192 samples.
    u = np.vstack([uniforms("random", model.dimensions, s, min(8192, 20000 - s), seed=3)
                   for s in range(0, 20000, 8192)])
    cols = model.factors(u)

    def f(node: str, quantity: str) -> np.ndarray:
        return cols[:, model.knob_column[model.knobs.index(Knob(node, quantity))]]

    # Hand calculation: absorbed = 1000 f_src (400·0.9 f_ma + 600·0.8) (1 - 0.9 f_sw).
    absorbed = 1000 * f("src", "power") * (0.4 * 0.9 * f("ma", "gain") + 0.6 * 0.8) * \
        (1 - 0.9 * f("sw", "gain"))
    expected = absorbed > 85 * (1 + 1e-6)
    paths = fixed_paths(network, plan, model)
    hot = paths.overheated(cols)
    assert 0.2 < expected.mean() < 0.8  # the check is not trivial
    assert (hot == expected).all()
    factors, low, hot_too = paths.evaluate(cols)
    assert (hot_too == expected).all() and (low == factors.min(axis=1)).all()
    # Delivered: 840 W f-weighted through the switch, over the 600 W need.
    delivered = 1000 * f("src", "power") * (0.4 * 0.9 * f("ma", "gain") + 0.6 * 0.8) * \
        0.9 * f("sw", "gain")
    assert factors[:, 0] == pytest.approx(delivered / 600, rel=1e-7)  # LP tolerance
    run = run_tolerance(network, plan, model, samples=20000, seed=3, sensitivity_samples=0)
    assert run.tally.overheated == int(expected.sum())


def test_the_same_tally_on_any_number_of_threads() -> None:
    layout = load_layout("layouts/two-bay.yaml")
    network = build_network(layout)
    plan = plan_network(network)
    model = build_model(load_tolerances("layouts/tolerances/two-bay.yaml"), layout,
                        network, plan)
    one = run_tolerance(network, plan, model, samples=40000, seed=4, sensitivity_samples=0)
    two = run_tolerance(network, plan, model, samples=40000, seed=4, sensitivity_samples=0,
                        threads=2)
    for field in ("samples", "met", "all_met", "histograms", "min_histogram", "overheated"):
        assert np.array_equal(getattr(one.tally, field), getattr(two.tally, field)), field
    assert 0 < one.tally.all_met < 40000  # not trivially all or nothing


def test_batched_coefficient_edits_match_one_by_one() -> None:
    # The batched edits must leave HiGHS and the backend's feasibility tracking exactly as
    # the one-by-one edits do: the same t*, the same fill levels, the same stage count.
    from beamplan.analyses.tolerance_retune import RetuneModel

    layout = load_layout("layouts/two-bay.yaml")
    network = build_network(layout)
    plan = plan_network(network)
    model = build_model(load_tolerances("layouts/tolerances/two-bay.yaml"), layout,
                        network, plan)
    cols = model.factors(uniforms("random", model.dimensions, 0, 60, seed=8))
    batched = RetuneModel(network, model)
    single = RetuneModel(network, model)
    single.live.backend.set_coefficients = None  # type: ignore[attr-defined]
    b1, b2 = batched.live.backend, single.live.backend
    for i in range(0, 60, 20):  # the tracked row activities and feasibility, before a solve
        batched.evaluate(cols[i:i + 20])
        single.evaluate(cols[i:i + 20])
        values = (batched.values(cols[i + 1:i + 2])[0] * 1.01).tolist()
        rows, where = [e.row for e in batched.entries], [e.col for e in batched.entries]
        b1.set_coefficients(rows, where, values)  # type: ignore[attr-defined]
        for row, col, value in zip(rows, where, values, strict=True):
            b2.set_coefficient(row, col, value)
        assert np.array_equal(b1._act, b2._act)  # type: ignore[attr-defined]
        assert b1._feasible == b2._feasible  # type: ignore[attr-defined]
    f1, t1 = batched.evaluate(cols)
    f2, t2 = single.evaluate(cols)
    assert np.array_equal(t1, t2) and np.array_equal(f1, f2, equal_nan=True)
    assert batched.stages == single.stages > 60  # some samples need the filling stages
    assert 0 < (t1 >= 1 - 1e-6).sum() < 60


def test_threads_stop_cleanly_with_the_samples_so_far() -> None:
    layout = load_layout("layouts/two-bay.yaml")
    network = build_network(layout)
    plan = plan_network(network)
    model = build_model(load_tolerances("layouts/tolerances/two-bay.yaml"), layout,
                        network, plan)

    def stop(done: int, total: int) -> None:
        raise KeyboardInterrupt

    run = run_tolerance(network, plan, model, samples=40000, progress=stop, threads=2)
    assert run.interrupted and run.sensitivity is None
    assert run.tally.samples == 8192  # one task of one chunk came back before the stop
