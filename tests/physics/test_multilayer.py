"""Tests for beamplan.physics.multilayer: Parratt recursion and periodic Mo/Si mirrors."""

from __future__ import annotations

import cmath
import itertools
import math
import time

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from beamplan.physics.multilayer import (
    MOSI_INTERLAYERS,
    Interlayers,
    bragg_period,
    multilayer_peak,
    multilayer_reflectivity,
    parratt_amplitudes,
)
from beamplan.physics.optics import fresnel_amplitudes, optical_constants

EUV_M = 13.5e-9
PROPERTY = settings(max_examples=25, deadline=None, database=None, derandomize=True)


def index(formula: str, wavelength_m: float = EUV_M, density: float | None = None) -> complex:
    c = optical_constants(formula, density, wavelength_m)
    return 1.0 - c.real + 1j * c.imag


def cos_in(n: complex, sin0: float) -> complex:
    """cos θ_j in a medium from Snell's law n_j sin θ_j = sin θ_0, with Im(n cos θ) ≥ 0."""
    c = cmath.sqrt(1.0 - (sin0 / n) ** 2)
    return -c if (n * c).imag < 0 else c


def airy(n1: complex, d: float, n2: complex, theta: float, lam: float) -> tuple[complex, complex]:
    """Closed-form Airy reflection of a film n1 (thickness d) on a substrate n2, from vacuum.

    Born & Wolf, Principles of Optics, §1.6.4 (eq. 58): r = (r01 + r12 e^{2iφ}) /
    (1 + r01 r12 e^{2iφ}), φ = (2π/λ) n1 d cos θ1, Fresnel r_ij in terms of n and cos θ.
    """
    s0 = math.sin(theta)
    n = [1.0 + 0j, n1, n2]
    c = [complex(math.cos(theta)), cos_in(n1, s0), cos_in(n2, s0)]

    def r_s(i: int, j: int) -> complex:
        return (n[i] * c[i] - n[j] * c[j]) / (n[i] * c[i] + n[j] * c[j])

    def r_p(i: int, j: int) -> complex:
        return (n[j] * c[i] - n[i] * c[j]) / (n[j] * c[i] + n[i] * c[j])

    e = cmath.exp(2j * (2 * math.pi / lam) * n1 * d * c[1])
    return tuple(  # type: ignore[return-value]
        (r(0, 1) + r(1, 2) * e) / (1 + r(0, 1) * r(1, 2) * e) for r in (r_s, r_p)
    )


def characteristic_matrix(
    layers: list[tuple[complex, float]], n_sub: complex, theta: float, lam: float
) -> tuple[complex, complex]:
    """Reflection of a stack by the characteristic-matrix method (Born & Wolf §1.6.2-1.6.3).

    TE uses p_j = n_j cos θ_j, TM uses q_j = cos θ_j / n_j; independent of Parratt.
    """
    s0 = math.sin(theta)
    out = []
    for tm in (False, True):
        m = np.eye(2, dtype=complex)
        for n, d in layers:
            c = cos_in(n, s0)
            p = c / n if tm else n * c
            b = 2 * math.pi / lam * n * d * c
            m = m @ np.array(
                [[cmath.cos(b), -1j / p * cmath.sin(b)], [-1j * p * cmath.sin(b), cmath.cos(b)]]
            )
        c1, cl = math.cos(theta), cos_in(n_sub, s0)
        p1, pl = (c1, cl / n_sub) if tm else (c1, n_sub * cl)
        a, b_ = (m[0, 0] + m[0, 1] * pl) * p1, m[1, 0] + m[1, 1] * pl
        out.append(complex((a - b_) / (a + b_)))
    return out[0], out[1]


# --- Parratt recursion ------------------------------------------------------------------------


@pytest.mark.parametrize("theta_deg", [0.0, 30.0, 70.0, 85.0, 88.0])
def test_zero_thickness_layer_is_bare_substrate(theta_deg: float) -> None:
    # Exact identity (common practice): a film of zero thickness changes nothing; compared with
    # the thick-mirror Fresnel formulas (grazing angle = 90° − incidence).
    theta = math.radians(theta_deg)
    n_film, n_sub = index("Mo"), index("Si")
    film = parratt_amplitudes([n_film], [0.0], n_sub, theta, EUV_M)
    bare = parratt_amplitudes([], [], n_sub, theta, EUV_M)
    fresnel = fresnel_amplitudes(n_sub, math.pi / 2 - theta, EUV_M)
    for a, b, c in zip(film, bare, fresnel, strict=True):
        assert complex(a) == pytest.approx(c, rel=1e-9, abs=1e-12)
        assert complex(b) == pytest.approx(c, rel=1e-12, abs=1e-14)


