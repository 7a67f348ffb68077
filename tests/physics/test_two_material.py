"""Two-material (aluminium on a core) stretch law: knee point, core alone above it, composite below it."""
import math

import numpy as np
import pytest
from scipy.optimize import brentq, fsolve

from routesag.errors import SolveError
from routesag.physics.state_change import change_of_state, change_of_state_by_law
from routesag.physics.two_material import LinearLaw, TwoMaterialConductor, knee_point_temperature_c

# Drake 795 kcmil 26/7 (FIELD.md §9): aluminium 402.8 mm2, core 65.8 mm2 (catalog, derived); aluminium 55.1 GPa,
# core 190 GPa, 23.0e-6 and 11.5e-6 /C (from memory; the aluminium modulus chosen so the composite is 74 GPa).
DRAKE = TwoMaterialConductor(402.8e-6, 55.1e9, 23.0e-6, 65.8e-6, 190e9, 11.5e-6)
W_N_M = 1.628 * 9.80665
SPAN_M = 213.36  # 700 ft


def level_mean_tension(h_n, w_n_m, span_m):
    """Arc-length mean of sqrt(H^2 + (w s)^2) over a level catenary, written out: (H/2)(sqrt(1+u^2) + asinh(u)/u)."""
    c = h_n / w_n_m
    u = w_n_m * (2 * c * math.sinh(span_m / (2 * c))) / (2 * h_n)
    return h_n / 2 * (math.sqrt(1 + u * u) + math.asinh(u) / u)


def level_length(h_n, w_n_m, span_m):
    c = h_n / w_n_m
    return 2 * c * math.sinh(span_m / (2 * c))


def test_composite_properties_are_stiffness_weighted():
    assert DRAKE.axial_stiffness_n / 468.6e-6 == pytest.approx(74e9, rel=2e-3)  # the catalog's composite modulus
    assert DRAKE.composite_expansion_per_c == pytest.approx(18.9e-6, rel=5e-3)  # FIELD.md §3 composite 18.9e-6


@pytest.mark.parametrize("tension_n", [-2e3, 0.0, 5e3, 30e3, 60e3])
@pytest.mark.parametrize("temperature_c", [-20.0, 15.0, 80.0, 150.0])
def test_stretch_ratio_inverts_the_member_forces(tension_n, temperature_c):
    law = DRAKE.law(creep_strain=4e-4, reference_temperature_c=15.0)
    x = law.stretch_ratio(tension_n, temperature_c)
    dt = temperature_c - 15.0
    core = 190e9 * 65.8e-6 * (x / (1 + 11.5e-6 * dt) - 1)
    alu = max(55.1e9 * 402.8e-6 * (x / ((1 + 23e-6 * dt) * (1 + 4e-4)) - 1), 0.0)  # no compression (limit 0)
    assert core + alu == pytest.approx(tension_n, abs=1e-6)


def test_compression_limit_is_honoured():
    limited = TwoMaterialConductor(402.8e-6, 55.1e9, 23.0e-6, 65.8e-6, 190e9, 11.5e-6, aluminium_compression_pa=5e6)
    law = limited.law(0.0, 15.0)
    tensions = np.linspace(-2e3, 40e3, 200)
    stress = law.aluminium_stress_pa(tensions, 150.0)
    assert stress.min() == pytest.approx(-5e6) and np.all(stress >= -5e6 - 1e-6)
    # above the knee the aluminium, longer than the wire, pushes it out: the core carries T + 5 MPa x A_a
    core_ea = 190e9 * 65.8e-6
    assert law.stretch_ratio(5e3, 150.0) == pytest.approx((1 + 11.5e-6 * 135) * (1 + (5e3 + 5e6 * 402.8e-6) / core_ea))
    assert law.stretch_ratio(5e3, 150.0) > DRAKE.law(0.0, 15.0).stretch_ratio(5e3, 150.0)


@pytest.mark.parametrize("temperature_c, weight_factor", [(-20.0, 1.0), (0.0, 2.3), (15.0, 1.0), (40.0, 1.0)])
def test_below_the_knee_without_creep_equals_the_composite_linear_model(temperature_c, weight_factor):
    h1 = 28e3  # N at 15 C, bare: the aluminium is in tension in every state tested
    law = DRAKE.law(0.0, 15.0)
    two = change_of_state_by_law(SPAN_M, h1, W_N_M, 15.0, weight_factor * W_N_M, temperature_c, law, law)
    linear = change_of_state(SPAN_M, h1, W_N_M, 15.0, weight_factor * W_N_M, temperature_c,
                             DRAKE.axial_stiffness_n, 1.0, DRAKE.composite_expansion_per_c)
    assert law.aluminium_stress_pa(level_mean_tension(two, weight_factor * W_N_M, SPAN_M), temperature_c) > 0
    # members with their own expansion differ from the composite law only to second order (alpha dt T/EA and
    # (alpha_a - alpha_s)^2 dt^2 terms, below 1e-6 strain here): a few newtons
    assert two == pytest.approx(linear, rel=5e-5)  # measured at most 2.1e-5 (at -20 C)


