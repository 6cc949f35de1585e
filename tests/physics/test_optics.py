"""Tests for beamplan.physics.optics: optical constants and thick-mirror Fresnel reflectivity."""

from __future__ import annotations

import cmath
import itertools
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import periodictable
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from periodictable import xsf

from beamplan.physics import optics
from beamplan.physics.optics import (
    fresnel_amplitudes,
    mirror_reflectivity,
    optical_constants,
    optical_constants_spectrum,
    s_fraction,
    s_polarisation,
)

EUV_M = 13.5e-9
EUV_ANGSTROM = 135.0
REPO = Path(__file__).resolve().parents[2]
PROPERTY = settings(max_examples=60, deadline=None, database=None, derandomize=True)


def pt_index(formula: str, density: float | None = None) -> complex:
    """periodictable's own index at 13.5 nm (its convention: 1 − δ − iβ; λ in Å)."""
    n = xsf.index_of_refraction(formula, density=density, wavelength=EUV_ANGSTROM)  # type: ignore[no-untyped-call]
    return complex(n)


# --- optical constants ------------------------------------------------------------------------


@pytest.mark.parametrize("element", ["Ru", "Mo", "Si"])
def test_optical_constants_match_periodictable_index_of_refraction(element: str) -> None:
    # Henke tables via periodictable: its index is 1 − δ − iβ (λ in Å), so δ + iβ = 1 − n_pt.
    n_pt = pt_index(element)
    c = optical_constants(element, None, EUV_M)
    assert c.real == pytest.approx(1.0 - n_pt.real, rel=1e-12)
    assert c.imag == pytest.approx(-n_pt.imag, rel=1e-12)
    assert c.imag > 0  # our convention: β > 0 absorbs


def test_mo_against_henke_tables() -> None:
    # Henke, Gullikson, Davis, At. Data Nucl. Data Tables 54 (1993) 181 (values in the shared
    # README): Mo at 13.5 nm, n ≈ 0.9238 + 0.00644i.
    c = optical_constants("Mo", None, EUV_M)
    assert c.real == pytest.approx(1 - 0.9238, rel=0.02)
    assert c.imag == pytest.approx(0.00644, rel=0.05)


def test_si_against_henke_tables() -> None:
    # Henke, Gullikson, Davis, At. Data Nucl. Data Tables 54 (1993) 181 (values in the shared
    # README): Si at 13.5 nm, n ≈ 0.99888 + 0.00183i; δ only to 15% because 13.5 nm (91.8 eV)
    # is just below the Si L edge (99.8 eV), where f1 changes fast. periodictable gives
    # δ = 0.00100, 11% below the tabulated reference 0.00112: it interpolates f1 linearly
    # between table rows 91.54 eV (f1 = 0.307) and 93.02 eV (f1 = 0.0016).
    c = optical_constants("Si", None, EUV_M)
    assert c.real == pytest.approx(1 - 0.99888, rel=0.15)
    assert c.imag == pytest.approx(0.00183, rel=0.05)


def test_ru_reference_values() -> None:
    # Henke tables via periodictable (shared README): Ru δ ≈ 0.114 (2%), β ≈ 0.0171 (5%).
    c = optical_constants("Ru", None, EUV_M)
    assert c.real == pytest.approx(0.114, rel=0.02)
    assert c.imag == pytest.approx(0.0171, rel=0.05)


def test_density_scales_optical_constants_linearly() -> None:
    # δ, β ∝ atom density (Henke et al. 1993 formula); 10.22 g/cm³ is periodictable's Mo density.
    full = optical_constants("Mo", 10.22, EUV_M)
    half = optical_constants("Mo", 5.11, EUV_M)
    assert half.real == pytest.approx(full.real / 2, rel=1e-12)
    assert half.imag == pytest.approx(full.imag / 2, rel=1e-12)
    assert optical_constants("Mo", None, EUV_M) == pytest.approx(full, rel=1e-12)


