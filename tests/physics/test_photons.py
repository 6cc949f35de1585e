"""Tests for beamplan.physics.photons: photon energy, dose in photons, shot noise."""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import pytest
import scipy.constants as sc

from beamplan.physics import photons
from beamplan.physics.photons import (
    ev_to_j,
    j_m2_to_mj_cm2,
    j_to_ev,
    mj_cm2_to_j_m2,
    nm_to_m,
    photon_energy_ev,
    photon_energy_j,
    photon_flux_per_watt,
    photons_per_area_m2,
)
from beamplan.physics.shot_noise import (
    absorbed_fraction,
    absorbed_photons,
    relative_shot_noise,
    stochastic_dose_floor_j_m2,
)

EUV_M = 13.5e-9
REPO_ROOT = Path(__file__).resolve().parents[2]


def test_constants_match_scipy_codata() -> None:
    # scipy.constants (CODATA): h, c and e are exact SI values, so equality is exact.
    assert sc.h == photons.PLANCK_J_S
    assert sc.c == photons.SPEED_OF_LIGHT_M_S
    assert sc.e == photons.ELEMENTARY_CHARGE_C


def test_hc_in_ev_nm() -> None:
    # hc = 1239.84198 eV nm: shared/README.md cross-check, scipy.constants (CODATA).
    hc_ev_nm = photon_energy_ev(1e-9)
    assert hc_ev_nm == pytest.approx(1239.84198, abs=1e-5)
    assert hc_ev_nm == pytest.approx(sc.h * sc.c / sc.e * 1e9, rel=1e-14)


def test_photon_energy_at_13_5_nm() -> None:
    # 91.84 eV at 13.5 nm: shared/README.md; hand calculation 1239.84198 / 13.5 = 91.8401.
    assert photon_energy_ev(EUV_M) == pytest.approx(91.84, abs=5e-3)
    assert photon_energy_ev(EUV_M) == pytest.approx(1239.84198 / 13.5, rel=1e-8)
    assert photon_energy_j(EUV_M) == pytest.approx(91.8401 * sc.e, rel=1e-6)


def test_ratio_193_to_13_5() -> None:
    # About 14 (common practice); hand calculation 193 / 13.5 = 14.296.
    ratio = photon_energy_ev(EUV_M) / photon_energy_ev(193e-9)
    assert ratio == pytest.approx(14.3, abs=0.01)
    assert ratio == pytest.approx(193 / 13.5, rel=1e-12)


def test_one_mj_cm2_in_photons_per_nm2() -> None:
    # 1 mJ/cm² at 13.5 nm is 0.6796 photons/nm²: shared/README.md. Hand calculation:
    # 10 J/m² / 1.47144e-17 J = 6.7961e17 per m² = 0.67961 per nm².
    per_nm2 = photons_per_area_m2(mj_cm2_to_j_m2(1.0), EUV_M) * 1e-18
    assert per_nm2 == pytest.approx(0.6796, abs=5e-5)


def test_photon_flux_per_watt() -> None:
    # Hand calculation: 1 W / 1.47144e-17 J = 6.7961e16 photons/s.
    assert photon_flux_per_watt(EUV_M) == pytest.approx(6.7961e16, rel=1e-4)
    assert photon_flux_per_watt(EUV_M) * photon_energy_j(EUV_M) == pytest.approx(1.0)


def test_converters() -> None:
    # 1 mJ/cm² = 1e-3 J / 1e-4 m² = 10 J/m² (common practice, no source).
    assert mj_cm2_to_j_m2(30.0) == 300.0
    assert j_m2_to_mj_cm2(mj_cm2_to_j_m2(42.5)) == pytest.approx(42.5)
    assert nm_to_m(13.5) == pytest.approx(13.5e-9)
    # scipy.constants (CODATA): 1 eV = e J.
    assert ev_to_j(1.0) == sc.e
    assert j_to_ev(ev_to_j(91.84)) == pytest.approx(91.84)


