"""A section re-rated from its fitted wire points predicts the hot sag of the known truth.

Truth: a section strung at an as-built tension other than the design one, surveyed at 15 degC. Its points (3 cm
noise, 5 % outliers) are fitted span by span, the section tension is estimated from the good fits, and the change
of state carries it to 80 degC. The check is against the same change of state from the true tension, so it tests
the fit and the estimate, not the conductor data (which is invented, close to a 26/7 ACSR of about 470 mm2).
"""
import numpy as np
import pytest

from routesag.physics.catenary import catenary_z, midspan_sag
from routesag.physics.loads import bare_weight_n_m
from routesag.physics.state_change import change_of_state, ruling_span
from routesag.physics.wire_fit import fit_catenary, section_tension

MASS_KG_M, AREA_M2, MODULUS_PA, EXPANSION_PER_C = 1.63, 468e-6, 70e9, 19e-6
SPANS_M, DZ_M = np.array([260.0, 340.0, 300.0]), np.array([5.0, -8.0, 3.0])
SURVEY_C, HOT_C, TRUE_H_N = 15.0, 80.0, 24_000.0


def test_hot_sag_from_the_fitted_section_is_within_2_percent_of_truth():
    rng = np.random.default_rng(12)
    w = float(bare_weight_n_m(MASS_KG_M))
    tensions, sigmas = [], []
    for span_m, dz_m in zip(SPANS_M, DZ_M):
        along = rng.uniform(5.0, span_m - 5.0, 250)
        z = 130.0 + catenary_z(along, span_m, dz_m, TRUE_H_N / w) + rng.normal(0.0, 0.03, along.size)
        bad = rng.random(along.size) < 0.05
        z[bad] += rng.uniform(-3.0, 3.0, bad.sum())
        fit = fit_catenary(along, z, span_m, 130.3, 130.0 + dz_m - 0.3)   # clamp heights 0.3 m off: free fit
        assert fit.quality == "good", fit.reason
        tensions.append(fit.horizontal_tension_n(w))
        sigmas.append(fit.catenary_sigma_m * w)
    estimate_n, spread = section_tension(tensions, sigmas)
    assert spread < 2.0  # one tension shared by the spans
    ruling_m = float(ruling_span(SPANS_M))

    def hot_sags(h_survey_n):
        h_hot = change_of_state(ruling_m, h_survey_n, w, SURVEY_C, w, HOT_C, MODULUS_PA, AREA_M2, EXPANSION_PER_C)
        return midspan_sag(SPANS_M, DZ_M, h_hot / w)

    np.testing.assert_allclose(hot_sags(estimate_n), hot_sags(TRUE_H_N), rtol=0.02)
    # and the check can fail: the design tension of 28 kN would be far off
    assert not np.allclose(hot_sags(28_000.0), hot_sags(TRUE_H_N), rtol=0.02)