def test_compound_default_density_and_explicit_density() -> None:
    # SiO2 has no periodictable density; the module default is 2.2 g/cm³ (fused silica,
    # common practice, no source). Henke tables via periodictable for the reference.
    n_pt = pt_index("SiO2", density=2.2)
    assert optical_constants("SiO2", None, EUV_M) == pytest.approx(1 - n_pt, rel=1e-12)
    with pytest.raises(ValueError, match="density"):
        optical_constants("H2O", None, EUV_M)
    assert optical_constants("H2O", 1.0, EUV_M).imag > 0


def test_optical_constants_are_cached() -> None:
    optics._optical_constants_cached.cache_clear()
    first = optical_constants("Ru", None, 13.4e-9)
    hits = optics._optical_constants_cached.cache_info().hits
    assert optical_constants("Ru", None, 13.4e-9) == first
    assert optics._optical_constants_cached.cache_info().hits == hits + 1


def test_spectrum_matches_scalar_lookups() -> None:
    lam = np.linspace(12.5e-9, 14.5e-9, 7)
    spectrum = optical_constants_spectrum("Mo", None, lam)
    assert spectrum.shape == lam.shape
    for value, wavelength in zip(spectrum, lam, strict=True):
        assert complex(value) == pytest.approx(optical_constants("Mo", None, float(wavelength)))


@pytest.mark.parametrize(
    ("formula", "density", "wavelength", "message"),
    [
        ("Xx", None, EUV_M, "unknown chemical formula"),
        ("molybdenum", None, EUV_M, "unknown chemical formula"),
        ("", None, EUV_M, "non-empty"),
        ("Mo", None, 1e-6, "outside the Henke tables"),  # 1.24 eV, below the 10 eV table start
        ("Mo", None, 1e-12, "outside the Henke tables"),  # 1.24 MeV, above 30 keV
        ("Mo", -1.0, EUV_M, "density_g_cm3"),
        ("Mo", None, -1.0, "wavelength_m"),
        ("Mo", None, math.nan, "wavelength_m"),
    ],
)
def test_optical_constants_reject_bad_input(
    formula: str, density: float | None, wavelength: float, message: str
) -> None:
    with pytest.raises(ValueError, match=message):
        optical_constants(formula, density, wavelength)


def test_import_is_lazy() -> None:
    # Start-up time matters (shared README): importing the module must not load periodictable.
    code = "import sys, beamplan.physics.optics; print('periodictable' in sys.modules)"
    out = subprocess.run(
        [sys.executable, "-c", code], cwd=REPO, capture_output=True, text=True, check=True
    )
    assert out.stdout.strip() == "False"


# --- Fresnel reflection -----------------------------------------------------------------------


@pytest.mark.parametrize("element", ["Ru", "Mo", "Si", "Au"])
@pytest.mark.parametrize("roughness_m", [0.0, 0.5e-9, 2e-9])
def test_s_reflectivity_matches_periodictable_mirror_reflectivity(
    element: str, roughness_m: float
) -> None:
    # periodictable.xsf.mirror_reflectivity: s-polarised |r|² of a thick mirror, angle in
    # degrees (grazing), roughness in Å, wavelength in Å, same Névot–Croce factor. Its index
    # is the complex conjugate of ours, so its k_z1 is conj(ours) and |r|² is the same.
    angles_deg = np.linspace(1.0, 20.0, 39)
    reference = xsf.mirror_reflectivity(  # type: ignore[no-untyped-call]
        element, wavelength=EUV_ANGSTROM, angle=angles_deg, roughness=roughness_m * 1e10
    )[:, 0]
    ours = [
        mirror_reflectivity(
            element, math.radians(a), EUV_M, roughness_m=roughness_m, polarisation=1.0
        ).reflectivity
        for a in angles_deg
    ]
    np.testing.assert_allclose(ours, reference, rtol=0, atol=1e-6)