def test_above_the_knee_the_core_alone_carries_the_tension():
    h1, t1, t2 = 28e3, 15.0, 150.0
    law = DRAKE.law(0.0, t1)
    h2 = change_of_state_by_law(SPAN_M, h1, W_N_M, t1, W_N_M, t2, law, law)
    # hand computation of the core-only state change: both members at t1 set the unstressed length,
    # x1 = (T1 + EA) / EA at the reference temperature; above the knee x2 = (1 + alpha_s dt)(1 + T2 / (E_s A_s)).
    ea, core_ea = 55.1e9 * 402.8e-6 + 190e9 * 65.8e-6, 190e9 * 65.8e-6
    unstressed = level_length(h1, W_N_M, SPAN_M) * ea / (level_mean_tension(h1, W_N_M, SPAN_M) + ea)

    def residual(h):
        h = float(h[0])
        x2 = (1 + 11.5e-6 * (t2 - t1)) * (1 + level_mean_tension(h, W_N_M, SPAN_M) / core_ea)
        return [level_length(h, W_N_M, SPAN_M) / x2 - unstressed]

    expected = float(fsolve(residual, [h2 * 0.9], xtol=1e-13)[0])
    assert h2 == pytest.approx(expected, rel=1e-7)
    # and so it does not depend on the aluminium's modulus
    softer = TwoMaterialConductor(402.8e-6, 50e9, 23.0e-6, 65.8e-6, 190e9, 11.5e-6)
    ea_soft = softer.axial_stiffness_n
    # same unstressed length needs the same starting strain: start from the same stringing state
    h2_soft = change_of_state_by_law(SPAN_M, h1, W_N_M, t1, W_N_M, t2, softer.law(0.0, t1), softer.law(0.0, t1))
    unstressed_soft = level_length(h1, W_N_M, SPAN_M) * ea_soft / (level_mean_tension(h1, W_N_M, SPAN_M) + ea_soft)
    x_needed = level_length(h2_soft, W_N_M, SPAN_M) / unstressed_soft
    assert x_needed == pytest.approx((1 + 11.5e-6 * (t2 - t1)) * (1 + level_mean_tension(h2_soft, W_N_M, SPAN_M)
                                                                 / core_ea), rel=1e-10)


def test_knee_point_is_where_the_aluminium_goes_slack():
    h1, t1 = 28e3, 15.0
    law = DRAKE.law(0.0, t1)

    def mean_at(t):
        return level_mean_tension(change_of_state_by_law(SPAN_M, h1, W_N_M, t1, W_N_M, t, law, law), W_N_M, SPAN_M)

    knee = knee_point_temperature_c(mean_at, law)
    assert 40.0 < knee < 150.0
    assert law.aluminium_stress_pa(mean_at(knee), knee) == pytest.approx(0.0, abs=2e3)  # Pa
    assert law.aluminium_stress_pa(mean_at(knee - 5), knee - 5) > 1e5
    assert law.aluminium_stress_pa(mean_at(knee + 5), knee + 5) == 0.0
    # creep of the aluminium brings the knee down (Grigsby ch. 14: the final knee is lower than the initial)
    crept = DRAKE.law(5e-4, t1)
    knee_final = knee_point_temperature_c(
        lambda t: level_mean_tension(change_of_state_by_law(SPAN_M, h1, W_N_M, t1, W_N_M, t, law, crept),
                                     W_N_M, SPAN_M), crept)
    assert knee_final < knee - 10


def test_creep_allowance_conversion_matches_below_the_knee():
    # creep_strain_from_allowance: same elongation at a given tension below the knee as the allowance (stated rule)
    allowance_c = 20.0
    eps = DRAKE.creep_strain_from_allowance(allowance_c)
    crept = DRAKE.law(eps, 15.0)
    linear = LinearLaw(DRAKE.axial_stiffness_n, DRAKE.composite_expansion_per_c, 15.0)
    for tension_n in (20e3, 40e3):
        expected = linear.stretch_ratio(tension_n, 15.0 + allowance_c)
        assert crept.stretch_ratio(tension_n, 15.0) == pytest.approx(expected, rel=1e-6)


def test_knee_outside_the_search_is_nan():
    law = DRAKE.law(0.0, 15.0)
    assert math.isnan(knee_point_temperature_c(lambda t: 1e9, law))
    assert brentq(lambda t: law.knee_tension_n(t), -200, 400) == pytest.approx(15.0)  # knee tension 0 at t_ref


def test_physical_tensions_stop_at_the_core_stiffness():
    # Above the knee the core works alone, so a 100 % strain (the unphysical side of the state equation, issue 9)
    # comes at the core's EA, not at both members' EA: 3000 m at a mean tension of 2e7 N (between the core's
    # 1.25e7 N and both members' 3.47e7 N), at 200 C, used to be carried to 250 C on the spurious branch (H fell
    # while the mean tension rose); it must be refused.
    law = DRAKE.law(0.0, 15.0)
    span_m = 3000.0
    h_n = brentq(lambda h: level_mean_tension(h, W_N_M, span_m) - 2e7, 1000.0, 5000.0)
    assert DRAKE.core_stiffness_n < 2e7 < DRAKE.axial_stiffness_n
    with pytest.raises(SolveError, match="not below EA = 1.25e\\+07 N"):
        change_of_state_by_law(span_m, h_n, W_N_M, 200.0, W_N_M, 250.0, law, law)
    assert law.least_stiffness_n == DRAKE.core_stiffness_n
