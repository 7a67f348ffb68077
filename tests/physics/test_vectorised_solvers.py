"""The vectorised solvers give the scalar solvers' roots, to the tolerance both state, over varied inputs."""
import numpy as np
import pytest

from routesag.errors import SolveError
from routesag.physics.catenary import mean_tension
from routesag.physics.conductor3d import swung_span
from routesag.physics.roots import bracketed_roots
from routesag.physics.section_solver import (
    section_change_of_state_by_law, section_changes_of_state_by_law, section_knee_point_temperature_c,
    section_knee_points_c,
)
from routesag.physics.state_change import change_of_state_by_law, changes_of_state_by_law
from routesag.physics.two_material import LinearLaw, TwoMaterialConductor, knee_point_temperature_c

# Drake-like members as in test_two_material (from memory: aluminium 55.1 GPa, core 190 GPa); the limited one
# adds an invented 5 MPa compression limit so the knee formula's compression term is exercised.
DRAKE = TwoMaterialConductor(402.8e-6, 55.1e9, 23.0e-6, 65.8e-6, 190e9, 11.5e-6)
LIMITED = TwoMaterialConductor(402.8e-6, 55.1e9, 23.0e-6, 65.8e-6, 190e9, 11.5e-6, aluminium_compression_pa=5e6)
W_N_M = 1.628 * 9.80665
LAW_PAIRS = {
    "two_material_initial": (DRAKE.law(0.0, 15.0), DRAKE.law(0.0, 15.0)),
    "two_material_final": (DRAKE.law(0.0, 15.0), DRAKE.law(4e-4, 15.0)),
    "compression_limit": (LIMITED.law(0.0, 10.0), LIMITED.law(3e-4, 10.0)),
    "linear": (LinearLaw(3.0e7, 1.9e-5, 15.0), LinearLaw(3.0e7, 1.9e-5, 15.0)),  # invented EA 30 MN
}


def tolerance_n(h_n):
    """Both solvers stop within 1e-9 N + 1e-13 |H| of the root, so they differ by at most twice that."""
    return 2.0 * (1e-9 + 1e-13 * np.abs(h_n))


@pytest.mark.parametrize("increasing", [False, True])
def test_bracketed_roots_meet_their_tolerance(increasing):
    targets = np.geomspace(1e-3, 1e6, 400)
    sign = 1.0 if increasing else -1.0
    roots = bracketed_roots(lambda x: sign * (x**3 - targets), np.zeros(400), np.full(400, 200.0), 1e-9, 1e-13)
    assert np.all(np.abs(roots - np.cbrt(targets)) <= 1e-9 + 1e-13 * np.cbrt(targets))


def test_bracketed_roots_refuse_an_interval_without_a_sign_change():
    with pytest.raises(SolveError, match="does not bracket"):
        bracketed_roots(lambda x: x * x + 1.0, np.array([-1.0, 0.0]), np.array([1.0, 2.0]), 1e-9, 1e-13)


@pytest.mark.parametrize("laws", LAW_PAIRS.values(), ids=LAW_PAIRS.keys())
def test_ruling_span_changes_of_state_equal_the_scalar_solver(laws):
    rng = np.random.default_rng(11)
    n = 200
    span, h1 = rng.uniform(30.0, 1500.0, n), rng.uniform(5e3, 60e3, n)
    t1, t2 = rng.uniform(-10.0, 30.0, n), rng.uniform(-40.0, 200.0, n)
    w2 = W_N_M * rng.uniform(1.0, 3.0, n)
    vector = changes_of_state_by_law(span, h1, W_N_M, t1, w2, t2, *laws)
    scalar = np.array([change_of_state_by_law(*args, *laws) for args in zip(span, h1, [W_N_M] * n, t1, w2, t2)])
    assert np.all(np.abs(vector - scalar) <= tolerance_n(scalar))


def test_ruling_span_changes_of_state_raise_the_scalar_message():
    law = LinearLaw(3.0e7, 1.9e-5, 15.0)
    with pytest.raises(SolveError) as vector:
        changes_of_state_by_law(300.0, 25e3, W_N_M, 15.0, [W_N_M, -1.0], 20.0, law, law)
    with pytest.raises(SolveError) as scalar:
        change_of_state_by_law(300.0, 25e3, W_N_M, 15.0, -1.0, 20.0, law, law)
    assert str(vector.value) == str(scalar.value)


