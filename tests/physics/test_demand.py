"""Tests for beamplan.physics.demand: the scanner throughput model."""

from __future__ import annotations

import dataclasses
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from beamplan.physics.demand import (
    DemandError,
    ScannerTool,
    effective_dose,
    required_if_power,
    stage_limit_if_power_w,
    stage_limited_wph,
    throughput_at_power,
    time_per_wafer_s,
)
from beamplan.physics.photons import mj_cm2_to_j_m2
from beamplan.physics.shot_noise import absorbed_fraction, stochastic_dose_floor_j_m2

# The hand-worked tool: every value spelled out, so the test does not lean on defaults.
HAND_TOOL = ScannerTool(
    field_width_m=0.026,
    field_length_m=0.033,
    fields_per_wafer=96,
    slit_height_m=0.002,
    wafer_overhead_s=9.0,
    field_overhead_s=0.05,
    stage_max_speed_m_s=0.8,
    mirror_reflections=10,
    mirror_reflectivity=0.70,
    mask_reflectivity=0.65,
    pellicle_transmission=0.88,
    other_losses_factor=1.0,
    dose_control_margin=0.10,
)


def test_transmission_hand_calculation() -> None:
    # Hand calculation: 0.7^10 = 0.0282475249; × 0.65 = 0.018360891185;
    # × 0.88² = 0.7744 → 0.014218674133664 (pellicle crossed twice).
    assert HAND_TOOL.transmission_if_to_wafer() == pytest.approx(0.014218674133664, rel=1e-12)


def test_required_if_power_hand_worked_example() -> None:
    # Hand calculation below (common practice model, shared/README.md):
    # dose 30 mJ/cm² = 300 J/m²; target 150 wph → budget 3600 / 150 = 24 s per wafer.
    # per field: (24 − 9) / 96 = 0.15625 s; less the 0.05 s field overhead → 0.10625 s scan.
    # scan length 33 + 2 = 35 mm → v = 0.035 / 0.10625 = 28/85 = 0.329411764705882 m/s
    # (below the 0.8 m/s stage limit, so the power sets it).
    # P_wafer = D L v = 300 × 0.026 × 28/85 = 1092/425 = 2.569411764705882 W.
    # P_IF = P_wafer / ((1 − 0.1) × 0.014218674133664) = 200.785385046913 W.
    result = required_if_power(HAND_TOOL, mj_cm2_to_j_m2(30.0), 150.0)
    assert result.time_per_wafer_s == pytest.approx(24.0, rel=1e-9)
    assert result.scan_time_per_field_s == pytest.approx(0.10625, rel=1e-9)
    assert result.scan_speed_m_s == pytest.approx(28 / 85, rel=1e-9)
    assert result.wafer_power_w == pytest.approx(1092 / 425, rel=1e-9)
    assert result.if_power_w == pytest.approx(200.785385046913, rel=1e-9)
    assert result.limit == "power"
    # Stage limit: 9 + 96 × (0.05 + 0.035 / 0.8) = 9 + 96 × 0.09375 = 18 s → 200 wph.
    assert result.stage_limited_wph == pytest.approx(200.0, rel=1e-9)


def test_throughput_at_power_hand_worked_example() -> None:
    # Hand calculation: the inverse of the example above. 200.785385046913 W at IF gives
    # 2.569411764705882 W at the wafer, v = 2.5694 / (300 × 0.026) = 28/85 m/s,
    # time per wafer 9 + 96 × (0.05 + 0.035 × 85/28) = 24 s → 150 wph.
    result = throughput_at_power(HAND_TOOL, 300.0, 200.785385046913)
    assert result.wafers_per_hour == pytest.approx(150.0, rel=1e-9)
    assert result.time_per_wafer_s == pytest.approx(24.0, rel=1e-9)
    assert result.limit == "power"
    # Stage takes over at P_wafer = 300 × 0.026 × 0.8 = 6.24 W → 6.24 / (0.9 × T) W at IF.
    assert result.stage_limit_if_power_w == pytest.approx(
        6.24 / (0.9 * 0.014218674133664), rel=1e-9
    )


def test_time_per_wafer_formula() -> None:
    # Hand calculation: 9 + 96 × (0.05 + 0.035 / 0.5) = 9 + 96 × 0.12 = 20.52 s.
    assert time_per_wafer_s(HAND_TOOL, 0.5) == pytest.approx(20.52, rel=1e-12)


