"""Vertical support reactions from the physical load, while the catenary keeps the design resultant (with K)."""
import numpy as np
import pytest
from numpy.testing import assert_allclose

from routesag.physics import catenary as cat
from routesag.physics import conductor3d as c3d
from routesag.physics import loads

LB_FT = 14.5939  # 1 lb/ft in N/m (NIST SP 811: 4.448222 N/lb / 0.3048 m/ft)
# Drake, NESC heavy district (Grigsby Table 14.5, FIELD.md §4): iced vertical 2.094 lb/ft, wind 0.7027 lb/ft,
# resultant + K 2.509 lb/ft; K = 0.30 lb/ft (NESC Rule 250B).
ICED_N_M, WIND_N_M, DESIGN_N_M = 2.094 * LB_FT, 0.7027 * LB_FT, 2.509 * LB_FT
PHYSICAL_N_M = float(np.hypot(ICED_N_M, WIND_N_M))  # the resultant without K
PHI = float(np.arctan2(WIND_N_M, ICED_N_M))
H_N = 50e3


def test_physical_resultant_is_design_resultant_minus_k():
    # Grigsby Table 14.5: 2.509 lb/ft = sqrt(2.094^2 + 0.7027^2) + 0.30 (to the table's rounding).
    assert PHYSICAL_N_M / LB_FT == pytest.approx(2.509 - 0.30, abs=5e-4)


def test_level_span_supports_carry_iced_weight_not_k():
    span_m = 300.0
    geometry = c3d.span_geometry(span_m, 0.0, H_N, DESIGN_N_M, PHI, physical_load_n_m=PHYSICAL_N_M)
    # Level span: each support carries the iced weight of half the wire (symmetry; V_A + V_B = w L, FIELD.md §1).
    half = ICED_N_M * geometry.arc_length_m / 2
    assert_allclose([geometry.vertical_reaction_a_n, geometry.vertical_reaction_b_n], [half, half], rtol=1e-12)
    # Iced weight x half the span, up to the arc-length difference L/S - 1 = w^2 S^2 / (24 H^2) with w the design
    # resultant that sets the shape (parabola, FIELD.md §1; 0.2 % here).
    stretch = 1 + DESIGN_N_M**2 * span_m**2 / (24 * H_N**2)
    assert geometry.vertical_reaction_a_n == pytest.approx(ICED_N_M * span_m / 2 * stretch, rel=1e-5)
    with_k = c3d.span_geometry(span_m, 0.0, H_N, DESIGN_N_M, PHI)
    assert with_k.vertical_reaction_a_n / geometry.vertical_reaction_a_n == pytest.approx(
        (ICED_N_M + 0.30 * LB_FT * np.cos(PHI)) / ICED_N_M, rel=2e-4)  # K cos(phi) per metre comes off (13.6 %)


def test_geometry_keeps_the_design_resultant():
    # Sag, tension and length depend on c = H / (resultant + K) only (FIELD.md §1); the physical load moves none.
    plain = c3d.span_geometry(250.0, 40.0, H_N, DESIGN_N_M, PHI)
    carried = c3d.span_geometry(250.0, 40.0, H_N, DESIGN_N_M, PHI, physical_load_n_m=PHYSICAL_N_M)
    for field in ("catenary_m", "low_point_m", "sag_m", "swung_sag_m", "max_tension_n", "arc_length_m"):
        assert getattr(carried, field) == getattr(plain, field), field
    assert carried.catenary_m == pytest.approx(H_N / DESIGN_N_M)


def test_inclined_swung_span_reactions_sum_to_iced_weight_of_the_wire():
    # World-z statics: the supports hold the wire's weight, w_vertical x arc length (FIELD.md §1, V_A + V_B = w L);
    # the tension's along-chord parts cancel between the two ends.
    geometry = c3d.span_geometry(250.0, 40.0, H_N, DESIGN_N_M, PHI, physical_load_n_m=PHYSICAL_N_M)
    assert_allclose(geometry.vertical_reaction_a_n + geometry.vertical_reaction_b_n,
                    ICED_N_M * geometry.arc_length_m, rtol=1e-12)


def test_uplift_at_the_low_support_survives_the_physical_load():
    # Wadhwa's span (FIELD.md §7): S 250 m, h 40 m, w 0.8 kgf/m, H 1250 kgf -> V_low = -99.05 kgf (catenary, derived).
    g = loads.G
    geometry = c3d.span_geometry(250.0, 40.0, 1250 * g, 0.8 * g, 0.0, physical_load_n_m=0.8 * g)
    assert geometry.vertical_reaction_a_n == pytest.approx(-99.05 * g, rel=1e-4)
    # With a design constant on top, the shape (low point outside) is the design one, the load the physical one:
    # the arc from the vertex to A is c sinh(x_m / c) long (FIELD.md §1), and carries 0.8 kgf/m.
    design = c3d.span_geometry(250.0, 40.0, 1250 * g, 1.0 * g, 0.0, physical_load_n_m=0.8 * g)
    low = cat.low_point_x(250.0, 40.0, 1250 / 1.0)
    assert design.vertical_reaction_a_n == pytest.approx(0.8 * 1250 * g * np.sinh(low / 1250.0), rel=1e-12)
