"""Tests for beamplan.physics.gas: Beer–Lambert transmission of gas-filled drifts."""

from __future__ import annotations

import math

import periodictable
import pytest
import scipy.constants as sc
from hypothesis import given, settings
from hypothesis import strategies as st

from beamplan.physics import gas
from beamplan.physics.gas import (
    AIR_MOLAR_FRACTIONS,
    gas_transmission,
    photoabsorption_cross_section,
)
from beamplan.physics.optics import optical_constants

EUV_M = 13.5e-9
PROPERTY = settings(max_examples=50, deadline=None, database=None, derandomize=True)
GASES = ["H2", "He", "N2", "O2", "Ar", "Ne", "Kr", "Xe", "air", "H2O", "CO2"]


def test_constants_are_codata() -> None:
    # CODATA via scipy.constants: k_B and h, c, e exact (SI 2019), r_e CODATA 2022.
    r_e = sc.physical_constants["classical electron radius"][0]
    assert sc.k == gas.BOLTZMANN_J_K
    assert r_e == pytest.approx(gas.CLASSICAL_ELECTRON_RADIUS_M, rel=1e-9)
    assert pytest.approx(sc.h * sc.c / sc.e, rel=1e-15) == gas._HC_EV_M
    assert pytest.approx(1239.84198, abs=1e-5) == gas._HC_EV_M * 1e9  # shared README check


def test_nitrogen_against_hand_calculation() -> None:
    # Hand calculation from the Henke f2 table of N as shipped with periodictable (n.nff):
    #   E = hc/λ = 1239.84198 eV·nm / 13.5 nm = 91.8401 eV, between the rows
    #   (91.5395 eV, f2 = 1.60031) and (93.0201 eV, f2 = 1.57190).
    #   log-log interpolation: t = ln(91.8401/91.5395)/ln(93.0201/91.5395) = 0.20436,
    #   f2 = exp(ln 1.60031 + t ln(1.57190/1.60031)) = 1.59446.
    #   σ(N2) = 2 atoms × 2 r_e λ f2 = 4 × 2.8179403e-15 m × 13.5e-9 m × 1.59446 = 2.42627e-22 m².
    #   n = p/(k_B T) = 10 Pa / (1.380649e-23 J/K × 293.15 K) = 2.47074e21 m⁻³.
    #   T = exp(−n σ L) with L = 1 m: exp(−0.599469) = 0.54910.
    e_ev = 1239.84198 / 13.5
    t = math.log(e_ev / 91.5395) / math.log(93.0201 / 91.5395)
    f2 = math.exp(math.log(1.60031) + t * math.log(1.57190 / 1.60031))
    assert f2 == pytest.approx(1.59446, abs=1e-5)
    sigma = 2 * 2 * 2.8179403205e-15 * 13.5e-9 * f2
    n = 10.0 / (1.380649e-23 * 293.15)
    result = gas_transmission("N2", 10.0, 293.15, 1.0, EUV_M)
    assert result.cross_section_m2 == pytest.approx(sigma, rel=1e-6)
    assert result.cross_section_m2 == pytest.approx(2.42627e-22, rel=1e-5)
    assert result.number_density_m3 == pytest.approx(n, rel=1e-12)
    assert result.transmission == pytest.approx(math.exp(-n * sigma), rel=1e-6)
    assert result.transmission == pytest.approx(0.54910, abs=1e-5)
    # periodictable's own f2 for N at that energy (Henke tables via periodictable).
    _, f2_pt = periodictable.N.xray.scattering_factors(energy=e_ev * 1e-3)  # type: ignore[no-untyped-call]
    assert f2 == pytest.approx(float(f2_pt), rel=1e-6)


@PROPERTY
@given(
    gas_name=st.sampled_from(GASES),
    pressure=st.floats(1e-3, 1e3),
    length=st.floats(1e-3, 10.0),
)
def test_transmission_is_exponential_in_length_and_pressure(
    gas_name: str, pressure: float, length: float
) -> None:
    # Beer–Lambert law: T(2L) = T(L)² and T(2p) = T(p)² for an ideal gas.
    one = gas_transmission(gas_name, pressure, 293.15, length, EUV_M).transmission
    twice_long = gas_transmission(gas_name, pressure, 293.15, 2 * length, EUV_M).transmission
    twice_dense = gas_transmission(gas_name, 2 * pressure, 293.15, length, EUV_M).transmission
    assert twice_long == pytest.approx(one**2, rel=1e-12, abs=1e-300)
    assert twice_dense == pytest.approx(one**2, rel=1e-12, abs=1e-300)
    assert 0.0 <= one <= 1.0