def test_bare_substrate_roughness_matches_fresnel() -> None:
    # Névot & Croce, Rev. Phys. Appl. 15 (1980) 761, same factor in both modules.
    theta, sigma = math.radians(80.0), 1.5e-9
    r = parratt_amplitudes([], [], index("Ru"), theta, EUV_M, roughness_m=sigma)
    f = fresnel_amplitudes(index("Ru"), math.pi / 2 - theta, EUV_M, roughness_m=sigma)
    assert complex(r[0]) == pytest.approx(f[0], rel=1e-12)
    assert complex(r[1]) == pytest.approx(f[1], rel=1e-12)


@pytest.mark.parametrize(("theta_deg", "d_nm"), [(0.0, 3.0), (10.0, 7.7), (45.0, 20.0), (80, 2.0)])
def test_single_film_matches_airy_formula(theta_deg: float, d_nm: float) -> None:
    # Airy formula for a film on a substrate (Born & Wolf §1.6.4); Ru film on Si, Henke
    # constants via periodictable.
    theta = math.radians(theta_deg)
    n1, n2 = index("Ru"), index("Si")
    got = parratt_amplitudes([n1], [d_nm * 1e-9], n2, theta, EUV_M)
    want = airy(n1, d_nm * 1e-9, n2, theta, EUV_M)
    assert complex(got[0]) == pytest.approx(want[0], rel=1e-9)
    assert complex(got[1]) == pytest.approx(want[1], rel=1e-9)


@pytest.mark.parametrize("theta_deg", [0.0, 15.0, 40.0])
def test_mosi_stack_matches_characteristic_matrix(theta_deg: float) -> None:
    # Transfer-matrix method (Born & Wolf §1.6), equivalent to Parratt (shared README).
    theta = math.radians(theta_deg)
    layers = [(index("Ru"), 2.0e-9)] + [(index("Si"), 4.14e-9), (index("Mo"), 2.76e-9)] * 20
    n_sub = index("SiO2")
    got = parratt_amplitudes([n for n, _ in layers], [d for _, d in layers], n_sub, theta, EUV_M)
    want = characteristic_matrix(layers, n_sub, theta, EUV_M)
    assert complex(got[0]) == pytest.approx(want[0], rel=1e-8)
    assert complex(got[1]) == pytest.approx(want[1], rel=1e-8)


def test_parratt_broadcasts_over_wavelengths_and_angles() -> None:
    lam = np.linspace(13e-9, 14e-9, 5)
    theta = np.linspace(0.0, 0.3, 5)
    layers, d = [1 - 0.07 + 0.006j, 1 - 0.001 + 0.0018j] * 5, [2.8e-9, 4.1e-9] * 5
    r_s, r_p = parratt_amplitudes(layers, d, 1 - 0.02 + 0.01j, theta, lam, roughness_m=0.3e-9)
    assert r_s.shape == r_p.shape == (5,)
    for i in range(5):
        one = parratt_amplitudes(layers, d, 1 - 0.02 + 0.01j, theta[i], lam[i], roughness_m=0.3e-9)
        assert complex(one[0]) == pytest.approx(complex(r_s[i]), rel=1e-12)
        assert complex(one[1]) == pytest.approx(complex(r_p[i]), rel=1e-12)


def test_parratt_rejects_bad_input() -> None:
    with pytest.raises(ValueError, match="same length"):
        parratt_amplitudes([1.0], [], 1.5, 0.0, EUV_M)
    with pytest.raises(ValueError, match="roughness_m"):
        parratt_amplitudes([1.0], [1e-9], 1.5, 0.0, EUV_M, roughness_m=[0.0])
    with pytest.raises(ValueError, match=">= 0"):
        parratt_amplitudes([1.0], [-1e-9], 1.5, 0.0, EUV_M)
    with pytest.raises(ValueError, match="incidence_rad"):
        parratt_amplitudes([1.0], [1e-9], 1.5, math.pi / 2, EUV_M)


# --- periodic Mo/Si multilayer ----------------------------------------------------------------


