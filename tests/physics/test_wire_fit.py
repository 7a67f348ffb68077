"""Robust catenary fit to wire points: a known curve, noise and outliers, must come back."""
import math

import numpy as np
import pytest

from routesag.physics.catenary import catenary_z, low_point_x, midspan_sag
from routesag.physics.wire_fit import FitSettings, coverage, fit_catenary, section_tension

SPAN_M, DZ_M, C_M, Z_A = 320.0, 12.0, 1150.0, 140.0


def surveyed_points(rng, n=400, noise_m=0.05, outlier_share=0.10, along=None):
    """Points on the known catenary, normal noise and a share of gross outliers (birds, branches, other wires)."""
    along = rng.uniform(3.0, SPAN_M - 3.0, n) if along is None else along
    z = Z_A + catenary_z(along, SPAN_M, DZ_M, C_M) + rng.normal(0.0, noise_m, along.size)
    bad = rng.random(along.size) < outlier_share
    z[bad] += rng.choice([-1.0, 1.0], bad.sum()) * rng.uniform(0.5, 4.0, bad.sum())
    return along, z, bad


def true_low_point_m():
    x_low = np.clip(low_point_x(SPAN_M, DZ_M, C_M), 0.0, SPAN_M)
    return Z_A + catenary_z(x_low, SPAN_M, DZ_M, C_M)


@pytest.mark.parametrize("attachments, start_error_m", [("fixed", 0.0), ("free", 0.4)])
@pytest.mark.parametrize("seed", [1, 2, 3])
def test_known_catenary_with_noise_and_outliers_comes_back(attachments, start_error_m, seed):
    rng = np.random.default_rng(seed)
    along, z, bad = surveyed_points(rng)
    fit = fit_catenary(along, z, SPAN_M, Z_A + start_error_m, Z_A + DZ_M - start_error_m,
                       FitSettings(attachments=attachments))
    assert fit.quality == "good", fit.reason
    # issue 12 acceptance: H within 1 %, low point within 5 cm (H = c w, so c within 1 % is H within 1 %)
    assert fit.catenary_m == pytest.approx(C_M, rel=0.01)
    assert fit.low_point_m == pytest.approx(true_low_point_m(), abs=0.05)
    assert fit.sag_m == pytest.approx(midspan_sag(SPAN_M, DZ_M, C_M), abs=0.05)
    # most planted outliers are rejected, few good points are
    assert fit.n_outliers >= 0.8 * bad.sum()
    assert (~fit.used & ~bad).sum() <= 0.02 * along.size
    assert fit.rms_m == pytest.approx(0.05, rel=0.25)


def test_free_attachments_recover_the_clamp_heights():
    rng = np.random.default_rng(7)
    along, z, _ = surveyed_points(rng)
    fit = fit_catenary(along, z, SPAN_M, Z_A - 0.5, Z_A + DZ_M + 0.5, FitSettings(attachments="free"))
    assert fit.z_a_m == pytest.approx(Z_A, abs=0.05)
    assert fit.z_b_m == pytest.approx(Z_A + DZ_M, abs=0.05)


def test_fixed_attachments_with_a_wrong_clamp_height_bias_the_fit():
    """Why free is the default: a clamp height 0.5 m off moves c by more than the 1 % allowed."""
    rng = np.random.default_rng(8)
    along, z, _ = surveyed_points(rng, outlier_share=0.0)
    fit = fit_catenary(along, z, SPAN_M, Z_A + 0.5, Z_A + DZ_M + 0.5, FitSettings(attachments="fixed"))
    assert abs(fit.catenary_m / C_M - 1.0) > 0.01


def test_points_on_one_half_only_are_weak():
    rng = np.random.default_rng(4)
    along, z, _ = surveyed_points(rng, along=rng.uniform(5.0, 0.45 * SPAN_M, 200))
    fit = fit_catenary(along, z, SPAN_M, Z_A, Z_A + DZ_M)
    assert fit.quality == "weak"
    assert "one-sided" in fit.reason
    assert not fit.both_halves


def test_too_few_points_fail():
    rng = np.random.default_rng(5)
    along, z, _ = surveyed_points(rng, n=6, outlier_share=0.0)
    fit = fit_catenary(along, z, SPAN_M, Z_A, Z_A + DZ_M)
    assert fit.quality == "failed" and "too few points" in fit.reason
    assert math.isnan(fit.catenary_m)


def test_high_rms_is_weak():
    rng = np.random.default_rng(6)
    along, z, _ = surveyed_points(rng, noise_m=0.3, outlier_share=0.0)
    fit = fit_catenary(along, z, SPAN_M, Z_A, Z_A + DZ_M, FitSettings(outlier_m=2.0))
    assert fit.quality == "weak" and "rms" in fit.reason


def test_coverage_of_a_gap():
    # points every metre on 0..100 except a 40 m gap: 40 - 2 x 2 m cover radius = 36 m uncovered
    along = np.concatenate([np.arange(0.0, 30.0), np.arange(70.0, 101.0)])
    whole, first, second = coverage(along, 100.0, radius_m=2.0)
    assert whole == pytest.approx(1.0 - 0.36, abs=0.01)
    assert first == pytest.approx(1.0 - 0.18 / 0.5, abs=0.02)
    assert second == pytest.approx(1.0 - 0.18 / 0.5, abs=0.02)


def test_section_tension_weights_by_uncertainty():
    estimate, spread = section_tension([20_000.0, 21_000.0], [100.0, 200.0])
    # inverse-variance mean: (20000/1e4 + 21000/4e4) / (1/1e4 + 1/4e4) = 20200 (weighted average, Taylor ch. 7)
    assert estimate == pytest.approx(20_200.0)
    assert spread == pytest.approx(100.0 * 1000.0 / 20_200.0)
    assert all(math.isnan(v) for v in section_tension([], []))
