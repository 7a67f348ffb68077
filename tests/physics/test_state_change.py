"""Ruling span and change of state against published values.

What the Drake comparison showed (linear-elastic, exact catenary, tensions read
as horizontal tensions, start from the 60 F final row of Grigsby Table 14.5:
5429 lb, 700 ft level span; E 74-77 GPa, alpha 18.9e-6 /C, A 468.6 mm2):

=================  ========  ====================  =====================
row                table      model, E = 74 GPa     model, E = 77 GPa
=================  ========  ====================  =====================
120 F bare          4330 lb   4310 lb (-0.5 %)      4302 lb (-0.6 %)
32 F, 0.5 in ice    9224 lb   9308 lb (+0.9 %)      9365 lb (+1.5 %)
0 F NESC heavy     11318 lb  11479 lb (+1.4 %)     11583 lb (+2.3 %)
212 F bare          3728 lb   3363 lb (-9.8 %)      3356 lb (-10.0 %)
=================  ========  ====================  =====================

So 120 F and 32 F iced are within 2 % over the whole modulus range and are
tested at 2 %; 0 F heavy is within 2 % only for E below about 75.8 GPa, so it
is tested as a known over-prediction band; 212 F is past the aluminium knee
point (FIELD.md §7) and is tested as the expected 5-12 % under-prediction.
"""

import re
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from routesag.errors import SolveError
from routesag.physics import catenary as cat
from routesag.physics import state_change as sc

LBF = 4.4482216152605  # N per lbf (NIST SP 811, exact by definition)
FT = 0.3048  # m, exact
LB_FT = 14.5939  # N/m per lb/ft (NIST SP 811)


def fahrenheit(temp_f):
    return (temp_f - 32.0) / 1.8


def test_ruling_span_three_spans():
    # IEC 60050-466 "equivalent span" = sqrt(sum S^3 / sum S); FIELD.md §2 check: 100, 150, 200 m -> 165.83 m.
    assert_allclose(sc.ruling_span([100.0, 150.0, 200.0]), 165.83, atol=0.005)


def test_ruling_span_of_one_span_is_that_span():
    assert_allclose(sc.ruling_span([312.5]), 312.5, rtol=1e-14)


# --- Drake 700 ft level span (Grigsby, Electric Power Generation, Transmission and Distribution, Table 14.5) ---
DRAKE_SPAN_M = 700.0 * FT
DRAKE_AREA_M2 = 468.6e-6  # FIELD.md §5 (ASTM B232 via CPUC GO 95 Table 23)
DRAKE_EXPANSION = 18.9e-6  # FIELD.md §3, ACSR 26/7 (EN 50182 and handbook tables)
DRAKE_MODULI_PA = [74e9, 77e9]  # FIELD.md §3: ACSR 26/7 final modulus ~74-77 GPa; test both ends
BARE_N_M = 1.094 * LB_FT  # Grigsby Table 14.5
ICED_N_M = 2.094 * LB_FT  # Grigsby Table 14.5, 0.5 in radial ice, no wind
HEAVY_N_M = 2.509 * LB_FT  # Grigsby Table 14.5, NESC heavy resultant + K
START_H_N = 5429.0 * LBF  # Grigsby Table 14.5: final, 60 F, 5429 lb
START_T_C = fahrenheit(60.0)


def drake_tension_lb(weight_n_m, temp_f, modulus_pa):
    h_n = sc.change_of_state(DRAKE_SPAN_M, START_H_N, BARE_N_M, START_T_C, weight_n_m, fahrenheit(temp_f),
                             modulus_pa, DRAKE_AREA_M2, DRAKE_EXPANSION)
    return h_n / LBF


@pytest.mark.parametrize("modulus_pa", DRAKE_MODULI_PA)
def test_drake_120f_final(modulus_pa):
    tension_lb = drake_tension_lb(BARE_N_M, 120.0, modulus_pa)
    assert_allclose(tension_lb, 4330.0, rtol=0.02)  # Grigsby Table 14.5: 120 F final 4330 lb
    sag_ft = cat.midspan_sag(DRAKE_SPAN_M, 0.0, tension_lb * LBF / BARE_N_M) / FT
    assert_allclose(sag_ft, 15.52, rtol=0.02)  # Grigsby Table 14.5: 120 F final sag 15.52 ft


