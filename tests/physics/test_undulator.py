"""Tests for beamplan.physics.undulator: planar-undulator resonance."""

from __future__ import annotations

import math

import pytest
import scipy.constants as sc
from hypothesis import given, settings
from hypothesis import strategies as st

from beamplan.physics import undulator
from beamplan.physics.resonance import resonance_check
from beamplan.physics.undulator import (
    ResonanceError,
    electron_energy_for_wavelength_ev,
    k_for_wavelength,
    lorentz_gamma,
    peak_field_for_k_t,
    resonant_wavelength_m,
    undulator_k,
)

EUV_M = 13.5e-9
PERIOD_M = 0.028  # 2.8 cm
ENERGY_EV = 1e9  # 1 GeV total energy


def test_electron_mass_matches_scipy_codata() -> None:
    # scipy.constants (CODATA): the installed scipy ships CODATA 2022, as hard-coded;
    # CODATA 2018 (older scipy) differs by 1.4e-9 relative, hence rel=1e-8.
    assert sc.m_e == pytest.approx(undulator.ELECTRON_MASS_KG, rel=1e-8)
    rest_mev = sc.physical_constants["electron mass energy equivalent in MeV"][0]
    assert rest_mev * 1e6 == pytest.approx(undulator.ELECTRON_REST_ENERGY_EV, rel=1e-8)


def test_k_coefficient_0_934_follows_from_exact_form() -> None:
    # X-ray Data Booklet section 2.1: K = 0.934 B[T] λu[cm]; exact K = e B λu / (2π m_e c)
    # from scipy.constants (CODATA) gives 0.93373 per T cm.
    exact = sc.e / (2 * math.pi * sc.m_e * sc.c) / 100
    assert exact == pytest.approx(undulator.K_PER_TESLA_CM, rel=1e-8)
    k_per_tesla_cm = undulator.K_PER_TESLA_CM
    assert k_per_tesla_cm == pytest.approx(0.934, rel=1e-3)
    assert undulator_k(1.2, 0.03) == pytest.approx(0.934 * 1.2 * 3.0, rel=1e-3)


def test_lorentz_gamma() -> None:
    # Hand calculation: 1e9 eV / 510998.95 eV = 1956.951.
    assert lorentz_gamma(ENERGY_EV) == pytest.approx(1956.951, rel=1e-6)
    assert lorentz_gamma(undulator.ELECTRON_REST_ENERGY_EV) == 1.0
    with pytest.raises(ValueError, match="total energy"):
        lorentz_gamma(1e5)


def test_resonance_textbook_form() -> None:
    # X-ray Data Booklet section 2.1: λ = λu / (2γ²) (1 + K²/2). Hand calculation:
    # γ² = 1956.9512² = 3829657.92; K = 2 → 0.028 × 3 / (2 × 3829657.92) = 10.967037 nm.
    assert resonant_wavelength_m(ENERGY_EV, PERIOD_M, 2.0) == pytest.approx(10.967037e-9, rel=1e-6)
    gamma = sc.m_e * sc.c**2 / sc.e
    gamma = ENERGY_EV / gamma
    textbook = PERIOD_M / (2 * gamma**2) * (1 + 2.0**2 / 2)
    assert resonant_wavelength_m(ENERGY_EV, PERIOD_M, 2.0) == pytest.approx(textbook, rel=1e-8)


def test_harmonics() -> None:
    # Textbook (X-ray Data Booklet 2.1): λ_n = λ_1 / n on axis, odd n only.
    first = resonant_wavelength_m(ENERGY_EV, PERIOD_M, 2.0)
    assert resonant_wavelength_m(ENERGY_EV, PERIOD_M, 2.0, harmonic=3) == pytest.approx(first / 3)
    with pytest.raises(ValueError, match="even harmonic"):
        resonant_wavelength_m(ENERGY_EV, PERIOD_M, 2.0, harmonic=2)
    with pytest.raises(ValueError, match="harmonic"):
        resonant_wavelength_m(ENERGY_EV, PERIOD_M, 2.0, harmonic=0)


