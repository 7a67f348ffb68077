"""Voltage adder and the default clearance set against FIELD.md §6."""

import math

import pytest

from routesag.physics.clearance_rules import DEFAULT_REQUIRED_M, phase_to_ground_kv, voltage_adder_m


def test_138_kv_line_over_a_road_needs_6_22_m():
    # FIELD.md §6 (derived from the NESC rule 232C1a summary): 138 kV nominal, 145 kV maximum,
    # road 5.6 m + 10 mm per kV above 22 kV to ground, with the maximum voltage above 50 kV -> 6.22 m.
    required = DEFAULT_REQUIRED_M["road"] + voltage_adder_m(phase_to_ground_kv(138.0, 145.0))
    assert required == pytest.approx(6.22, abs=0.005)


def test_maximum_voltage_governs_only_above_50_kv():
    # NESC 232C1a summary (FIELD.md §6): at or below 50 kV nominal the nominal voltage is used.
    assert phase_to_ground_kv(46.0, 48.3) == pytest.approx(46.0 / math.sqrt(3.0))
    assert phase_to_ground_kv(138.0, 145.0) == pytest.approx(145.0 / math.sqrt(3.0))
    assert phase_to_ground_kv(138.0) == pytest.approx(138.0 / math.sqrt(3.0))


def test_no_adder_at_or_below_22_kv_to_ground():
    # FIELD.md §6: the adder starts above 22 kV phase-to-ground; 34.5 kV is 19.9 kV to ground.
    assert voltage_adder_m(phase_to_ground_kv(34.5)) == 0.0
    assert voltage_adder_m(22.0) == 0.0
    assert voltage_adder_m(23.0) == pytest.approx(0.01)


def test_adder_is_vectorised_and_takes_other_rates():
    adders = voltage_adder_m([10.0, 32.0, 72.0], per_kv_m=0.02, above_kv=12.0)
    assert adders.tolist() == pytest.approx([0.0, 0.4, 1.2])


def test_default_set_matches_field_reference():
    # FIELD.md §6, NESC Table 232-1 from memory: railways 8.1, roads 5.6, pedestrian 4.4, water 5.2 m.
    assert DEFAULT_REQUIRED_M["railway"] == 8.1
    assert DEFAULT_REQUIRED_M["road"] == DEFAULT_REQUIRED_M["ground"] == 5.6
    assert DEFAULT_REQUIRED_M["pedestrian"] == 4.4
    assert DEFAULT_REQUIRED_M["water"] == 5.2