@PROPERTY
@given(
    delta=st.floats(-0.05, 0.5),
    beta=st.floats(0.0, 0.5),
    wavelength_nm=st.floats(1.0, 100.0),
)
def test_abeles_identity_at_45_degrees(delta: float, beta: float, wavelength_nm: float) -> None:
    # Abelès identity (shared README; F. Abelès 1950): at 45°, R_p = R_s² exactly.
    r_s, r_p = fresnel_amplitudes(1 - delta + 1j * beta, math.pi / 4, wavelength_nm * 1e-9)
    assert abs(r_p) ** 2 == pytest.approx(abs(r_s) ** 4, abs=1e-9)


def test_total_external_reflection_below_critical_angle() -> None:
    # Weakly absorbing case (common practice, no source): δ = 1e-3, β = 1e-8, θc = √(2δ).
    db = 1e-3 + 1e-8j
    theta_c = math.sqrt(2 * db.real)
    below = [
        mirror_reflectivity("x", f * theta_c, EUV_M, delta_beta=db).reflectivity
        for f in (0.1, 0.3, 0.5, 0.8)
    ]
    assert min(below) > 0.999
    above = [
        mirror_reflectivity("x", f * theta_c, EUV_M, delta_beta=db).reflectivity
        for f in (1.05, 1.2, 1.5, 2.0, 3.0)
    ]
    assert all(a > b for a, b in itertools.pairwise(above))
    assert above[-1] < 0.01
    m = mirror_reflectivity("x", theta_c, EUV_M, delta_beta=db)
    assert m.critical_angle_rad == pytest.approx(theta_c)


def test_normal_incidence_closed_form_and_p_sign() -> None:
    # Fresnel at normal incidence (Born & Wolf §1.5.3): r_s = (1 − n)/(1 + n); this r_p
    # convention gives r_p = −r_s there.
    n = 1 - 0.0762 + 0.00644j
    r_s, r_p = fresnel_amplitudes(n, math.pi / 2, EUV_M)
    assert r_s == pytest.approx((1 - n) / (1 + n), rel=1e-12)
    assert r_p == pytest.approx(-r_s, rel=1e-12)


def test_roughness_factor_is_nevot_croce() -> None:
    # Névot & Croce, Rev. Phys. Appl. 15 (1980) 761: r → r exp(−2 k_z0 k_z1 σ²).
    n, theta, sigma = 1 - 0.114 + 0.0171j, math.radians(12), 1e-9
    k = 2 * math.pi / EUV_M
    kz0, kz1 = k * math.sin(theta), k * cmath.sqrt(n * n - math.cos(theta) ** 2)
    smooth = fresnel_amplitudes(n, theta, EUV_M)
    rough = fresnel_amplitudes(n, theta, EUV_M, roughness_m=sigma)
    factor = cmath.exp(-2 * kz0 * kz1 * sigma**2)
    assert rough[0] == pytest.approx(smooth[0] * factor, rel=1e-12)
    assert rough[1] == pytest.approx(smooth[1] * factor, rel=1e-12)


@PROPERTY
@given(
    delta=st.floats(-0.05, 0.5),
    beta=st.floats(1e-9, 0.5),
    grazing=st.floats(1e-3, math.pi / 2),
    sigma_nm=st.floats(0.0, 3.0),
)
def test_reflectivity_is_physical(
    delta: float, beta: float, grazing: float, sigma_nm: float
) -> None:
    # Energy conservation for a passive mirror (common practice): 0 ≤ R ≤ 1; R_p ≤ R_s since
    # r_p = r_s (r_s − cos 2θ_i)/(1 − r_s cos 2θ_i) (Abelès) maps the unit disc into itself;
    # |exp(−2 k_z0 k_z1 σ²)| ≤ 1 because Re k_z1 ≥ 0, so roughness never raises R.
    n = 1 - delta + 1j * beta
    r_s, r_p = fresnel_amplitudes(n, grazing, EUV_M)
    q_s, q_p = fresnel_amplitudes(n, grazing, EUV_M, roughness_m=sigma_nm * 1e-9)
    assert 0 <= abs(r_p) ** 2 <= abs(r_s) ** 2 + 1e-12 <= 1 + 1e-12
    assert abs(q_s) <= abs(r_s) + 1e-12
    assert abs(q_p) <= abs(r_p) + 1e-12