@pytest.mark.parametrize("modulus_pa", DRAKE_MODULI_PA)
def test_drake_32f_iced_final(modulus_pa):
    tension_lb = drake_tension_lb(ICED_N_M, 32.0, modulus_pa)
    assert_allclose(tension_lb, 9224.0, rtol=0.02)  # Grigsby Table 14.5: 32 F iced final 9224 lb
    sag_ft = cat.midspan_sag(DRAKE_SPAN_M, 0.0, tension_lb * LBF / ICED_N_M) / FT
    assert_allclose(sag_ft, 13.93, rtol=0.02)  # Grigsby Table 14.5: 32 F iced final sag 13.93 ft


@pytest.mark.parametrize("modulus_pa", DRAKE_MODULI_PA)
def test_drake_0f_heavy_overpredicted_by_linear_model(modulus_pa):
    # Grigsby Table 14.5: 0 F NESC heavy final 11318 lb. The linear-elastic model lands 1.4-2.3 % high over
    # E = 74-77 GPa (see module docstring), so the check is a band rather than the 2 % used above.
    ratio = drake_tension_lb(HEAVY_N_M, 0.0, modulus_pa) / 11318.0
    assert 1.01 < ratio < 1.03


def test_drake_212f_below_knee_point_is_underpredicted():
    # Grigsby Table 14.5: 212 F final 3728 lb. FIELD.md §7: above ~150 F the knee point makes a linear model
    # under-predict tension by 5-10 %; we find about 10 %.
    ratio = drake_tension_lb(BARE_N_M, 212.0, 75e9) / 3728.0
    assert 0.88 < ratio < 0.95


def test_readme_states_the_knee_point_in_both_units():
    # FIELD.md §7 (comparison with Grigsby Table 14.5): the linear model holds within ~2 % up to 120 F and
    # under-predicts by 5-10 % above ~150 F. The README's limitation must say the same temperature: a figure
    # in degC has to be the 150 F one, not 150 degC (which is past the table's last row, 212 F = 100 C).
    readme = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
    found = re.search(r"above about (\d+) degC \((\d+) degF, the knee point\)", readme)
    assert found, "README Limitations: knee point not stated as 'above about N degC (M degF, the knee point)'"
    knee_c, knee_f = (float(v) for v in found.groups())
    assert knee_f == 150.0  # FIELD.md §7
    assert knee_c == pytest.approx(fahrenheit(knee_f), abs=0.5)


def test_drake_exact_and_parabolic_agree():
    # Drake 700 ft has a sag ratio near 2 %; the cubic and the exact form differ by O(sag ratio^2).
    args = (DRAKE_SPAN_M, START_H_N, BARE_N_M, START_T_C, HEAVY_N_M, fahrenheit(0.0), 75e9, DRAKE_AREA_M2,
            DRAKE_EXPANSION)
    assert_allclose(sc.change_of_state(*args), sc.parabolic_change_of_state(*args), rtol=1e-3)


def test_same_state_returns_start_tension():
    h2 = sc.change_of_state(300.0, 25000.0, 15.0, 15.0, 15.0, 15.0, 70e9, 400e-6, 19e-6)
    assert_allclose(h2, 25000.0, rtol=1e-10)


def test_parabolic_root_solves_the_cubic():
    # Independent root finder (numpy.roots) on the Grigsby ch. 14 cubic H2^3 + b H2^2 - k = 0.
    span, h1, w1, t1, w2, t2, e, a, alpha = 250.0, 20000.0, 10.0, 15.0, 25.0, -5.0, 70e9, 300e-6, 19.3e-6
    ea = e * a
    b = -h1 + ea * w1**2 * span**2 / (24 * h1**2) + ea * alpha * (t2 - t1)
    k = ea * w2**2 * span**2 / 24
    roots = np.roots([1.0, b, 0.0, -k])
    positive = roots[(abs(roots.imag) < 1e-6 * abs(roots)) & (roots.real > 0)].real
    assert len(positive) == 1
    h2 = sc.parabolic_change_of_state(span, h1, w1, t1, w2, t2, e, a, alpha)
    assert_allclose(h2, positive[0], rtol=1e-10)


