"""Tolerance Monte Carlo against closed forms, published indices and the plan itself."""

from __future__ import annotations

import math
import pathlib

import numpy as np
import pytest
from scipy import stats

from beamplan.analyses.tolerance import run_tolerance, uniforms
from beamplan.analyses.tolerance_fixed import fixed_paths
from beamplan.analyses.tolerance_model import Knob, build_model
from beamplan.analyses.tolerance_retune import RetuneModel
from beamplan.analyses.tolerance_stats import samples_for_width, sobol_indices, wilson
from beamplan.analyses.tolerance_summary import summarise
from beamplan.layout.loader import load_layout, parse_layout
from beamplan.layout.tolerances import load_tolerances, parse_tolerances
from beamplan.layout.yamlpos import parse_yaml
from beamplan.network.graph import build_network
from beamplan.optimise.planner import plan_network

TWO_BAY = "layouts/two-bay.yaml"
TWO_BAY_TOL = "layouts/tolerances/two-bay.yaml"

# A single chain: 1 kW through three mirrors to one scanner that needs 640 W.
CHAIN = """\
layout: chain
format: 1
sources: {src: {power: 1 kW}}
elements:
  m1: {kind: mirror, reflectivity: 0.95}
  m2: {kind: mirror, reflectivity: 0.9}
  m3: {kind: mirror, reflectivity: 0.8}
scanners: {s1: {power: 640 W}}
beamlines: ["src -> m1 -> m2 -> m3 -> s1"]
tolerances:
  items:
    - {source: src, property: power, spread: 4%, distribution: lognormal}
    - {element: m1, property: reflectivity, spread: 3%, distribution: lognormal}
    - {element: m2, property: reflectivity, spread: 2%, distribution: lognormal}
    - {element: m3, property: reflectivity, spread: 5%, distribution: lognormal}
"""
SIGMAS = (0.04, 0.03, 0.02, 0.05)


def _chain():  # type: ignore[no-untyped-def]
    doc = parse_yaml(CHAIN, "chain.yaml")
    layout = parse_layout(doc)
    network = build_network(layout)
    plan = plan_network(network)
    model = build_model(parse_tolerances(doc, in_layout=True), layout, network, plan)
    return network, plan, model


def _closed_form(plan) -> float:  # type: ignore[no-untyped-def]
    # Hand calculation: ln(delivered/need) ~ N(ln f0, Σσ²) with f0 = 1000·0.95·0.9·0.8/640
    # (lognormal factors with median 1); P(meet) = Φ(ln f0 / σ). scipy.stats.norm.
    f0 = 1000 * 0.95 * 0.9 * 0.8 / 640
    assert plan.scanners[0].delivered_w / 640 == pytest.approx(f0, rel=1e-8)  # freeze slack
    return float(stats.norm.cdf(math.log(f0) / math.sqrt(sum(s * s for s in SIGMAS))))


@pytest.mark.parametrize("seed", [1, 2, 3, 4, 5])
def test_lognormal_chain_inside_its_interval(seed: int) -> None:
    network, plan, model = _chain()
    exact = _closed_form(plan)
    run = run_tolerance(network, plan, model, samples=20000, seed=seed, sensitivity_samples=0)
    low, high = wilson(int(run.tally.met[0]), run.tally.samples)
    assert low <= exact <= high
    assert 0.6 < exact < 0.95  # the case is not trivial (hand calculation: about 0.81)


def test_wilson_coverage_near_95_percent() -> None:
    # 1000 repeated runs of 400 samples; the Wilson interval should cover the closed form
    # in about 95 % of them (Brown, Cai & DasGupta 2001: Wilson keeps its nominal level).
    network, plan, model = _chain()
    exact = _closed_form(plan)
    covered = 0
    for seed in range(1000):
        run = run_tolerance(network, plan, model, samples=400, seed=seed,
                            sensitivity_samples=0)
        low, high = wilson(int(run.tally.met[0]), 400)
        covered += low <= exact <= high
    assert 0.92 <= covered / 1000 <= 0.98