@pytest.mark.parametrize("bilayers", [40, 50, 60])
def test_mosi_peak_in_published_theoretical_range(bilayers: int) -> None:
    # Ideal Mo/Si, d = 6.9 nm, Γ = 0.4, normal incidence: theory about 0.72–0.75 (Montcalm et
    # al., via the shared README); the brief allows 0.70–0.76. Peak near 13.5 nm.
    peak = multilayer_peak(("Mo", "Si"), 6.9e-9, 0.4, bilayers)
    assert 0.70 <= peak.peak_reflectivity <= 0.76
    assert 13.3e-9 <= peak.peak_wavelength_m <= 13.7e-9
    # FWHM of a 40–60 bilayer Mo/Si mirror is about 0.5–0.6 nm (from memory).
    assert 0.4e-9 < peak.fwhm_m < 0.8e-9
    point = multilayer_reflectivity(
        ("Mo", "Si"), 6.9e-9, 0.4, bilayers, wavelength_m=peak.peak_wavelength_m
    )
    assert point.reflectivity == pytest.approx(peak.peak_reflectivity, abs=2e-4)
    # Normal incidence: r_p = −r_s with this p convention (Fresnel, Born & Wolf §1.5).
    assert point.r_p == pytest.approx(-point.r_s, rel=1e-9)


def test_peak_scan_is_fast() -> None:
    # The brief: well under 0.5 s per scan (numpy-vectorised over the scan points).
    multilayer_peak()  # loads the tables once
    start = time.perf_counter()
    multilayer_peak(bilayers=60, roughness_m=0.2e-9)
    assert time.perf_counter() - start < 0.5


def test_roughness_lowers_the_peak() -> None:
    # Névot & Croce (1980): interface roughness scatters light out of the specular beam.
    peaks = [multilayer_peak(roughness_m=s * 1e-9).peak_reflectivity for s in (0, 0.2, 0.4, 0.6)]
    assert all(a > b for a, b in itertools.pairwise(peaks))


@PROPERTY
@given(st.floats(0.0, 1.0), st.floats(0.0, 1.0))
def test_roughness_never_raises_reflectivity(a_nm: float, b_nm: float) -> None:
    low, high = sorted((a_nm, b_nm))
    r_low = multilayer_reflectivity(wavelength_m=13.45e-9, roughness_m=low * 1e-9).reflectivity
    r_high = multilayer_reflectivity(wavelength_m=13.45e-9, roughness_m=high * 1e-9).reflectivity
    assert r_high <= r_low + 1e-12


@PROPERTY
@given(st.integers(3, 120), st.integers(1, 40))
def test_more_bilayers_raise_peak_reflectivity(bilayers: int, extra: int) -> None:
    # Common practice: R at the Bragg peak grows with N and saturates when absorption limits
    # the penetration depth (about 40–50 periods for Mo/Si).
    fewer = multilayer_peak(bilayers=bilayers).peak_reflectivity
    more = multilayer_peak(bilayers=bilayers + extra).peak_reflectivity
    assert more >= fewer - 1e-9


def test_reflectivity_saturates_with_bilayers() -> None:
    # Common practice: saturation; beyond ~80 periods the deepest layers see no light.
    r = {n: multilayer_peak(bilayers=n).peak_reflectivity for n in (10, 40, 100, 200)}
    assert r[10] < r[40] < r[100]
    assert r[200] - r[100] < 1e-4


def test_angle_scan_agrees_with_wavelength_scan() -> None:
    # Self-consistency: the angle that peaks at 13.0 nm has its wavelength peak at 13.0 nm.
    angular = multilayer_peak(scan="angle", wavelength_m=13.0e-9)
    assert 0.1 < angular.peak_incidence_rad < 0.5
    assert math.isnan(angular.fwhm_m) and angular.fwhm_rad > 0
    spectral = multilayer_peak(incidence_rad=angular.peak_incidence_rad)
    assert spectral.peak_wavelength_m == pytest.approx(13.0e-9, abs=0.02e-9)


def test_zero_capping_and_densities() -> None:
    base = multilayer_reflectivity()
    assert multilayer_reflectivity(capping=("Ru", 0.0)).reflectivity == pytest.approx(
        base.reflectivity, rel=1e-12
    )
    capped = multilayer_reflectivity(capping=("Ru", 2.0e-9))
    assert capped.reflectivity != pytest.approx(base.reflectivity, rel=1e-6)
    # Denser Mo (periodictable's 10.22 g/cm³ is the default) changes the stack.
    dense = multilayer_reflectivity(densities_g_cm3={"Mo": 10.22})
    assert dense.reflectivity == pytest.approx(base.reflectivity, rel=1e-12)
    assert "Parratt" in base.method and "Henke" in base.method


