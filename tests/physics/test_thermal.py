"""Tests for beamplan.physics.thermal: closed form, numerical integration, handbook values."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate

from beamplan.physics.thermal import (
    PV_FACTOR,
    RMS_FACTOR,
    SUBSTRATES,
    Substrate,
    silicon_expansion_per_k,
    substrate,
    thermal_estimate,
    thermal_slope_error_rad,
)

densities = st.floats(0.0, 1e8)  # up to 100 W/mm²
lengths = st.floats(1e-5, 1.0)
names = st.sampled_from(sorted(SUBSTRATES))


def test_required_substrates_exist() -> None:
    # the names other parts of beamplan use (issue 15)
    assert {"silicon", "silicon-cryo", "copper"} <= set(SUBSTRATES)
    for name, sub in SUBSTRATES.items():
        assert sub.name == name
        assert sub.source


def test_handbook_conductivities() -> None:
    # Ho, Powell & Liley, J. Phys. Chem. Ref. Data 1 (1972) 279, recommended values
    # (from memory): Si 1.48 W/(cm K) at 300 K, Cu 4.01 W/(cm K) at 300 K
    assert SUBSTRATES["silicon"].conductivity_w_m_k == pytest.approx(148.0, rel=0.01)
    assert SUBSTRATES["copper"].conductivity_w_m_k == pytest.approx(401.0, rel=0.01)
    # Si at 125 K: log-linear between 8.84 (100 K) and 4.09 W/(cm K) (150 K) of the
    # same table (from memory; hand calculation of the interpolation)
    k125 = math.exp(0.5 * (math.log(884.0) + math.log(409.0)))
    assert SUBSTRATES["silicon-cryo"].conductivity_w_m_k == pytest.approx(k125, rel=0.01)


def test_okada_tokumaru_fit() -> None:
    # Okada & Tokumaru, J. Appl. Phys. 56 (1984) 314, evaluated by hand:
    # T = 300 K: 3.725 (1 - exp(-5.88e-3 * 176)) + 5.548e-4 * 300 = 2.568 (1e-6 /K)
    assert silicon_expansion_per_k(300.0) == pytest.approx(2.568e-6, rel=1e-3)
    # room-temperature silicon expands by about 2.6e-6 /K (common practice, no source)
    assert silicon_expansion_per_k(293.0) == pytest.approx(2.6e-6, rel=0.05)
    # the fit passes zero near 121 K (hand calculation): negative below, positive above
    assert silicon_expansion_per_k(120.0) < 0.0 < silicon_expansion_per_k(122.0)
    with pytest.raises(ValueError, match="120 K to 1500 K"):
        silicon_expansion_per_k(77.0)


def test_silicon_table_follows_the_fit() -> None:
    for name in ("silicon", "silicon-cryo"):
        sub = SUBSTRATES[name]
        assert sub.expansion_per_k == pytest.approx(
            silicon_expansion_per_k(sub.temperature_k), rel=2e-3)
    # cryo silicon sits near the zero of α: 125 K (Tajiri et al., J. Synchrotron Rad.
    # 8 (2001) 1140, and common practice)
    assert SUBSTRATES["silicon-cryo"].temperature_k == pytest.approx(125.0, abs=5.0)


def test_copper_expansion() -> None:
    # Touloukian et al., TPRC Data Series vol. 12 (1975): 16.5e-6 /K near 293 K (from memory)
    assert SUBSTRATES["copper"].expansion_per_k == pytest.approx(16.5e-6, rel=0.03)


def test_distortion_index_ranking() -> None:
    # α/k: silicon ~0.017 µm/W, copper ~0.04 µm/W (R. A. Paquin's tables of mirror
    # materials in the Handbook of Optics, vol. II, from memory); cryogenic silicon two
    # orders lower, the reason it is used under high heat loads (the commentary on
    # Tajiri et al., J. Synchrotron Rad. 8 (2001) 1140: α is zero at 125 K)
    si, cu, cryo = (SUBSTRATES[n].distortion_m_w for n in ("silicon", "copper", "silicon-cryo"))
    assert si == pytest.approx(0.017e-6, rel=0.1)
    assert cu == pytest.approx(0.041e-6, rel=0.1)
    assert cryo < si / 50.0


def test_closed_form_by_hand() -> None:
    # √(2π) α q0 ℓ / k for silicon, 0.05 W/mm² over ℓ = 20 mm (hand calculation):
    # 2.5066283 * 2.568e-6 * 5e4 * 0.02 / 148 = 4.3493e-5 rad
    assert thermal_slope_error_rad(5e4, 0.02, "silicon") == pytest.approx(4.3493e-5, rel=1e-4)
    assert pytest.approx(2.5066283, rel=1e-7) == PV_FACTOR
    assert pytest.approx(0.7236012, rel=1e-6) == RMS_FACTOR  # √(π/6)


@pytest.mark.parametrize("name", sorted(SUBSTRATES))
def test_slope_change_is_the_integral_of_the_curvature(name: str) -> None:
    # integrate κ(x) = α q(x) / k over a Gaussian bump numerically (scipy quad)
    sub, q0, ell = SUBSTRATES[name], 3e4, 0.015

    def curvature(x: float) -> float:
        return sub.expansion_per_k * q0 * math.exp(-x * x / (2 * ell * ell)) / \
            sub.conductivity_w_m_k

    total, _ = integrate.quad(curvature, -np.inf, np.inf)
    assert thermal_slope_error_rad(q0, ell, name) == pytest.approx(abs(total), rel=1e-8)


def test_rms_slope_by_numerical_integration() -> None:
    # slope profile by cumulative trapezoids of κ along ±8ℓ, then its rms about the
    # mean weighted by the Gaussian beam: compares with √(π/6) α q0 ℓ / k
    sub, q0, ell = SUBSTRATES["copper"], 2e4, 0.01
    x = np.linspace(-8 * ell, 8 * ell, 40001)
    weight = np.exp(-x**2 / (2 * ell**2))
    kappa = sub.expansion_per_k * q0 * weight / sub.conductivity_w_m_k
    slope = integrate.cumulative_trapezoid(kappa, x, initial=0.0)
    mean = np.trapezoid(weight * slope, x) / np.trapezoid(weight, x)
    rms = math.sqrt(np.trapezoid(weight * (slope - mean) ** 2, x) / np.trapezoid(weight, x))
    estimate = thermal_estimate(q0, ell, "copper")
    assert estimate.slope_rms_rad == pytest.approx(rms, rel=1e-5)
    assert estimate.slope_change_rad == pytest.approx(slope[-1] - slope[0], rel=1e-6)


def test_estimate_fields() -> None:
    e = thermal_estimate(1e5, 0.01, "silicon")
    # q0 / k = 1e5 / 148 = 675.68 K/m; κ = α q0 / k = 1.7351e-3 /m (hand calculation)
    assert e.gradient_k_m == pytest.approx(675.676, rel=1e-5)
    assert e.curvature_per_m == pytest.approx(1.7351e-3, rel=1e-4)
    assert e.radius_m == pytest.approx(1 / 1.7351e-3, rel=1e-4)
    assert thermal_estimate(0.0, 0.01, "silicon").radius_m == math.inf


@settings(max_examples=60, deadline=None)
@given(densities, densities, lengths, names)
def test_monotone_in_density(q1: float, q2: float, ell: float, name: str) -> None:
    lo, hi = sorted((q1, q2))
    assert thermal_slope_error_rad(lo, ell, name) <= thermal_slope_error_rad(hi, ell, name)


@settings(max_examples=60, deadline=None)
@given(densities, lengths, names, st.floats(0.0, 100.0))
def test_linear_in_density_and_length(q: float, ell: float, name: str, c: float) -> None:
    base = thermal_slope_error_rad(q, ell, name)
    assert thermal_slope_error_rad(c * q, ell, name) == pytest.approx(c * base, rel=1e-9,
                                                                      abs=1e-300)
    assert thermal_slope_error_rad(q, c * ell, name) == pytest.approx(c * base, rel=1e-9,
                                                                      abs=1e-300)
    assert thermal_slope_error_rad(0.0, ell, name) == 0.0


def test_unknown_substrate_names_the_known_ones() -> None:
    with pytest.raises(ValueError, match=r"unknown substrate 'glass'.*copper, silicon"):
        thermal_slope_error_rad(1e4, 0.01, "glass")
    with pytest.raises(ValueError, match="known substrates"):
        substrate("Silicon")


@pytest.mark.parametrize("q, ell", [(-1.0, 0.01), (math.nan, 0.01), (1e4, -0.01),
                                    (1e4, math.inf)])
def test_bad_numbers(q: float, ell: float) -> None:
    with pytest.raises(ValueError):
        thermal_slope_error_rad(q, ell, "silicon")


def test_substrate_validates() -> None:
    with pytest.raises(ValueError, match="conductivity"):
        Substrate("x", 0.0, 1e-6, 300.0, "none")
    with pytest.raises(ValueError, match="expansion"):
        Substrate("x", 1.0, math.nan, 300.0, "none")