def test_zero_tolerance_gives_exactly_the_plan() -> None:
    text = pathlib.Path(TWO_BAY_TOL).read_text()
    import re

    zero = re.sub(r"spread: [^,}]+", "spread: 0", text)
    layout = load_layout(TWO_BAY)
    network = build_network(layout)
    plan = plan_network(network)
    model = build_model(parse_tolerances(parse_yaml(zero, "zero.yaml")), layout, network, plan)
    u = uniforms("random", model.dimensions, 0, 64, seed=3)
    factors = fixed_paths(network, plan, model).factors(model.factors(u))
    expected = [s.delivered_w / s.need_w for s in plan.scanners]
    assert (factors == np.array(expected)).all()  # exactly: every factor is 1.0
    retuned, best = RetuneModel(network, model).evaluate(model.factors(u[:4]))
    assert best == pytest.approx(plan.headroom_factor, rel=1e-7)  # the goal's first stage
    assert (retuned == best[:, None]).all()  # every need met: each scanner reports t*


def test_retuned_never_below_fixed_on_the_same_samples() -> None:
    layout = load_layout(TWO_BAY)
    network = build_network(layout)
    plan = plan_network(network)
    model = build_model(load_tolerances(TWO_BAY_TOL), layout, network, plan)
    cols = model.factors(uniforms("random", model.dimensions, 0, 400, seed=11))
    paths = fixed_paths(network, plan, model)
    fixed_ok = (paths.factors(cols) >= 1 - 1e-6).all(axis=1) & ~paths.overheated(cols)
    _, best = RetuneModel(network, model).evaluate(cols)
    retuned_ok = best >= 1 - 1e-6
    assert fixed_ok.sum() > 20  # the comparison is not empty
    assert not (fixed_ok & ~retuned_ok).any()
    assert retuned_ok.sum() > fixed_ok.sum()


def test_ishigami_indices_through_the_same_estimator() -> None:
    # Ishigami & Homma (1990), a = 7, b = 0.1, inputs uniform on [-π, π]; analytic indices
    # S1 = 0.3139, S2 = 0.4424, S3 = 0, ST1 = 0.5576, ST2 = 0.4424, ST3 = 0.2437
    # (e.g. Saltelli et al., Global Sensitivity Analysis: The Primer, 2008).
    def ishigami(u: np.ndarray) -> np.ndarray:
        x = -math.pi + 2 * math.pi * u
        return (np.sin(x[:, 0]) + 7 * np.sin(x[:, 1]) ** 2 +
                0.1 * x[:, 2] ** 4 * np.sin(x[:, 0]))[:, None]

    ix = sobol_indices(["x1", "x2", "x3"], ishigami, 8192, seed=4)
    assert ix.first[0] == pytest.approx([0.3139, 0.4424, 0.0], abs=0.03)
    assert ix.total[0] == pytest.approx([0.5576, 0.4424, 0.2437], abs=0.03)


def test_samples_for_width_matches_the_normal_approximation() -> None:
    # Hand calculation: n ≈ z² p (1 - p) / (w/2)² = 1.96² · 0.25 / 0.005² ≈ 38415 at p = 0.5.
    assert samples_for_width(0.5, 0.01) == pytest.approx(38415, rel=0.01)
    low, high = wilson(0, 100)
    assert low == 0.0 and high == pytest.approx(0.037, abs=0.001)  # Wilson (1927) at k = 0


def test_same_seed_same_bytes_on_any_executor() -> None:
    from concurrent.futures import ThreadPoolExecutor

    network, plan, model = _chain()
    here = run_tolerance(network, plan, model, samples=20000, seed=9, sampler="sobol",
                         sensitivity_samples=0)
    with ThreadPoolExecutor(2) as pool:
        there = run_tolerance(network, plan, model, samples=20000, seed=9, sampler="sobol",
                              sensitivity_samples=0, executor=pool)
    assert (here.tally.histograms == there.tally.histograms).all()
    assert here.tally.all_met == there.tally.all_met
    other = run_tolerance(network, plan, model, samples=20000, seed=10, sampler="lhs",
                          sensitivity_samples=0)
    assert other.tally.all_met != here.tally.all_met  # the seed matters


