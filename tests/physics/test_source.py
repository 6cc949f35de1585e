"""Tests for beamplan.physics.source: wall-plug figures."""

from __future__ import annotations

import pytest

from beamplan.physics.source import (
    beam_power_w,
    chain_efficiency,
    electrical_kw_per_euv_kw,
    electrical_power_w,
    overall_efficiency,
)


def test_overall_efficiency_hand_calculation() -> None:
    # Hand calculation: 10 kW EUV from 20 MW electrical → 1e4 / 2e7 = 5e-4.
    assert overall_efficiency(10e3, 20e6) == pytest.approx(5e-4, rel=1e-12)
    assert overall_efficiency(0.0, 20e6) == 0.0


def test_electrical_kw_per_euv_kw_is_inverse_efficiency() -> None:
    # Hand calculation: 20 MW / 10 kW = 2000 kW electrical per kW EUV.
    assert electrical_kw_per_euv_kw(10e3, 20e6) == pytest.approx(2000.0, rel=1e-12)
    assert electrical_kw_per_euv_kw(10e3, 20e6) * overall_efficiency(10e3, 20e6) == (
        pytest.approx(1.0)
    )


def test_electrical_power_round_trip() -> None:
    # Hand calculation: 10 kW at η = 5e-4 → 20 MW; and back.
    assert electrical_power_w(10e3, 5e-4) == pytest.approx(20e6, rel=1e-12)
    assert overall_efficiency(10e3, electrical_power_w(10e3, 5e-4)) == pytest.approx(5e-4)


def test_chain_efficiency() -> None:
    # Hand calculation: 0.5 × 1e-3 × 0.8 = 4e-4; an empty chain is 1 (common practice).
    assert chain_efficiency([0.5, 1e-3, 0.8]) == pytest.approx(4e-4, rel=1e-12)
    assert chain_efficiency(iter([0.9])) == 0.9
    assert chain_efficiency([]) == 1.0
    with pytest.raises(ValueError, match=r"stage_efficiencies\[1\]"):
        chain_efficiency([0.5, 1.5])


def test_beam_power() -> None:
    # Hand calculation: 1 GeV × 10 mA = 1e9 V × 1e-2 A = 10 MW.
    assert beam_power_w(1e9, 10e-3) == pytest.approx(10e6, rel=1e-12)


def test_invalid_inputs() -> None:
    with pytest.raises(ValueError, match="exceeds electrical power"):
        overall_efficiency(2.0, 1.0)
    with pytest.raises(ValueError, match="electrical_power_w"):
        overall_efficiency(1.0, 0.0)
    with pytest.raises(ValueError, match="delivered_euv_power_w"):
        electrical_kw_per_euv_kw(0.0, 1.0)
    with pytest.raises(ValueError, match="efficiency"):
        electrical_power_w(1.0, 0.0)
    with pytest.raises(ValueError, match="average_current_a"):
        beam_power_w(1e9, -1.0)


def test_electrical_draw_linear_model() -> None:
    from beamplan.physics.source import electrical_draw_w

    # Hand calculation: 2 MW fixed + 500 W/W × 10 kW = 7 MW (the ~7 MW for ~10 kW
    # of common practice, no source); at half output 2 MW + 2.5 MW = 4.5 MW.
    assert electrical_draw_w(10e3, 2e6, 500.0) == pytest.approx(7e6, rel=1e-12)
    assert electrical_draw_w(5e3, 2e6, 500.0) == pytest.approx(4.5e6, rel=1e-12)
    assert electrical_draw_w(0.0, 2e6, 500.0) == 2e6
    with pytest.raises(ValueError):
        electrical_draw_w(-1.0, 2e6, 500.0)