def test_hotter_gas_transmits_more_at_fixed_pressure() -> None:
    # Ideal gas (common practice): n ∝ 1/T at fixed p, so ln T halves when T doubles.
    cold = gas_transmission("Ar", 5.0, 300.0, 1.0, EUV_M).transmission
    hot = gas_transmission("Ar", 5.0, 600.0, 1.0, EUV_M).transmission
    assert math.log(hot) == pytest.approx(0.5 * math.log(cold), rel=1e-12)


@pytest.mark.parametrize("gas_name", GASES)
def test_vacuum_like_pressure_transmits_everything(gas_name: str) -> None:
    # Common practice: a beamline at 1e-6 Pa is lossless over metres.
    result = gas_transmission(gas_name, 1e-6, 293.15, 10.0, EUV_M)
    assert result.transmission > 0.99999
    assert gas_transmission(gas_name, 0.0, 293.15, 10.0, EUV_M).transmission == 1.0
    assert result.cross_section_m2 > 0
    assert "Beer–Lambert" in result.method and "Henke" in result.method


def test_air_is_the_documented_mixture() -> None:
    # Dry air molar fractions (U.S. Standard Atmosphere 1976, rounded; CO2 ≈ 400 ppm):
    # common practice, no source beyond that.
    assert sum(AIR_MOLAR_FRACTIONS.values()) == pytest.approx(1.0, abs=1e-12)
    expected = sum(
        x * photoabsorption_cross_section(f, EUV_M) for f, x in AIR_MOLAR_FRACTIONS.items()
    )
    assert photoabsorption_cross_section("air", EUV_M) == pytest.approx(expected, rel=1e-12)
    assert photoabsorption_cross_section("Air", EUV_M) == photoabsorption_cross_section(
        "AIR", EUV_M
    )


def test_cross_section_agrees_with_optical_constants() -> None:
    # Optical theorem (Henke et al. 1993): absorption coefficient μ = N σ = 4πβ/λ. β from
    # periodictable's index_of_refraction at the gas density that matches n molecules per m³.
    n = 1e25  # molecules per m³
    for formula, molar_mass in (("N2", 2 * 14.007), ("Ar", 39.95), ("CO2", 44.009)):
        mass_g = periodictable.formula(formula).mass  # g/mol, periodictable's own masses
        assert mass_g == pytest.approx(molar_mass, rel=1e-3)
        density_g_cm3 = n * mass_g / sc.N_A * 1e-6
        beta = optical_constants(formula, density_g_cm3, EUV_M).imag
        sigma = photoabsorption_cross_section(formula, EUV_M)
        assert n * sigma == pytest.approx(4 * math.pi * beta / EUV_M, rel=1e-6)


def test_heavier_noble_gases_absorb_more_at_euv() -> None:
    # Henke tables via periodictable; from memory, Xe (4d resonance near 100 eV) is the
    # strongest absorber of these at 13.5 nm and He among the weakest.
    sigma = {g: photoabsorption_cross_section(g, EUV_M) for g in ("He", "Ne", "Ar", "Kr", "Xe")}
    assert max(sigma, key=sigma.__getitem__) == "Xe"
    assert sigma["He"] < sigma["Ne"]
    assert photoabsorption_cross_section("H2", EUV_M) < sigma["He"]


def test_attenuation_length() -> None:
    result = gas_transmission("H2", 10.0, 300.0, 1.0, EUV_M)
    assert result.transmission == pytest.approx(math.exp(-1.0 / result.attenuation_length_m))
    assert gas_transmission("H2", 0.0, 300.0, 1.0, EUV_M).attenuation_length_m == math.inf


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (("N2", 10.0, 293.15, -1.0, EUV_M), "length_m"),
        (("N2", -10.0, 293.15, 1.0, EUV_M), "pressure_pa"),
        (("N2", 10.0, 0.0, 1.0, EUV_M), "temperature_k"),
        (("N2", 10.0, 293.15, 1.0, 0.0), "wavelength_m"),
        (("N2", math.nan, 293.15, 1.0, EUV_M), "pressure_pa"),
        (("nitrogen", 10.0, 293.15, 1.0, EUV_M), "unknown gas"),
        (("Xx2", 10.0, 293.15, 1.0, EUV_M), "unknown gas"),
        (("", 10.0, 293.15, 1.0, EUV_M), "gas must be"),
        (("N2", 10.0, 293.15, 1.0, 1e-5), "no Henke f2"),  # 0.12 eV, below the tables
    ],
)
def test_gas_transmission_rejects_bad_input(
    args: tuple[str, float, float, float, float], message: str
) -> None:
    with pytest.raises(ValueError, match=message):
        gas_transmission(*args)
