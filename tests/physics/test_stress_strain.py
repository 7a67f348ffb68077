"""The maker's polynomial stress-strain curves in the two-material law.

No worked case with published curves is available (FIELD.md gives none), so: curves that are exactly linear
must give the linear two-material law, and a synthetic nonlinear curve is checked against an independent fsolve
on the level-span unstressed-length equation with the member forces written out here.
"""
import numpy as np
import pytest
from scipy.optimize import brentq, fsolve

from routesag.physics.state_change import change_of_state_by_law
from routesag.physics.stress_strain import StressStrainCurves, curve_problem
from routesag.physics.two_material import TwoMaterialConductor, knee_point_temperature_c
from tests.physics.test_two_material import DRAKE, SPAN_M, W_N_M, level_length, level_mean_tension

AREA_M2 = 468.6e-6   # Drake's whole area: the curves' stresses refer to it


def linear_curve(stiffness_n):
    """a1 [MPa per % strain] of a member with EA = stiffness_n over the conductor's area."""
    return (0.0, stiffness_n / AREA_M2 / 1e8, 0.0, 0.0, 0.0)


def with_curves(members, **curves):
    fields = {k: getattr(members, k) for k in ("aluminium_area_m2", "aluminium_modulus_pa",
              "aluminium_expansion_per_c", "core_area_m2", "core_modulus_pa", "core_expansion_per_c",
              "aluminium_compression_pa")}
    return TwoMaterialConductor(**fields, curves=StressStrainCurves(AREA_M2, **curves))


LINEAR = dict(aluminium_initial=linear_curve(DRAKE.aluminium_stiffness_n),
              core_initial=linear_curve(DRAKE.core_stiffness_n))


@pytest.mark.parametrize("compression_pa", [0.0, 5e6])
@pytest.mark.parametrize("creep", [0.0, 4e-4])
def test_linear_curves_equal_the_linear_two_material_law(compression_pa, creep):
    members = TwoMaterialConductor(402.8e-6, 55.1e9, 23.0e-6, 65.8e-6, 190e9, 11.5e-6, compression_pa)
    plain = members.law(creep, 15.0)
    curved = with_curves(members, **LINEAR).law(creep, 15.0, final=True)
    tensions, temperatures = np.array([-2e3, 0.0, 5e3, 30e3, 60e3]), np.array([-20.0, 15.0, 80.0, 150.0])
    t, tc = np.meshgrid(tensions, temperatures)
    np.testing.assert_allclose(curved.stretch_ratio(t, tc), plain.stretch_ratio(t, tc), rtol=1e-14)
    np.testing.assert_allclose(curved.knee_tension_n(temperatures), plain.knee_tension_n(temperatures),
                               rtol=1e-9, atol=1e-6)
    assert curved.axial_stiffness_n == pytest.approx(plain.axial_stiffness_n, rel=1e-12)
    assert curved.expansion_per_c == pytest.approx(plain.expansion_per_c, rel=1e-12)
    for t2 in (-20.0, 60.0, 150.0):  # below and above the knee
        assert change_of_state_by_law(SPAN_M, 28e3, W_N_M, 15.0, W_N_M, t2, plain, plain) == pytest.approx(
            change_of_state_by_law(SPAN_M, 28e3, W_N_M, 15.0, W_N_M, t2, curved, curved), rel=1e-10)


# Synthetic curves (invented, of Drake's order: a1 near E_k A_k / (A 1e8), a softening aluminium loading curve, a
# slightly stiffening core, a stiffer final aluminium curve) [MPa over the whole area, % strain].
ALU_INITIAL = (0.0, 400.0, -60.0, 10.0, -1.0)
CORE_INITIAL = (0.0, 267.0, 10.0, -2.0, 0.2)
ALU_FINAL = (0.0, 470.0, -40.0, 5.0, -0.5)


def member_force_n(coefficients, strain):
    """Written out: A sigma(100 eps) inside [0, 1 %], straight on with the end slope outside."""
    a = np.asarray(coefficients)
    e = 100.0 * strain
    stress = lambda u: a[1] * u + a[2] * u**2 + a[3] * u**3 + a[4] * u**4
    slope = lambda u: a[1] + 2 * a[2] * u + 3 * a[3] * u**2 + 4 * a[4] * u**3
    if e < 0:
        return AREA_M2 * 1e6 * slope(0.0) * e
    if e > 1.0:
        return AREA_M2 * 1e6 * (stress(1.0) + slope(1.0) * (e - 1.0))
    return AREA_M2 * 1e6 * stress(e)


