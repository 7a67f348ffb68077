"""Loads per unit length against published conductor loads."""

import dataclasses
import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from routesag.physics import loads

LB_FT = 14.5939  # 1 lb/ft in N/m (NIST SP 811 conversion factors: 4.448222 N/lb / 0.3048 m/ft)
PSF = 47.880259  # 1 lbf/ft^2 in Pa (NIST SP 811)
INCH = 0.0254  # m, exact

# Drake ACSR 795 kcmil 26/7: d 28.14 mm, 1.094 lb/ft (FIELD.md §5, ASTM B232 via CPUC GO 95 Table 23).
DRAKE_D_M = 28.14e-3
DRAKE_MASS_KG_M = 1.094 * LB_FT / loads.G
# NESC heavy district: 0.5 in radial ice, 4 psf, K = 0.30 lb/ft (Grigsby Table 14.5, NESC Rule 250B).
HEAVY_ICE_M = 0.5 * INCH  # 12.7 mm; the metric round 12.5 mm does NOT reproduce Table 14.5 (see below)
HEAVY_WIND_PA = 4 * PSF  # 191.5 Pa
HEAVY_K_N_M = 0.30 * LB_FT


def test_drake_nesc_heavy_ice_weight():
    ice = loads.ice_weight_n_m(DRAKE_D_M, HEAVY_ICE_M)
    assert_allclose(ice / LB_FT, 0.9998, rtol=5e-4)  # Grigsby Table 14.5: ice 0.9998 lb/ft


def test_drake_nesc_heavy_needs_half_inch_not_12_5_mm():
    # 12.5 mm gives 0.979 lb/ft, 2 % short of Grigsby Table 14.5 (0.9998 lb/ft): the table uses 0.5 in.
    ice_metric = loads.ice_weight_n_m(DRAKE_D_M, 12.5e-3)
    assert abs(ice_metric / LB_FT / 0.9998 - 1.0) > 0.015


def test_drake_nesc_heavy_vertical_wind_resultant():
    case = loads.conductor_load(DRAKE_MASS_KG_M, DRAKE_D_M, ice_thickness_m=HEAVY_ICE_M,
                                wind_pressure_pa=HEAVY_WIND_PA, constant_n_m=HEAVY_K_N_M)
    assert_allclose(case.vertical_n_m / LB_FT, 2.094, rtol=5e-4)  # Grigsby Table 14.5: iced 2.094 lb/ft
    assert_allclose(case.wind_n_m / LB_FT, 0.7027, rtol=5e-4)  # Grigsby Table 14.5: wind 0.7027 lb/ft
    assert_allclose(case.resultant_n_m / LB_FT, 2.509, rtol=5e-4)  # Grigsby Table 14.5: resultant + K 2.509 lb/ft
    assert_allclose(case.resultant_n_m, 36.61, atol=0.01)  # FIELD.md §4: 36.61 N/m


def test_drake_blowout_at_6_psf():
    bare = loads.bare_weight_n_m(DRAKE_MASS_KG_M)
    wind = loads.wind_load_n_m(DRAKE_D_M, 0.0, 287.3)  # 6 psf
    phi = loads.blowout_angle_rad(bare, wind)
    assert_allclose(np.degrees(phi), 26.86, atol=0.005)  # FIELD.md §8: Drake at 6 psf -> 26.86 deg


def test_textbook_level_span_resultant():
    # FIELD.md §7 (published textbook example): d 19.5 mm, 0.85 kgf/m, 13 mm ice at 910 kg/m3,
    # 39 kgf/m2 wind on the iced diameter -> resultant 2.717 kgf/m.
    g = loads.G
    case = loads.conductor_load(0.85, 19.5e-3, ice_thickness_m=13e-3, wind_pressure_pa=39 * g,
                                ice_density_kg_m3=910.0)
    assert_allclose(case.resultant_n_m / g, 2.717, atol=5e-4)


def test_wind_pressure_rule_of_thumb():
    # FIELD.md §4: q = 0.613 V^2 Pa with V in m/s at standard air density.
    assert_allclose(loads.wind_pressure_pa(30.0), 0.613 * 30.0**2, rtol=1e-3)
    assert_allclose(loads.wind_pressure_pa(30.0, air_density_kg_m3=1.0), 450.0, rtol=1e-12)


def test_wind_uses_iced_diameter_and_drag():
    assert_allclose(loads.wind_load_n_m(0.02, 0.01, 100.0, drag_coefficient=1.2), 100.0 * 1.2 * 0.04)


def test_bare_conductor_has_no_blowout_or_ice():
    case = loads.conductor_load(1.628, DRAKE_D_M)
    assert case.wind_n_m == 0.0
    assert case.blowout_rad == 0.0
    assert_allclose(case.vertical_n_m, 1.628 * 9.80665)
    assert_allclose(case.resultant_n_m, case.vertical_n_m)


def test_constant_does_not_turn_the_plane():
    with_k = loads.conductor_load(1.0, 0.02, wind_pressure_pa=300.0, constant_n_m=4.4)
    without = loads.conductor_load(1.0, 0.02, wind_pressure_pa=300.0)
    assert with_k.blowout_rad == without.blowout_rad
    assert_allclose(with_k.resultant_n_m - without.resultant_n_m, 4.4)
    assert_allclose(math.tan(without.blowout_rad), without.wind_n_m / without.vertical_n_m)


def test_load_record_is_frozen():
    case = loads.conductor_load(1.0, 0.02)
    with pytest.raises(dataclasses.FrozenInstanceError):
        case.wind_n_m = 1.0


def test_loads_broadcast():
    t = np.array([0.0, 0.0065, 0.0125])
    assert loads.ice_weight_n_m(0.028, t).shape == (3,)
    v = loads.vertical_load_n_m(16.0, loads.ice_weight_n_m(0.028, t))
    f = loads.wind_load_n_m(0.028, t, 190.0)
    assert loads.resultant_load_n_m(v, f, 4.4).shape == (3,)
    assert loads.blowout_angle_rad(v, f).shape == (3,)
