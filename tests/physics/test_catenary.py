"""Catenary geometry of one span: published examples and independent derivations."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from routesag.physics import catenary as cat

G = 9.80665  # standard gravity, kgf -> N (CGPM 1901)


# --- Wadhwa inclined span: low point outside the span (uplift at the lower support) ---
# C.L. Wadhwa, Electrical Power Systems, ch. 15 (sag with supports at different levels):
# S = 250 m, supports 30 m and 70 m high, w = 0.8 kgf/m, T = 1250 kgf (taken as H).
WADHWA_SPAN_M = 250.0
WADHWA_DZ_M = 70.0 - 30.0
WADHWA_W_N_M = 0.8 * G
WADHWA_H_N = 1250.0 * G


def test_wadhwa_parabolic_low_point():
    x1 = cat.parabolic_low_point_x(WADHWA_SPAN_M, WADHWA_DZ_M, WADHWA_H_N, WADHWA_W_N_M)
    assert_allclose(x1, -125.0, rtol=1e-12)  # Wadhwa ch. 15: x1 = -125 m (parabola)


def test_wadhwa_exact_low_point():
    c = cat.catenary_constant(WADHWA_H_N, WADHWA_W_N_M)
    x_m = cat.low_point_x(WADHWA_SPAN_M, WADHWA_DZ_M, c)
    assert_allclose(x_m, -123.68, atol=0.005)  # FIELD.md §7: exact catenary x_m = -123.68 m (derived from Wadhwa data)


def test_wadhwa_uplift_reaction():
    v_a, v_b = cat.vertical_reactions(WADHWA_SPAN_M, WADHWA_DZ_M, WADHWA_H_N, WADHWA_W_N_M)
    assert_allclose(v_a / G, -99.05, atol=0.005)  # FIELD.md §7: V_low = -99.05 kgf, uplift (derived)
    assert v_b > 0


def test_wadhwa_arc_length():
    c = cat.catenary_constant(WADHWA_H_N, WADHWA_W_N_M)
    assert_allclose(cat.arc_length(WADHWA_SPAN_M, WADHWA_DZ_M, c), 253.443, atol=5e-4)  # FIELD.md §7: L = 253.443 m


# --- Level span: Grigsby ch. 14 closed forms (FIELD.md §1) ---

def test_level_span_sag_matches_handbook_form():
    span, c = 300.0, 1200.0
    expected = c * (np.cosh(span / (2 * c)) - 1.0)  # Grigsby ch. 14: D = c (cosh(S/2c) - 1)
    assert_allclose(cat.midspan_sag(span, 0.0, c), expected, rtol=1e-12)
    assert_allclose(cat.max_chord_sag(span, 0.0, c), expected, rtol=1e-9)


def test_level_span_arc_length_and_support_tension():
    span, h_n, w = 400.0, 25000.0, 15.97
    c = h_n / w
    # Grigsby ch. 14: L = 2c sinh(S/2c); T = H + w D at the supports.
    assert_allclose(cat.arc_length(span, 0.0, c), 2 * c * np.sinh(span / (2 * c)), rtol=1e-12)
    t_a, t_b = cat.support_tensions(span, 0.0, h_n, w)
    sag = c * (np.cosh(span / (2 * c)) - 1.0)
    assert_allclose([t_a, t_b], [h_n + w * sag] * 2, rtol=1e-12)


def test_level_low_point_is_midspan():
    assert_allclose(cat.low_point_x(250.0, 0.0, 900.0), 125.0, rtol=1e-14)


# --- Textbook level span with ice and wind (FIELD.md §7) ---

def test_textbook_level_span_sag():
    # FIELD.md §7 (published textbook example): resultant 2.717 kgf/m, tension 4000 kgf (UTS 8000 / 2),
    # span 275 m -> sag 6.42 m (parabola; the book rounds to 6.4 m).
    w, h_n, span = 2.717 * G, 4000.0 * G, 275.0
    assert_allclose(cat.parabolic_sag(span, h_n, w), 6.42, atol=0.005)
    # The exact catenary sits a few mm lower than the parabola at this sag ratio.
    exact = cat.midspan_sag(span, 0.0, h_n / w)
    assert 6.42 < exact < 6.42 * 1.002


# --- Inclined span: definitions checked by brute force (independent of the closed forms) ---

INCLINED = [(250.0, 40.0, 1562.5), (400.0, -60.0, 900.0), (120.0, 5.0, 300.0), (800.0, 150.0, 2500.0)]


@pytest.mark.parametrize("span, dz, c", INCLINED)
def test_curve_passes_through_supports(span, dz, c):
    assert_allclose(cat.catenary_z([0.0, span], span, dz, c), [0.0, dz], atol=1e-9)


@pytest.mark.parametrize("span, dz, c", INCLINED)
def test_low_point_is_where_slope_vanishes(span, dz, c):
    x_m = cat.low_point_x(span, dz, c)
    step = 1e-3
    slope = (cat.catenary_z(x_m + step, span, dz, c) - cat.catenary_z(x_m - step, span, dz, c)) / (2 * step)
    assert abs(slope) < 1e-8


@pytest.mark.parametrize("span, dz, c", INCLINED)
def test_sags_against_dense_sampling(span, dz, c):
    x = np.linspace(0.0, span, 400001)
    gap = dz * x / span - cat.catenary_z(x, span, dz, c)  # chord minus curve, positive down
    assert_allclose(cat.midspan_sag(span, dz, c), dz / 2 - cat.catenary_z(span / 2, span, dz, c), rtol=1e-10)
    assert_allclose(cat.max_chord_sag(span, dz, c), gap.max(), rtol=1e-8)
    assert cat.max_chord_sag(span, dz, c) >= cat.midspan_sag(span, dz, c)


@pytest.mark.parametrize("span, dz, c", INCLINED)
def test_arc_length_and_mean_tension_by_quadrature(span, dz, c):
    w = 12.0
    h_n = c * w
    x = np.linspace(0.0, span, 200001)
    slope = np.sinh((x - cat.low_point_x(span, dz, c)) / c)
    ds = np.sqrt(1.0 + slope**2)
    length = np.trapezoid(ds, x)
    tension = h_n * ds  # T = H / cos(angle) = H sqrt(1 + z'^2)
    assert_allclose(cat.arc_length(span, dz, c), length, rtol=1e-9)
    assert_allclose(cat.mean_tension(span, dz, h_n, w), np.trapezoid(tension * ds, x) / length, rtol=1e-9)


@pytest.mark.parametrize("span, dz, c", INCLINED)
def test_support_tensions_from_heights(span, dz, c):
    # T = H + w y, y the height above the vertex (Grigsby ch. 14; catenary property).
    w = 9.0
    h_n = c * w
    x_m = cat.low_point_x(span, dz, c)
    vertex_z = cat.catenary_z(x_m, span, dz, c)
    t_a, t_b = cat.support_tensions(span, dz, h_n, w)
    assert_allclose([t_a, t_b], [h_n + w * (0.0 - vertex_z), h_n + w * (dz - vertex_z)], rtol=1e-10)


def test_reactions_balance_weight():
    span, dz, h_n, w = 350.0, 45.0, 30000.0, 16.0
    v_a, v_b = cat.vertical_reactions(span, dz, h_n, w)
    assert_allclose(v_a + v_b, w * cat.arc_length(span, dz, h_n / w), rtol=1e-12)


# --- Parabola ---

def test_parabolic_arc_length_close_to_exact_for_small_sag():
    span, h_n, w = 300.0, 40000.0, 15.0
    exact = cat.arc_length(span, 0.0, h_n / w)
    # Both exceed S by about w^2 S^3 / 24 H^2 (Grigsby ch. 14); the excess agrees to O(sag ratio^2).
    assert_allclose(cat.parabolic_arc_length(span, h_n, w) - span, exact - span, rtol=1e-3)


# --- Arrays and extreme inputs ---

def test_broadcasting():
    spans = np.array([100.0, 200.0, 300.0])
    c = np.array([[500.0], [1000.0]])
    assert cat.midspan_sag(spans, 10.0, c).shape == (2, 3)
    assert cat.low_point_x(spans, [0.0, 5.0, -5.0], 800.0).shape == (3,)
    t_a, t_b = cat.support_tensions(spans, 0.0, 1e4, [10.0, 11.0, 12.0])
    assert t_a.shape == t_b.shape == (3,)
    x = np.linspace(0, 300, 7)
    assert cat.catenary_z(x, 300.0, 20.0, 900.0).shape == (7,)


def test_very_slack_span_does_not_overflow_low_point():
    # S/2c = 1000: sinh(S/2c) overflows double precision if evaluated directly.
    with np.errstate(over="raise"):
        x_m = cat.low_point_x(2000.0, 50.0, 1.0)
    assert np.isfinite(x_m)
    assert_allclose(x_m, 1000.0, atol=1e-9)  # the vertex sits at midspan when the wire is this slack