@pytest.mark.parametrize("laws", LAW_PAIRS.values(), ids=LAW_PAIRS.keys())
def test_section_changes_of_state_equal_the_scalar_solver(laws):
    rng = np.random.default_rng(12)
    n, m = 120, 9
    spans, dz = rng.uniform(80.0, 650.0, (n, m)), rng.uniform(-70.0, 70.0, (n, m))  # steep spans included
    h1, t1 = rng.uniform(10e3, 40e3, n), rng.uniform(-5.0, 30.0, n)
    w2, t2, blowout = W_N_M * rng.uniform(1.0, 3.0, n), rng.uniform(-40.0, 150.0, n), rng.uniform(0.0, 1.2, n)
    loaded = swung_span(spans, dz, blowout[:, None])
    vector = section_changes_of_state_by_law(spans, dz, h1, W_N_M, t1, w2, t2, *laws, loaded_spans=loaded)
    scalar = np.array([section_change_of_state_by_law(spans[i], dz[i], h1[i], W_N_M, t1[i], w2[i], t2[i], *laws,
                                                      loaded_spans=(loaded[0][i], loaded[1][i])) for i in range(n)])
    assert np.all(np.abs(vector - scalar) <= tolerance_n(scalar))


@pytest.mark.parametrize("creep", [0.0, 3e-4, 6e-4])
@pytest.mark.parametrize("member", [DRAKE, LIMITED], ids=["no_compression", "compression_limit"])
def test_knee_temperature_inverts_the_knee_tension(member, creep):
    law = member.law(creep, 15.0)
    temperatures = np.linspace(-60.0, 300.0, 37)
    assert np.allclose(law.knee_temperature_c(law.knee_tension_n(temperatures)), temperatures, rtol=0, atol=1e-9)


@pytest.mark.parametrize("laws", [v for k, v in LAW_PAIRS.items() if k != "linear"],
                         ids=[k for k in LAW_PAIRS if k != "linear"])
def test_knee_as_one_root_equals_the_root_over_temperature(laws):
    rng = np.random.default_rng(13)
    n, m = 12, 7
    spans, dz = rng.uniform(150.0, 500.0, (n, m)), rng.uniform(-40.0, 40.0, (n, m))
    h1 = rng.uniform(15e3, 35e3, n)
    law1, law2 = laws

    def by_temperature(i):  # every trial temperature a whole change of state of the section
        def mean_at(t_c):
            h_n = section_change_of_state_by_law(spans[i], dz[i], h1[i], W_N_M, 15.0, W_N_M, t_c, law1, law2)
            return np.average(mean_tension(spans[i], dz[i], h_n, W_N_M), weights=spans[i])
        return knee_point_temperature_c(mean_at, law2)

    reference = np.array([by_temperature(i) for i in range(n)])
    one_root = np.array([section_knee_point_temperature_c(spans[i], dz[i], h1[i], W_N_M, 15.0, W_N_M, law1, law2)
                         for i in range(n)])
    together, solved = section_knee_points_c(spans, dz, h1, W_N_M, 15.0, W_N_M, law1, law2)
    assert np.isfinite(reference).all() and solved.all()
    # brentq over temperature stops within 1e-6 degC; the one-root forms are far tighter
    assert np.all(np.abs(one_root - reference) <= 2e-6) and np.all(np.abs(together - reference) <= 2e-6)
    assert np.all(np.abs(together - one_root) <= 1e-8)


def test_knee_outside_the_search_is_nan_in_every_form():
    law1, law2 = LAW_PAIRS["two_material_initial"]
    spans, dz = np.full((1, 3), 300.0), np.zeros((1, 3))
    narrow = (-60.0, 20.0)  # the knee of a 25 kN stringing lies far above 20 degC
    assert np.isnan(section_knee_point_temperature_c(spans[0], dz[0], 25e3, W_N_M, 15.0, W_N_M, law1, law2,
                                                     search_c=narrow))
    knee, solved = section_knee_points_c(spans, dz, 25e3, W_N_M, 15.0, W_N_M, law1, law2, search_c=narrow)
    assert solved.all() and np.isnan(knee).all()
    assert np.isfinite(section_knee_point_temperature_c(spans[0], dz[0], 25e3, W_N_M, 15.0, W_N_M, law1, law2))


def test_knee_of_curves_as_one_root_equals_the_root_over_temperature():
    from tests.physics.test_stress_strain import ALU_INITIAL, CORE_INITIAL, with_curves

    law = with_curves(DRAKE, aluminium_initial=ALU_INITIAL, core_initial=CORE_INITIAL).law(0.0, 15.0)
    assert not hasattr(law, "knee_temperature_c")  # the one-root form searches the temperature itself
    spans, dz = np.array([280.0, 350.0, 310.0]), np.array([5.0, -12.0, 20.0])

    def mean_at(t_c):
        h_n = section_change_of_state_by_law(spans, dz, 28e3, W_N_M, 15.0, W_N_M, t_c, law, law)
        return np.average(mean_tension(spans, dz, h_n, W_N_M), weights=spans)

    reference = knee_point_temperature_c(mean_at, law)
    one_root = section_knee_point_temperature_c(spans, dz, 28e3, W_N_M, 15.0, W_N_M, law, law)
    assert np.isfinite(reference) and abs(one_root - reference) <= 2e-6