def test_polarisation_at_oblique_incidence() -> None:
    theta = math.radians(20)
    s = multilayer_reflectivity(incidence_rad=theta, polarisation=1.0)
    p = multilayer_reflectivity(incidence_rad=theta, polarisation=-1.0)
    u = multilayer_reflectivity(incidence_rad=theta)
    assert s.reflectivity == pytest.approx(s.reflectivity_s)
    assert p.reflectivity == pytest.approx(p.reflectivity_p)
    assert u.reflectivity == pytest.approx(0.5 * (s.reflectivity + p.reflectivity))


@pytest.mark.parametrize(
    "kwargs",
    [
        {"gamma": 1.5},
        {"bilayers": 0},
        {"period_m": -1.0},
        {"incidence_rad": 2.0},
        {"polarisation": -2.0},
        {"roughness_m": -1e-9},
        {"capping": ("Ru", -1e-9)},
        {"pair": ("Mo", "Unobtainium")},
    ],
)
def test_multilayer_rejects_bad_input(kwargs: dict[str, object]) -> None:
    with pytest.raises(ValueError):
        multilayer_reflectivity(**kwargs)  # type: ignore[arg-type]


def test_peak_rejects_bad_scan() -> None:
    with pytest.raises(ValueError, match="scan"):
        multilayer_peak(scan="energy")  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="edge"):
        multilayer_peak(span=0.05e-9)  # window too narrow to hold the peak's maximum


# --- realistic stacks: interdiffusion interlayers --------------------------------------------

# The layout's default stack (docs/layout-format.md): Ru 2 nm cap, 0.4 nm roughness, MoSi2
# interlayers 1.0 nm (Mo on Si) and 0.5 nm (Si on Mo).
REALISTIC = {"capping": ("Ru", 2e-9), "roughness_m": 0.4e-9, "interlayers": MOSI_INTERLAYERS}


def test_ideal_stack_keeps_its_theoretical_peak() -> None:
    # The ideal stack (no interlayers, cap or roughness) stays available: 0.737 at 13.49 nm,
    # inside the 0.72–0.75 of theory (Montcalm et al., via the shared README).
    peak = multilayer_peak(interlayers=None)
    assert peak.peak_reflectivity == pytest.approx(0.737, abs=5e-4)
    assert peak.peak_reflectivity == multilayer_peak().peak_reflectivity


def test_realistic_stack_peaks_near_the_best_measured_mosi() -> None:
    # Measured normal-incidence peaks: 0.687 for magnetron-sputtered Mo/Si and 0.698 with
    # diffusion barriers (S. Braun et al., Jpn. J. Appl. Phys. 41 (2002) 4074); about 0.70
    # also in Bajt et al., Opt. Eng. 41 (2002) 1797 (from memory). Band: 0.687 − 0.01 to
    # 0.698 + 0.01; the peak stays near 13.5 nm.
    peak = multilayer_peak(**REALISTIC)  # type: ignore[arg-type]
    assert 0.677 <= peak.peak_reflectivity <= 0.708
    assert 13.4e-9 <= peak.peak_wavelength_m <= 13.55e-9
    # Ten such mirrors pass (R/0.737)^10 of what ideal ones would: well under 1/1.5 (hand
    # calculation: (0.703/0.737)^10 = 0.62).
    assert (peak.peak_reflectivity / 0.737) ** 10 < 1 / 1.5


def test_interlayers_alone_lower_the_peak() -> None:
    # A MoSi2 layer has less optical contrast with Mo and Si than Mo with Si (Henke tables):
    # replacing sharp interfaces by it lowers the peak; thicker interlayers lower it more.
    ideal = multilayer_peak().peak_reflectivity
    thin = multilayer_peak(interlayers=Interlayers(absorber_on_spacer_m=0.5e-9,
                                                   spacer_on_absorber_m=0.25e-9))
    thick = multilayer_peak(interlayers=MOSI_INTERLAYERS)
    assert ideal > thin.peak_reflectivity > thick.peak_reflectivity
    assert "MoSi2 interlayers" in thick.method


@pytest.mark.parametrize("roughness_nm", [0.0, 0.3])
@pytest.mark.parametrize("capping", [None, ("Ru", 2e-9)])
def test_zero_thickness_interlayers_reproduce_the_ideal_stack_exactly(
        roughness_nm: float, capping: tuple[str, float] | None) -> None:
    # Exactly (==): interlayers of zero thickness add no layer at all.
    zero = Interlayers(absorber_on_spacer_m=0.0, spacer_on_absorber_m=0.0)
    for theta, lam in [(0.0, 13.5e-9), (math.radians(12), 13.2e-9)]:
        plain = multilayer_reflectivity(incidence_rad=theta, wavelength_m=lam, capping=capping,
                                        roughness_m=roughness_nm * 1e-9)
        same = multilayer_reflectivity(incidence_rad=theta, wavelength_m=lam, capping=capping,
                                       roughness_m=roughness_nm * 1e-9, interlayers=zero)
        assert (same.r_s, same.r_p) == (plain.r_s, plain.r_p)