def test_worked_example_1_gev_2_8_cm_13_5_nm() -> None:
    # Hand calculation below (resonance condition, X-ray Data Booklet 2.1):
    # γ = 1956.9512, γ² = 3829657.92;  2γ²λ/λu = 2 × 3829657.92 × 13.5e-9 / 0.028 = 3.692884
    # K² = 2 × (3.692884 − 1) = 5.385769 → K = 2.320726
    # B = K / (0.93373 × 2.8) = 0.88766 T.
    k = k_for_wavelength(EUV_M, ENERGY_EV, PERIOD_M)
    assert k == pytest.approx(2.320726, rel=1e-6)
    field_t = peak_field_for_k_t(k, PERIOD_M)
    assert field_t == pytest.approx(0.88766, rel=1e-5)
    assert resonant_wavelength_m(ENERGY_EV, PERIOD_M, undulator_k(field_t, PERIOD_M)) == (
        pytest.approx(EUV_M, rel=1e-12)
    )
    energy = electron_energy_for_wavelength_ev(EUV_M, PERIOD_M, k)
    assert energy == pytest.approx(ENERGY_EV, rel=1e-12)


def test_unreachable_wavelength_raises() -> None:
    # Hand calculation: at K = 0 the resonance is 0.028 / (2 × 3829657.92) = 3.656 nm,
    # so 1 nm would need K² < 0.
    with pytest.raises(ResonanceError, match=r"unreachable.*3\.656 nm") as info:
        k_for_wavelength(1e-9, ENERGY_EV, PERIOD_M)
    assert isinstance(info.value, ValueError)


@settings(max_examples=200, deadline=None)
@given(
    k=st.floats(0.0, 10.0),
    energy_ev=st.floats(1e8, 2e10),
    period_m=st.floats(5e-3, 0.2),
    harmonic=st.sampled_from([1, 3, 5]),
)
def test_round_trip_k_wavelength_k(
    k: float, energy_ev: float, period_m: float, harmonic: int
) -> None:
    # Property: the inverse functions undo the resonance condition.
    wavelength = resonant_wavelength_m(energy_ev, period_m, k, harmonic)
    k_back = k_for_wavelength(wavelength, energy_ev, period_m, harmonic)
    # K² = 2(x − 1) loses digits when K is small: compare K² against an absolute floor.
    assert k_back**2 == pytest.approx(k**2, rel=1e-9, abs=1e-9)
    e_back = electron_energy_for_wavelength_ev(wavelength, period_m, k, harmonic)
    assert e_back == pytest.approx(energy_ev, rel=1e-12)


@settings(max_examples=100, deadline=None)
@given(field_t=st.floats(0.0, 3.0), period_m=st.floats(5e-3, 0.2))
def test_round_trip_field_k(field_t: float, period_m: float) -> None:
    assert peak_field_for_k_t(undulator_k(field_t, period_m), period_m) == pytest.approx(
        field_t, rel=1e-12, abs=1e-15
    )


def test_resonance_check_fixed_k() -> None:
    # Worked example above: K = 2.320726 hits 13.5 nm.
    ok = resonance_check(EUV_M, ENERGY_EV, PERIOD_M, k=2.32)
    assert ok.reachable
    assert ok.k_required == pytest.approx(2.320726, rel=1e-6)
    assert abs(ok.relative_error) < 1e-3
    assert "reachable" in ok.message
    # Hand calculation: B = 0.5 T → K = 1.307 → λ = 6.78 nm, far off 13.5 nm.
    off = resonance_check(EUV_M, ENERGY_EV, PERIOD_M, peak_field_t=0.5)
    assert not off.reachable
    assert off.resonant_wavelength_m == pytest.approx(6.779e-9, rel=1e-3)
    assert "not reachable" in off.message
    # The tolerance decides: 0.05 % off passes 1e-3 but fails 1e-4.
    assert not resonance_check(EUV_M, ENERGY_EV, PERIOD_M, k=2.32, tolerance=1e-4).reachable


def test_resonance_check_tunable_and_unreachable() -> None:
    # Hand calculation: K_max = 0.93373 × 1.0 × 2.8 = 2.6144 → tunable 3.656-16.15 nm.
    tunable = resonance_check(EUV_M, ENERGY_EV, PERIOD_M, peak_field_t=1.0, tunable=True)
    assert tunable.reachable
    assert tunable.shortest_wavelength_m == pytest.approx(3.656e-9, rel=1e-3)
    assert tunable.resonant_wavelength_m == pytest.approx(16.15e-9, rel=1e-3)
    too_short = resonance_check(1e-9, ENERGY_EV, PERIOD_M, peak_field_t=1.0, tunable=True)
    assert not too_short.reachable
    assert too_short.k_required is None
    assert "no K reaches it" in too_short.message


def test_resonance_check_needs_exactly_one_of_k_and_field() -> None:
    with pytest.raises(ValueError, match="exactly one"):
        resonance_check(EUV_M, ENERGY_EV, PERIOD_M)
    with pytest.raises(ValueError, match="exactly one"):
        resonance_check(EUV_M, ENERGY_EV, PERIOD_M, k=2.0, peak_field_t=1.0)