def test_polarisation_mixing_and_override() -> None:
    theta = math.radians(8)
    table = mirror_reflectivity("Ru", theta, EUV_M)
    s = mirror_reflectivity("Ru", theta, EUV_M, polarisation=1.0)
    p = mirror_reflectivity("Ru", theta, EUV_M, polarisation=-1.0)
    assert s.reflectivity == pytest.approx(s.reflectivity_s)
    assert p.reflectivity == pytest.approx(p.reflectivity_p)
    assert table.reflectivity == pytest.approx(0.5 * (s.reflectivity + p.reflectivity))
    mixed = mirror_reflectivity("Ru", theta, EUV_M, polarisation=0.5)
    assert mixed.reflectivity == pytest.approx(0.75 * s.reflectivity + 0.25 * p.reflectivity)
    override = mirror_reflectivity("Ru", theta, EUV_M, delta_beta=complex(table.delta, table.beta))
    assert override.reflectivity == pytest.approx(table.reflectivity, rel=1e-12)
    assert "caller-supplied" in override.method
    assert "Henke" in table.method and "Névot" in table.method


@pytest.mark.parametrize(
    "kwargs",
    [
        {"grazing_rad": 0.0},
        {"grazing_rad": -0.1},
        {"grazing_rad": 2.0},
        {"roughness_m": -1e-9},
        {"wavelength_m": 0.0},
        {"polarisation": 1.5},
    ],
)
def test_mirror_reflectivity_rejects_bad_input(kwargs: dict[str, float]) -> None:
    args: dict[str, float] = {"grazing_rad": 0.1, "wavelength_m": EUV_M} | kwargs
    polarisation = args.pop("polarisation", 0.0)
    roughness = args.pop("roughness_m", 0.0)
    with pytest.raises(ValueError):
        mirror_reflectivity("Ru", roughness_m=roughness, polarisation=polarisation, **args)


def test_grazing_ru_mirror_is_efficient() -> None:
    # From memory: grazing Ru mirrors reflect > 80% at a few degrees at 13.5 nm (why EUV
    # grazing collectors and beamline mirrors use Ru); constants from Henke via periodictable.
    assert mirror_reflectivity("Ru", math.radians(5), EUV_M).reflectivity > 0.8
    assert periodictable.Ru.density == pytest.approx(12.41)  # periodictable's own density


# --- polarisation geometry --------------------------------------------------------------------


def test_s_fraction_geometry() -> None:
    # Malus's law (common practice): polarised part sin² α along s, unpolarised half each.
    assert s_fraction(1.0, 0.0, 0.0) == pytest.approx(0.0)  # E in the plane of incidence: p
    assert s_fraction(1.0, 0.0, math.pi / 2) == pytest.approx(1.0)  # E normal to it: s
    assert s_fraction(0.0, 0.3, 1.1) == pytest.approx(0.5)  # unpolarised
    assert s_fraction(1.0, math.radians(30), 0.0) == pytest.approx(0.25)
    assert s_polarisation(1.0, 0.0, math.pi / 2) == pytest.approx(1.0)
    assert s_polarisation(0.6, 0.0, 0.0) == pytest.approx(-0.6)
    with pytest.raises(ValueError):
        s_fraction(1.2, 0.0, 0.0)


@PROPERTY
@given(st.floats(0, 1), st.floats(-10, 10), st.floats(-10, 10))
def test_s_polarisation_feeds_mirror_reflectivity(degree: float, psi: float, phi: float) -> None:
    f_s = s_fraction(degree, psi, phi)
    assert 0.0 <= f_s <= 1.0
    p = s_polarisation(degree, psi, phi)
    m = mirror_reflectivity("Mo", 0.2, EUV_M, polarisation=max(-1.0, min(1.0, p)))
    assert m.reflectivity == pytest.approx(f_s * m.reflectivity_s + (1 - f_s) * m.reflectivity_p)