def test_interlayer_stack_matches_a_hand_built_parratt_stack() -> None:
    # Hand-built reference: the same four-layer periods written out layer by layer.
    d, g, n = 6.9e-9, 0.4, 20
    t_ms, t_sm = 1.0e-9, 0.5e-9
    mo, si, il = index("Mo"), index("Si"), index("MoSi2", density=6.2)
    layers: list[complex] = []
    thick: list[float] = []
    for i in range(n):
        layers += [si, il, mo]
        thick += [(1 - g) * d - (t_ms + t_sm) / 2, t_sm, g * d - (t_ms + t_sm) / 2]
        if i < n - 1:
            layers.append(il)
            thick.append(t_ms)
    r_s, _ = parratt_amplitudes(layers, thick, index("SiO2", density=2.2), 0.0, EUV_M)
    got = multilayer_reflectivity(bilayers=n, interlayers=MOSI_INTERLAYERS)
    assert got.r_s == pytest.approx(complex(r_s), rel=1e-12)


@PROPERTY
@given(st.floats(0.0, 1.0), st.floats(0.0, 1.0))
def test_roughness_monotonically_lowers_the_interlayer_stack_peak(a_nm: float, b_nm: float) -> None:
    # Névot & Croce (1980): every interface factor exp(−2 k_z,j k_z,j+1 σ²) has modulus < 1
    # near normal incidence; a wider interface never raises the peak.
    low, high = sorted((a_nm, b_nm))
    base = {"capping": ("Ru", 2e-9), "interlayers": MOSI_INTERLAYERS}
    r_low = multilayer_peak(roughness_m=low * 1e-9, points=201, **base)  # type: ignore[arg-type]
    r_high = multilayer_peak(roughness_m=high * 1e-9, points=201, **base)  # type: ignore[arg-type]
    assert r_high.peak_reflectivity <= r_low.peak_reflectivity + 1e-12
    if high - low > 0.05:
        assert r_high.peak_reflectivity < r_low.peak_reflectivity


@pytest.mark.parametrize(
    "kwargs",
    [
        {"absorber_on_spacer_m": -1e-9},
        {"spacer_on_absorber_m": math.inf},
        {"density_g_cm3": 0.0},
        {"material": " "},
    ],
)
def test_interlayers_reject_bad_values(kwargs: dict[str, object]) -> None:
    with pytest.raises(ValueError):
        Interlayers(**kwargs)  # type: ignore[arg-type]


def test_interlayers_thicker_than_a_layer_are_refused() -> None:
    # Γ d = 0.4 × 6.9 nm = 2.76 nm of Mo cannot give up 3 nm (hand calculation).
    with pytest.raises(ValueError, match="more than the thinner layer"):
        multilayer_reflectivity(interlayers=Interlayers(absorber_on_spacer_m=4e-9,
                                                        spacer_on_absorber_m=2e-9))


def test_bragg_period_with_refraction_correction() -> None:
    # Hand formula d = λ / (2 √(n̄² − sin² θ)) with δ from periodictable directly (Henke tables).
    import periodictable.xsf as xsf

    theta, lam = math.radians(10), 13.5e-9
    delta = [1 - xsf.index_of_refraction(f, wavelength=lam * 1e10).real for f in ("Mo", "Si")]
    n_bar = 1 - (0.4 * delta[0] + 0.6 * delta[1])
    expected = lam / (2 * math.sqrt(n_bar**2 - math.sin(theta) ** 2))
    assert bragg_period(incidence_rad=theta, wavelength_m=lam) == pytest.approx(expected, rel=1e-6)
    # Second order: twice the period (Bragg's law).
    assert bragg_period(order=2) == pytest.approx(2 * bragg_period(), rel=1e-12)
    # The exact Parratt peak lies within 1.5 % of the Bragg estimate (the estimate ignores the
    # phase inside absorbing layers; common practice, no source).
    peak = multilayer_peak(period_m=bragg_period(), **REALISTIC)  # type: ignore[arg-type]
    assert peak.peak_wavelength_m == pytest.approx(13.5e-9, rel=0.015)
    with pytest.raises(ValueError, match="order"):
        bragg_period(order=0)
