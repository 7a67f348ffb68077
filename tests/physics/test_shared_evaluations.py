"""The solvers' shortcuts give the same numbers as the long way: bit for bit, so no result moves."""
import numpy as np

from routesag.physics.catenary import arc_length, length_and_mean_tension, mean_tension
from routesag.physics.roots import remembered
from routesag.physics.section_solver import section_change_of_state_by_law
from routesag.physics.two_material import LinearLaw


def test_length_and_mean_tension_equal_the_two_functions_exactly():
    rng = np.random.default_rng(8)
    spans = rng.uniform(1.0, 1500.0, 2000)
    dz = rng.uniform(-300.0, 300.0, 2000)  # steep inclines and uplift included
    h_n = rng.uniform(50.0, 2e5, 2000)
    w_n_m = rng.uniform(0.5, 40.0, 2000)
    length, tension = length_and_mean_tension(spans, dz, h_n, w_n_m)
    assert np.array_equal(length, arc_length(spans, dz, h_n / w_n_m))
    assert np.array_equal(tension, mean_tension(spans, dz, h_n, w_n_m))
    one = length_and_mean_tension(350.0, 0.0, 25e3, 15.0)  # scalars, level span
    assert (one[0], one[1]) == (arc_length(350.0, 0.0, 25e3 / 15.0), mean_tension(350.0, 0.0, 25e3, 15.0))


def test_remembered_computes_each_argument_once():
    calls = []
    square = remembered(lambda x: calls.append(x) or x * x)
    assert [square(3.0), square(3.0), square(np.float64(3.0)), square(-2.0)] == [9.0, 9.0, 9.0, 4.0]
    assert calls == [3.0, -2.0]


def test_section_change_of_state_asks_each_tension_once(monkeypatch):
    import routesag.physics.section_solver as solver

    asked = []
    real = solver.section_unstressed_length_by_law
    monkeypatch.setattr(solver, "section_unstressed_length_by_law",
                        lambda spans, dz, h, *a: (asked.append(float(h)), real(spans, dz, h, *a))[1])
    law = LinearLaw(3.0e7, 1.9e-5, 15.0)  # invented wire: EA 30 MN, 19e-6 /K
    h2 = section_change_of_state_by_law([300.0, 420.0, 380.0], [0.0, 12.0, -5.0], 20e3, 15.0, 15.0,
                                        15.0, 60.0, law, law)
    assert 0 < h2 < 20e3  # hotter: slacker
    assert len(asked) == len(set(asked))  # the bracket's ends are not solved twice