def test_stage_limit_error_fires_past_the_stage_limit() -> None:
    # Hand calculation above: the stage-limited throughput is 200 wph.
    with pytest.raises(DemandError, match=r"beyond the stage limit.*200\.00 wph") as info:
        required_if_power(HAND_TOOL, 300.0, 200.001)
    assert info.value.stage_limited_wph == pytest.approx(200.0, rel=1e-12)
    assert info.value.requested_wph == 200.001
    assert isinstance(info.value, ValueError)
    # Exactly on the limit it is reachable, and the stage sets it.
    on_limit = required_if_power(HAND_TOOL, 300.0, stage_limited_wph(HAND_TOOL))
    assert on_limit.limit == "stage"
    assert on_limit.scan_speed_m_s == 0.8
    assert on_limit.if_power_w == pytest.approx(stage_limit_if_power_w(HAND_TOOL, 300.0))


def test_more_power_buys_nothing_above_the_stage_limit() -> None:
    # Common practice: above the stage limit throughput is flat.
    knee_w = stage_limit_if_power_w(HAND_TOOL, 300.0)
    at_knee = throughput_at_power(HAND_TOOL, 300.0, knee_w)
    doubled = throughput_at_power(HAND_TOOL, 300.0, 2 * knee_w)
    huge = throughput_at_power(HAND_TOOL, 300.0, 1e6)
    assert at_knee.limit == doubled.limit == huge.limit == "stage"
    assert doubled.wafers_per_hour == huge.wafers_per_hour == at_knee.wafers_per_hour
    assert huge.wafers_per_hour == pytest.approx(stage_limited_wph(HAND_TOOL), rel=1e-12)
    below = throughput_at_power(HAND_TOOL, 300.0, 0.99 * knee_w)
    assert below.limit == "power"
    assert below.wafers_per_hour < at_knee.wafers_per_hour


def test_zero_power_gives_zero_throughput() -> None:
    result = throughput_at_power(HAND_TOOL, 300.0, 0.0)
    assert result.wafers_per_hour == 0.0
    assert result.limit == "power"


def test_margin_scales_need_by_one_over_one_minus_margin() -> None:
    # Documented choice: need ∝ 1 / (1 − m); hand calculation 0.9 / 0.7 between m = 0.1, 0.3.
    tight = dataclasses.replace(HAND_TOOL, dose_control_margin=0.3)
    ratio = (
        required_if_power(tight, 300.0, 150.0).if_power_w
        / required_if_power(HAND_TOOL, 300.0, 150.0).if_power_w
    )
    assert ratio == pytest.approx(0.9 / 0.7, rel=1e-12)


tools = st.builds(
    ScannerTool,
    fields_per_wafer=st.integers(1, 200),
    slit_height_m=st.floats(0.5e-3, 10e-3),
    wafer_overhead_s=st.floats(0.0, 30.0),
    field_overhead_s=st.floats(0.0, 0.2),
    stage_max_speed_m_s=st.floats(0.1, 2.0),
    mirror_reflections=st.integers(0, 14),
    mirror_reflectivity=st.floats(0.5, 0.75),
    pellicle_transmission=st.floats(0.5, 1.0),
    dose_control_margin=st.floats(0.0, 0.5),
)
doses = st.floats(50.0, 1000.0)  # 5-100 mJ/cm²
fractions = st.floats(0.01, 0.999)


@settings(max_examples=200, deadline=None)
@given(tool=tools, dose=doses, fraction=fractions)
def test_need_and_throughput_are_inverse(tool: ScannerTool, dose: float, fraction: float) -> None:
    # Property (common practice model): below the stage limit the two are inverses.
    wph = fraction * stage_limited_wph(tool)
    need = required_if_power(tool, dose, wph)
    back = throughput_at_power(tool, dose, need.if_power_w)
    assert back.limit == "power"
    assert back.wafers_per_hour == pytest.approx(wph, rel=1e-9)
    assert back.scan_speed_m_s == pytest.approx(need.scan_speed_m_s, rel=1e-9)
    power = fraction * stage_limit_if_power_w(tool, dose)
    again = required_if_power(tool, dose, throughput_at_power(tool, dose, power).wafers_per_hour)
    assert again.if_power_w == pytest.approx(power, rel=1e-9)


