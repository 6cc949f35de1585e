"""Tests for beamplan.physics.beam against closed forms and scipy.stats."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from beamplan.physics.beam import (
    FWHM_PER_RMS,
    PlaneBeam,
    accepted_fraction,
    clipped_fraction_1d,
    drift,
    footprint_rms_m,
    gaussian_divergence_rad,
    grazing_focal_lengths_m,
    magnify,
    peak_density_w_m2,
    surface_peak_density_w_m2,
    thin_lens,
)

sizes = st.floats(1e-6, 1e-2)
angles = st.floats(1e-7, 1e-3)


def test_fwhm_per_rms() -> None:
    # 2 sqrt(2 ln 2) = 2.35482 (common practice, no source)
    assert pytest.approx(2.354820045, rel=1e-9) == FWHM_PER_RMS


@settings(max_examples=60, deadline=None)
@given(sizes, angles, st.floats(0.0, 500.0))
def test_drift_from_waist_is_gaussian_beam_formula(size: float, div: float, z: float) -> None:
    # w(z) = w0 sqrt(1 + (z/zR)^2) with zR = w0/theta0 (Siegman, Lasers (1986), ch. 17)
    z_r = size / div
    got = drift(PlaneBeam(size, div), z).size_m
    assert got == pytest.approx(size * math.sqrt(1.0 + (z / z_r) ** 2), rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(sizes, angles, st.floats(0.0, 300.0), st.floats(0.0, 300.0))
def test_drifts_compose_and_keep_emittance(size: float, div: float, a: float, b: float) -> None:
    # drift a then b equals drift a + b; emittance is invariant (Liouville; common practice)
    beam = PlaneBeam(size, div)
    one, two = drift(drift(beam, a), b), drift(beam, a + b)
    assert one.size_m == pytest.approx(two.size_m, rel=1e-9)
    assert one.emittance_m_rad == pytest.approx(beam.emittance_m_rad, rel=1e-6)


def test_waist_found_after_focusing() -> None:
    # A collimated beam (no divergence) through a thin lens of f comes to a waist at f
    # (thin-lens formula, common practice): the size after a drift of f is zero.
    focused = thin_lens(PlaneBeam(1e-3, 0.0), 5.0)
    assert focused.waist_distance_m == pytest.approx(5.0, rel=1e-12)
    assert drift(focused, 5.0).size_m == pytest.approx(0.0, abs=1e-12)


def test_thin_lens_imaging_distance() -> None:
    # Point source (size 0) at distance u imaged by f to v with 1/u + 1/v = 1/f (thin-lens
    # equation): after the lens the beam converges to zero size at v.
    u, f = 30.0, 10.0
    at_lens = drift(PlaneBeam(0.0, 1e-4), u)
    image = thin_lens(at_lens, f)
    v = 1.0 / (1.0 / f - 1.0 / u)
    assert image.waist_distance_m == pytest.approx(v, rel=1e-12)
    assert drift(image, v).size_m == pytest.approx(0.0, abs=1e-7 * at_lens.size_m)


def test_expander_keeps_emittance() -> None:
    # An afocal telescope of magnification m: size x m, divergence / m (common practice)
    beam = magnify(PlaneBeam(2e-4, 3e-5), 3.0)
    assert (beam.size_m, beam.divergence_rad) == pytest.approx((6e-4, 1e-5), rel=1e-12)
    assert beam.emittance_m_rad == pytest.approx(6e-9, rel=1e-12)


def test_gaussian_divergence_diffraction_limit() -> None:
    # sigma * sigma' = lambda / (4 pi) for a diffraction-limited (M2 = 1) beam (Siegman 1986)
    s = 30e-6
    one = gaussian_divergence_rad(s, 13.5e-9)
    assert s * one == pytest.approx(13.5e-9 / (4 * math.pi), rel=1e-12)
    assert gaussian_divergence_rad(s, 13.5e-9, 2.0) == pytest.approx(2 * one)


def test_coddington_normal_incidence_limit() -> None:
    # At normal incidence both focal lengths are R/2 (mirror equation, common practice)
    assert grazing_focal_lengths_m(4.0, math.pi / 2) == pytest.approx((2.0, 2.0), rel=1e-12)


def test_footprint_arithmetic() -> None:
    # sigma / sin(theta): 0.2 mm at 2 degrees -> 5.7307 mm (hand calculation)
    assert footprint_rms_m(2e-4, math.radians(2.0)) == pytest.approx(2e-4 / 0.0348994967, rel=1e-9)


@settings(max_examples=80, deadline=None)
@given(st.floats(1e-6, 1e-2), st.floats(0.0, 5e-2), st.floats(-2e-2, 2e-2))
def test_clipped_fraction_matches_scipy_norm(size: float, aperture: float, offset: float) -> None:
    # Mass outside [o - a/2, o + a/2] of N(0, sigma^2), from scipy.stats.norm
    norm = stats.norm(scale=size)
    inside = norm.cdf(offset + aperture / 2) - norm.cdf(offset - aperture / 2)
    assert clipped_fraction_1d(size, aperture, offset) == pytest.approx(1.0 - inside, abs=1e-12)


def test_accepted_fraction_multiplies_planes() -> None:
    # Independent planes of a bivariate normal: kept fractions multiply (common practice);
    # checked against a scipy.stats.multivariate_normal rectangle probability.
    theta = math.radians(3.0)
    st_m, ss_m, length, width = 2e-4, 1.5e-4, 0.008, 3e-4
    half = np.array([length * math.sin(theta) / 2, width / 2])
    mvn = stats.multivariate_normal(mean=[0.0, 0.0], cov=[[st_m**2, 0.0], [0.0, ss_m**2]])
    inside = mvn.cdf(half, lower_limit=-half)
    assert accepted_fraction(st_m, ss_m, theta, length, width) == pytest.approx(inside, abs=1e-6)
    assert accepted_fraction(st_m, ss_m, theta, None, None) == 1.0


def test_peak_density_integrates_to_power() -> None:
    # P / (2 pi sx sy): integrating the Gaussian profile numerically gives back P (common practice)
    p, sx, sy = 500.0, 2e-4, 1e-4
    x = np.linspace(-8 * sx, 8 * sx, 801)
    y = np.linspace(-8 * sy, 8 * sy, 801)
    xx, yy = np.meshgrid(x, y)
    profile = peak_density_w_m2(p, sx, sy) * np.exp(-xx**2 / (2 * sx**2) - yy**2 / (2 * sy**2))
    assert np.trapezoid(np.trapezoid(profile, x, axis=1), y) == pytest.approx(p, rel=1e-6)


def test_surface_density_falls_with_sine() -> None:
    # On the surface the footprint stretches by 1/sin(theta) (common practice)
    normal = peak_density_w_m2(100.0, 1e-4, 1e-4)
    grazing = surface_peak_density_w_m2(100.0, 1e-4, 1e-4, math.radians(1.5))
    assert grazing == pytest.approx(normal * math.sin(math.radians(1.5)), rel=1e-12)


@pytest.mark.parametrize("bad", [
    lambda: PlaneBeam(-1.0, 0.0), lambda: drift(PlaneBeam(1.0, 0.0), -1.0),
    lambda: thin_lens(PlaneBeam(1.0, 0.0), 0.0), lambda: magnify(PlaneBeam(1.0, 0.0), 0.0),
    lambda: footprint_rms_m(1.0, 0.0), lambda: peak_density_w_m2(1.0, 0.0, 1.0),
])
def test_bad_arguments_raise(bad: object) -> None:
    with pytest.raises(ValueError):
        bad()  # type: ignore[operator]