def test_parabolic_broadcasts():
    temps = np.array([-20.0, 15.0, 50.0, 80.0])
    h2 = sc.parabolic_change_of_state(300.0, 25000.0, 15.0, 15.0, 15.0, temps, 70e9, 400e-6, 19e-6)
    assert h2.shape == (4,)
    assert np.all(np.diff(h2) < 0)  # hotter wire, lower tension
    assert_allclose(h2[1], 25000.0, rtol=1e-12)


def test_unsolvable_state_raises_solve_error_naming_states():
    # Cooling by 995 C with alpha 1e-3 shrinks the wire to 0.5 % of its length: no tension below 100 EA fits.
    with pytest.raises(SolveError, match=r"state 1 .*state 2"):
        sc.change_of_state(300.0, 25000.0, 15.0, 15.0, 15.0, -980.0, 70e9, 400e-6, 1e-3)


def test_impossible_thermal_strain_raises():
    with pytest.raises(SolveError, match="thermal strain"):
        sc.change_of_state(300.0, 25000.0, 15.0, 15.0, 15.0, -1500.0, 70e9, 400e-6, 1e-3)


def test_non_positive_input_raises():
    with pytest.raises(SolveError, match="tension1_n"):
        sc.change_of_state(300.0, -1.0, 15.0, 15.0, 15.0, 20.0, 70e9, 400e-6, 19e-6)
    with pytest.raises(SolveError, match="weight2_n_m"):
        sc.parabolic_change_of_state(300.0, 1e4, 15.0, 15.0, 0.0, 20.0, 70e9, 400e-6, 19e-6)
    assert issubclass(SolveError, ValueError)


def test_very_hot_slack_wire_still_solves():
    # A large temperature rise on a short, light span: the solver must widen its bracket downwards.
    h2 = sc.change_of_state(50.0, 20000.0, 5.0, 15.0, 5.0, 250.0, 70e9, 400e-6, 23e-6)
    assert 0 < h2 < 20000.0
    c = h2 / 5.0
    length = cat.arc_length(50.0, 0.0, c)
    mean = cat.mean_tension(50.0, 0.0, h2, 5.0)
    start = cat.arc_length(50.0, 0.0, 4000.0) / (1 + cat.mean_tension(50.0, 0.0, 20000.0, 5.0) / 28e6)
    assert_allclose(length / (1 + mean / 28e6), start * (1 + 23e-6 * 235.0), rtol=1e-12)


def test_reference_temperature_defaults_to_state_one():
    args = (300.0, 25000.0, 15.0, 10.0, 20.0, 60.0, 70e9, 400e-6, 19e-6)
    assert sc.change_of_state(*args) == sc.change_of_state(*args, reference_temperature_c=10.0)
    # Another anchor changes the answer only at second order in alpha * dt (here ~1e-6 relative).
    assert_allclose(sc.change_of_state(*args, reference_temperature_c=20.0), sc.change_of_state(*args), rtol=1e-4)


def test_mean_tension_above_ea_is_refused_not_a_spurious_root():
    # Issue 9's example: 1500 m at H = 140 N hangs with a mean tension far above EA (c = 8.8 m); the
    # unchanged state is 140 N, and a second root (70.3 N) appeared when unphysical tensions were searched.
    args = (1500, 140, 15.965, 15, 15.965, 15, 74e9, 468.6e-6, 18.9e-6)
    mean_n = cat.mean_tension(1500.0, 0.0, 140.0, 15.965)
    assert mean_n > 74e9 * 468.6e-6
    with pytest.raises(SolveError, match="EA"):
        sc.change_of_state(*args)


def test_physical_range_brackets_mean_tension_ea():
    ea = 74e9 * 468.6e-6
    low, high = sc.physical_tension_range(1500.0, 15.965, ea)
    for h, inside in ((low * 1.001, True), (low * 0.999, False), (high * 0.999, True), (high * 1.001, False)):
        assert (cat.mean_tension(1500.0, 0.0, h, 15.965) < ea) == inside


def test_unchanged_state_returns_its_own_tension_on_slack_but_physical_spans():
    for h1 in (2.0e3, 1.0e4, 3.0e4):
        assert_allclose(sc.change_of_state(1500, h1, 15.965, 15, 15.965, 15, 74e9, 468.6e-6, 18.9e-6), h1,
                        rtol=1e-9)
