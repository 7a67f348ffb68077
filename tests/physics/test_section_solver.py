"""Exact tension-section change of state against the ruling span and an independent quadrature."""
import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.integrate import quad
from scipy.optimize import brentq

from routesag.physics.section_solver import section_change_of_state
from routesag.physics.state_change import change_of_state, ruling_span

DRAKE = dict(modulus_pa=70e9, area_m2=468.6e-6, expansion_per_c=18.9e-6)   # conftest DRAKE_TOML values
W_N_M = 15.965                                                             # bare Drake, 1.628 kg/m x g


def test_level_section_agrees_with_ruling_span_within_0_05_percent():
    spans = np.array([250.0, 320.0, 410.0, 280.0])
    exact = section_change_of_state(spans, np.zeros(4), 30e3, W_N_M, 15.0, W_N_M, 90.0, **DRAKE)
    ruling = change_of_state(ruling_span(spans), 30e3, W_N_M, 15.0, W_N_M, 90.0, **DRAKE)
    assert abs(exact / ruling - 1.0) < 5e-4


def test_single_steep_span_matches_independent_quadrature():
    # 60 m dead-end span rising 35 m (issue 9), 15 -> 150 degC. Independent: arc length and mean tension by
    # numerical quadrature of the catenary z = c cosh((x - x0)/c) + k through both supports.
    span, rise, h1 = 60.0, 35.0, 12e3
    ea, alpha = DRAKE["modulus_pa"] * DRAKE["area_m2"], DRAKE["expansion_per_c"]

    def unstressed(h):
        c = h / W_N_M
        x0 = brentq(lambda x: c * (np.cosh((span - x) / c) - np.cosh(-x / c)) - rise, -20 * c, span + 20 * c)
        ds = lambda x: np.cosh((x - x0) / c)
        length = quad(ds, 0, span, epsabs=1e-12)[0]
        mean = quad(lambda x: h * ds(x) ** 2, 0, span, epsabs=1e-9)[0] / length
        return length / (1 + mean / ea)

    target = unstressed(h1) * (1 + alpha * 135.0)
    expected = brentq(lambda h: unstressed(h) - target, 1000.0, 1e5, xtol=1e-6)
    got = section_change_of_state([span], [rise], h1, W_N_M, 15.0, W_N_M, 150.0, **DRAKE)
    assert_allclose(got, expected, rtol=1e-7)
    level = change_of_state(span, h1, W_N_M, 15.0, W_N_M, 150.0, **DRAKE)
    assert level > got * 1.01   # the level ruling span overstates the hot tension of a steep span


# Mountain section (issue 9): spans 250/100/450/200 m. Heights chosen here so that the steepest span, 450 m,
# rises 198 m (h/S = 0.44); the others 60 m up (0.24), 30 m down (0.30) and 50 m down (0.25).
MOUNTAIN_SPANS = np.array([250.0, 100.0, 450.0, 200.0])
MOUNTAIN_DZ = np.array([60.0, -30.0, 198.0, -50.0])


def _inclined_span_written_out(span, rise, h, w):
    """Arc length and arc-length mean tension of one span, from the catenary's own definition, by fsolve and quad."""
    from scipy.optimize import fsolve

    c = h / w
    # the low point x0 where the curve z = c cosh((x - x0)/c) meets both supports (0, 0) and (span, rise)
    def misfit(x):
        return [c * (np.cosh((span - x[0]) / c) - np.cosh(-x[0] / c)) - rise]

    x0 = float(fsolve(misfit, [span / 2 - c * rise / span], xtol=1e-10)[0])
    assert abs(misfit([x0])[0]) < 1e-7  # metres: the curve meets the upper support
    ds = lambda x: np.cosh((x - x0) / c)   # ds/dx of the curve; the tension there is h ds/dx
    length = quad(ds, 0, span, epsabs=1e-12, limit=200)[0]
    mean = quad(lambda x: h * ds(x) ** 2, 0, span, epsabs=1e-9, limit=200)[0] / length
    return length, mean


def test_mountain_section_matches_an_independent_unstressed_length_solution():
    from scipy.optimize import fsolve

    assert max(abs(MOUNTAIN_DZ) / MOUNTAIN_SPANS) == pytest.approx(0.44)
    ea, alpha, h1 = DRAKE["modulus_pa"] * DRAKE["area_m2"], DRAKE["expansion_per_c"], 30e3

    def unstressed(h):
        parts = [_inclined_span_written_out(s, dz, h, W_N_M) for s, dz in zip(MOUNTAIN_SPANS, MOUNTAIN_DZ)]
        return sum(length / (1 + mean / ea) for length, mean in parts)

    target = unstressed(h1) * (1 + alpha * (90.0 - 15.0))
    expected = float(fsolve(lambda h: [unstressed(h[0]) - target], [20e3], xtol=1e-13)[0])
    got = section_change_of_state(MOUNTAIN_SPANS, MOUNTAIN_DZ, h1, W_N_M, 15.0, W_N_M, 90.0, **DRAKE)
    assert_allclose(got, expected, rtol=1e-7)
    # the level ruling span overstates this section's hot tension (issue 9 measured +2.6 % on its heights)
    ruling = change_of_state(ruling_span(MOUNTAIN_SPANS), h1, W_N_M, 15.0, W_N_M, 90.0, **DRAKE)
    assert ruling > got * 1.01