@settings(max_examples=200, deadline=None)
@given(tool=tools, d1=doses, d2=doses, f1=fractions, f2=fractions)
def test_need_is_monotonic_in_dose_and_throughput(
    tool: ScannerTool, d1: float, d2: float, f1: float, f2: float
) -> None:
    # Property: need ∝ dose at fixed wph, and rises with the wph target.
    (d_lo, d_hi), (f_lo, f_hi) = sorted((d1, d2)), sorted((f1, f2))
    wph_lo, wph_hi = f_lo * stage_limited_wph(tool), f_hi * stage_limited_wph(tool)
    assert required_if_power(tool, d_lo, wph_lo).if_power_w <= (
        required_if_power(tool, d_hi, wph_lo).if_power_w
    )
    assert required_if_power(tool, d_lo, wph_lo).if_power_w <= (
        required_if_power(tool, d_lo, wph_hi).if_power_w
    )
    if d_lo < d_hi:
        ratio = (
            required_if_power(tool, d_hi, wph_lo).if_power_w
            / required_if_power(tool, d_lo, wph_lo).if_power_w
        )
        assert ratio == pytest.approx(d_hi / d_lo, rel=1e-9)


@settings(max_examples=100, deadline=None)
@given(tool=tools, dose=doses, f1=st.floats(0.0, 3.0), f2=st.floats(0.0, 3.0))
def test_throughput_is_monotonic_in_power(
    tool: ScannerTool, dose: float, f1: float, f2: float
) -> None:
    # Property: more power never lowers throughput; it saturates at the stage limit.
    knee_w = stage_limit_if_power_w(tool, dose)
    lo, hi = sorted((f1 * knee_w, f2 * knee_w))
    wph_lo = throughput_at_power(tool, dose, lo).wafers_per_hour
    wph_hi = throughput_at_power(tool, dose, hi).wafers_per_hour
    assert wph_lo <= wph_hi <= stage_limited_wph(tool) * (1 + 1e-12)


def test_effective_dose_reports_which_sets_it() -> None:
    # Hand calculation (see test_photons): 5 % noise over (10 nm)², f = 0.181 → 324.70 J/m².
    floor = stochastic_dose_floor_j_m2(13.5e-9, 1e-16, absorbed_fraction(5e6, 40e-9), 0.05)
    assert effective_dose(300.0, floor) == (floor, "stochastic floor")
    assert effective_dose(600.0, floor) == (600.0, "recipe")
    assert effective_dose(300.0, 300.0) == (300.0, "recipe")  # documented tie rule
    with pytest.raises(ValueError, match="stochastic_floor_j_m2"):
        effective_dose(300.0, -1.0)


@pytest.mark.parametrize(
    "changes",
    [
        {"field_width_m": 0.0},
        {"fields_per_wafer": 0},
        {"fields_per_wafer": 9.5},
        {"wafer_overhead_s": -1.0},
        {"mirror_reflectivity": 1.2},
        {"pellicle_transmission": 0.0},
        {"dose_control_margin": 1.0},
        {"stage_max_speed_m_s": float("inf")},
    ],
)
def test_invalid_tool_rejected(changes: dict[str, Any]) -> None:
    with pytest.raises(ValueError, match=next(iter(changes))):
        dataclasses.replace(HAND_TOOL, **changes)


def test_invalid_requests_rejected() -> None:
    with pytest.raises(ValueError, match="dose_j_m2"):
        required_if_power(HAND_TOOL, 0.0, 100.0)
    with pytest.raises(ValueError, match="wafers_per_hour"):
        required_if_power(HAND_TOOL, 300.0, -5.0)
    with pytest.raises(ValueError, match="if_power_w"):
        throughput_at_power(HAND_TOOL, 300.0, -1.0)


def test_useful_ceiling_hand_calculation() -> None:
    # Hand calculation (throughput model of shared/README.md): at the stage limit
    # v = 0.8 m/s, P_wafer = D L v = 300 J/m² × 0.026 m × 0.8 m/s = 6.24 W;
    # P_IF = 6.24 / ((1 − 0.1) × 0.014218674133664) = 6.24 / 0.0127968067202976
    # = 487.6216 W. Above it the stage sets the throughput.
    from beamplan.physics.demand import useful_ceiling_w

    ceiling = useful_ceiling_w(HAND_TOOL, 300.0)
    assert ceiling == pytest.approx(487.6216494, rel=1e-8)
    # More power than the ceiling buys nothing; less buys less (hand calculation above).
    at = throughput_at_power(HAND_TOOL, 300.0, ceiling).wafers_per_hour
    assert throughput_at_power(HAND_TOOL, 300.0, 2 * ceiling).wafers_per_hour == \
        pytest.approx(at, rel=1e-12)
    assert throughput_at_power(HAND_TOOL, 300.0, 0.99 * ceiling).wafers_per_hour < at
    # The ceiling scales with the dose: twice the dose, twice the power.
    assert useful_ceiling_w(HAND_TOOL, 600.0) == pytest.approx(2 * ceiling, rel=1e-12)