def test_interrupted_run_is_partial() -> None:
    network, plan, model = _chain()

    def stop(done: int, total: int) -> None:
        raise KeyboardInterrupt

    run = run_tolerance(network, plan, model, samples=30000, progress=stop)
    assert run.interrupted and run.tally.samples == 8192 and summarise(run).partial
    assert run.sensitivity is None


def test_live_edits_equal_a_rebuilt_lp() -> None:
    # Independent reference: the LP built afresh (optimise/lp.py) from a network whose
    # nodes carry the perturbed gains, efficiencies, bounds, powers and needs.
    from dataclasses import replace

    from beamplan.optimise.lp import build_lp

    layout = load_layout(TWO_BAY)
    network = build_network(layout)
    plan = plan_network(network)
    model = build_model(load_tolerances(TWO_BAY_TOL), layout, network, plan)
    cols = model.factors(uniforms("random", model.dimensions, 0, 1, seed=5))
    f = {k: float(cols[0, model.knob_column[i]]) for i, k in enumerate(model.knobs)}
    changed = {}
    for node in network.nodes:
        g = f.get(Knob(node.id, "gain"), f.get(Knob(node.id, "setting"), 1.0))
        ports = tuple(replace(p, efficiency=p.efficiency * f.get(
            Knob(node.id, "efficiency", p.name), 1.0),
            fraction_min=p.fraction_min * f.get(Knob(node.id, "fraction", p.name), 1.0),
            fraction_max=p.fraction_max * f.get(Knob(node.id, "fraction", p.name), 1.0))
            for p in node.ports)
        changed[node.id] = replace(node, gain_min=node.gain_min * g, gain_max=node.gain_max * g,
                                   ports=ports, available_w=node.available_w * f.get(
                                       Knob(node.id, "power"), 1.0),
                                   need_w=node.need_w * f.get(Knob(node.id, "need"), 1.0))
    rebuilt = build_lp(network.with_nodes(changed))
    live = RetuneModel(network, model)
    nominal = live.live.model
    values = live.values(cols)[0]
    listed = {}
    for e, entry in enumerate(live.entries):
        listed[(entry.row, entry.col)] = values[e]
    moved = 0
    for r, row in enumerate(rebuilt.rows):
        for c, var in enumerate(rebuilt.columns):
            if c == rebuilt.factor_col or var not in row.expr:
                continue
            new = row.expr[var]
            if (r, c) in listed:
                assert listed[(r, c)] == pytest.approx(new, rel=1e-12, abs=1e-15)
                moved += 1
            else:  # not edited: must not have changed
                assert nominal.rows[r].expr[nominal.columns[c]] == pytest.approx(new, rel=1e-12)
    assert moved > 50


def test_a_share_tolerance_conserves_power_in_fixed_mode() -> None:
    # Hand calculation: a lossless splitter passes its whole input whatever the realised
    # share of one output; the other output takes the rest.
    text = """\
layout: split
format: 1
sources: {src: {power: 1 kW}}
elements:
  sp: {kind: splitter, outputs: {a: {fraction: [0.3, 0.7]}, b: {}}}
scanners: {sa: {power: 300 W}, sb: {power: 500 W}}
beamlines: ["src -> sp", "sp.a -> sa", "sp.b -> sb"]
tolerances:
  items:
    - {element: sp, property: fraction, port: a, spread: 5%}
"""
    doc = parse_yaml(text, "split.yaml")
    layout = parse_layout(doc)
    network = build_network(layout)
    plan = plan_network(network)
    model = build_model(parse_tolerances(doc, in_layout=True), layout, network, plan)
    cols = model.factors(uniforms("random", model.dimensions, 0, 1000, seed=2))
    factors = fixed_paths(network, plan, model).factors(cols)
    total = factors[:, 0] * 300 + factors[:, 1] * 500
    assert total == pytest.approx(plan.source_used_w, rel=1e-12)
    assert factors[:, 0].std() > 0.01  # the share does move