def test_absorbed_fraction_beer_lambert() -> None:
    # Beer–Lambert, shared/README.md: α = 5 µm⁻¹, t = 40 nm gives 0.181 (1e-3).
    # Hand calculation: 1 − exp(−0.2) = 0.181269.
    assert absorbed_fraction(5e6, 40e-9) == pytest.approx(0.181, abs=1e-3)
    assert absorbed_fraction(5e6, 40e-9) == pytest.approx(1 - math.exp(-0.2), rel=1e-12)
    assert absorbed_fraction(5e6, 0.0) == 0.0
    assert absorbed_fraction(1e12, 1.0) == 1.0


def test_relative_shot_noise_poisson() -> None:
    # Poisson: σ/N = 1/√N (common practice, no source); 1/√100 = 0.1.
    assert relative_shot_noise(100.0) == pytest.approx(0.1)
    assert relative_shot_noise(1.0) == 1.0
    with pytest.raises(ValueError, match="photon_count"):
        relative_shot_noise(0.0)


def test_absorbed_photons_hand_calculation() -> None:
    # Hand calculation: 30 mJ/cm² = 300 J/m² → 300 × 6.7961e16 = 2.03883e19 per m²;
    # × (10 nm)² = 1e-16 m² → 2038.83; × 0.181269 → 369.58 photons.
    f = absorbed_fraction(5e6, 40e-9)
    assert absorbed_photons(300.0, EUV_M, 1e-16, f) == pytest.approx(369.58, rel=1e-4)


def test_stochastic_dose_floor() -> None:
    # Hand calculation: σ_rel = 5 % needs N = 1/0.05² = 400 absorbed photons;
    # D = 400 × 1.47144e-17 J / (1e-16 m² × 0.181269) = 324.70 J/m² = 32.470 mJ/cm².
    f = absorbed_fraction(5e6, 40e-9)
    floor = stochastic_dose_floor_j_m2(EUV_M, 1e-16, f, 0.05)
    assert floor == pytest.approx(324.70, rel=1e-4)
    # At the floor, the noise equals the budget exactly (Poisson, by construction).
    noise = relative_shot_noise(absorbed_photons(floor, EUV_M, 1e-16, f))
    assert noise == pytest.approx(0.05, rel=1e-12)
    # Halving the budget quadruples the floor (D ∝ 1/σ²).
    half = stochastic_dose_floor_j_m2(EUV_M, 1e-16, f, 0.025)
    assert half == pytest.approx(4 * floor, rel=1e-12)


@pytest.mark.parametrize(
    ("call", "match"),
    [
        (lambda: photon_energy_j(0.0), "wavelength_m"),
        (lambda: photon_energy_j(-13.5e-9), "wavelength_m"),
        (lambda: photon_energy_j(math.nan), "wavelength_m"),
        (lambda: photons_per_area_m2(-1.0, EUV_M), "dose_j_m2"),
        (lambda: absorbed_fraction(-1.0, 40e-9), "absorption_coefficient"),
        (lambda: absorbed_photons(300.0, EUV_M, 1e-16, 1.5), "fraction_absorbed"),
        (lambda: stochastic_dose_floor_j_m2(EUV_M, 1e-16, 0.18, 0.0), "noise_budget"),
        (lambda: stochastic_dose_floor_j_m2(EUV_M, 0.0, 0.18, 0.05), "critical_area"),
    ],
)
def test_invalid_inputs_raise(call: object, match: str) -> None:
    assert callable(call)
    with pytest.raises(ValueError, match=match):
        call()


def test_physics_imports_stay_light() -> None:
    # Start-up matters (shared/README.md): the physics modules must not pull in
    # numpy or scipy, whose import costs 0.1-0.4 s here.
    code = (
        "import sys\n"
        "import beamplan.physics.photons, beamplan.physics.demand\n"
        "import beamplan.physics.undulator, beamplan.physics.source\n"
        "print(sorted(m for m in ('numpy', 'scipy') if m in sys.modules))\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code],
        cwd=REPO_ROOT,
        env={"PYTHONPATH": str(REPO_ROOT)},
        capture_output=True,
        text=True,
        check=True,
    )
    assert out.stdout.strip() == "[]"