def independent_tension(x, t_c, alu, core, creep=0.0):
    g_s = 1 + 11.5e-6 * (t_c - 15.0)
    g_a = (1 + 23.0e-6 * (t_c - 15.0)) * (1 + creep)
    return member_force_n(core, x / g_s - 1) + max(member_force_n(alu, x / g_a - 1), 0.0)


@pytest.mark.parametrize("t2_c, final", [(-20.0, False), (50.0, False), (120.0, False), (170.0, False),
                                         (50.0, True), (120.0, True)])
def test_nonlinear_curves_against_an_independent_fsolve(t2_c, final):
    law1 = with_curves(DRAKE, aluminium_initial=ALU_INITIAL, core_initial=CORE_INITIAL,
                       aluminium_final=ALU_FINAL).law(0.0, 15.0)
    law2 = with_curves(DRAKE, aluminium_initial=ALU_INITIAL, core_initial=CORE_INITIAL,
                       aluminium_final=ALU_FINAL).law(2e-4, 15.0, final=final)
    h1 = 28e3
    alu2 = ALU_FINAL if final else ALU_INITIAL
    creep2 = 2e-4

    # state 1: x1 from T_mean1 (brute inversion by fsolve on the written-out forces)
    t1 = level_mean_tension(h1, W_N_M, SPAN_M)
    x1 = brentq(lambda x: independent_tension(x, 15.0, ALU_INITIAL, CORE_INITIAL) - t1, 0.99, 1.02, xtol=1e-15)
    unstressed = level_length(h1, W_N_M, SPAN_M) / x1

    def equations(v):
        h2, x2 = v[0] * 1e4, v[1]
        return [independent_tension(x2, t2_c, alu2, CORE_INITIAL, creep2) / 1e4
                - level_mean_tension(h2, W_N_M, SPAN_M) / 1e4,
                (level_length(h2, W_N_M, SPAN_M) / x2 - unstressed) * 1e3]

    h2_guess = change_of_state_by_law(SPAN_M, h1, W_N_M, 15.0, W_N_M, t2_c, DRAKE.law(0, 15.0), DRAKE.law(0, 15.0))
    solution, info, ok, message = fsolve(equations, [h2_guess / 1e4, x1], xtol=1e-13, full_output=True)
    assert ok == 1, message
    expected_n = solution[0] * 1e4
    got_n = change_of_state_by_law(SPAN_M, h1, W_N_M, 15.0, W_N_M, t2_c, law1, law2)
    assert got_n == pytest.approx(expected_n, rel=1e-7)
    # and the curves matter: the linear law with the same initial slopes differs
    linear = DRAKE.law(0.0, 15.0)
    assert abs(change_of_state_by_law(SPAN_M, h1, W_N_M, 15.0, W_N_M, t2_c, linear, linear) / got_n - 1) > 1e-3


def test_knee_point_with_curves_is_where_the_aluminium_goes_slack():
    law = with_curves(DRAKE, aluminium_initial=ALU_INITIAL, core_initial=CORE_INITIAL).law(0.0, 15.0)

    def mean_at(t):
        return level_mean_tension(change_of_state_by_law(SPAN_M, 28e3, W_N_M, 15.0, W_N_M, t, law, law),
                                  W_N_M, SPAN_M)

    knee = knee_point_temperature_c(mean_at, law)
    assert 30.0 < knee < 200.0
    assert law.aluminium_stress_pa(mean_at(knee - 5), knee - 5) > 1e5
    assert law.aluminium_stress_pa(mean_at(knee + 5), knee + 5) == 0.0


@pytest.mark.parametrize("coefficients, message", [
    ((0.0, 60.0, 0.0, 0.0), "five coefficients"),
    ((5.0, 60.0, 0.0, 0.0, 0.0), "a0 = 0"),
    ((0.0, 400.0, -250.0, 0.0, 0.0), "must rise"),   # slope 400 - 500 e turns negative at 0.8 %
])
def test_unusable_curves_are_named(coefficients, message):
    assert message in curve_problem(coefficients)


def test_usable_curves_pass():
    assert curve_problem(ALU_INITIAL) is None and curve_problem(CORE_INITIAL) is None
