"""Phases and earth wire, suspension strings with wind swing, structure loads and uplift, through the pipeline."""
import math

import numpy as np
import pyogrio
import pytest
import shapely

import routesag
from routesag.errors import DataError, ProjectError
from tests.conftest import DRAKE_TOML, X0, Y0, write_plane_raster, write_project, write_structures

LBF_N, FT_M, G = 4.4482216, 0.3048, 9.80665
SIX_PSF_PA = 6 * LBF_N / FT_M**2  # 287.3 Pa

PHASES = """
[[wires]]
name = "L"
offset_m = -4.5

[[wires]]
name = "C"

[[wires]]
name = "R"
offset_m = 4.5
"""

# A small invented earth wire: 16.31 mm, 157.2 mm2, 0.3668 lb/ft, 50.0 kN (ACSR 26/7 row of FIELD.md §5).
EARTH_WIRE = """
[[wires]]
name = "E"
dz_m = 5.0
insulated = false

[wires.conductor]
diameter_mm = 16.31
area_mm2 = 157.2
mass_kg_m = 0.5459
rated_strength_kn = 50.0
modulus_gpa = 75.0
expansion_per_c = 18.9e-6

[wires.stringing]
temperature_c = 15.0
tension_percent_rts = 20.0
"""


def first_point(geometry):
    return shapely.get_coordinates(geometry, include_z=True)[0]


def by(frame, **match):
    mask = np.ones(len(frame), dtype=bool)
    for column, value in match.items():
        mask &= frame[column].to_numpy() == value
    rows = frame[mask]
    assert len(rows) == 1, match
    return rows.iloc[0]


@pytest.fixture
def level_line(tmp_path):
    """Three structures 300 m apart over flat ground; P2 suspension with a 1.8 m string, every clamp 118.2 m."""
    write_plane_raster(tmp_path / "terrain.tif", a=100.0)
    write_structures(tmp_path / "structures.gpkg", [(X0, Y0 + 200), (X0 + 300, Y0 + 200), (X0 + 600, Y0 + 200)],
                     kinds=["strain", "suspension", "strain"], heights=[18.2, 20.0, 18.2],
                     extra={"insulator_m": [None, 1.8, None]})
    return write_project(tmp_path, cases=[("still", 15.0, 0.0, 0.0), ("wind6", 15.0, 0.0, SIX_PSF_PA)])


def test_drake_blowout_at_6_psf_swings_string_and_clamp(level_line):
    result = routesag.run(level_line)
    conductors, loads = result["conductors"], result["structure_loads"]
    # FIELD.md §8: Drake at 6 psf -> blowout 26.86 deg (pub/derived).
    assert (conductors.loc[conductors.load_case == "wind6", "blowout_deg"] - 26.86).abs().max() < 0.01
    p2 = by(loads, structure_id="P2", load_case="wind6")
    # Level, equal spans: weight span = wind span (symmetry), so the weightless string swings like the wire.
    assert p2["weight_span_m"] == pytest.approx(300.0, abs=1e-6)
    assert p2["wind_span_m"] == pytest.approx(300.0)
    assert p2["swing_deg"] == pytest.approx(26.86, abs=0.01)
    # The clamp moves 1.8 sin(psi) to the right (south: the line heads east) and up 1.8 (1 - cos psi).
    psi = math.radians(p2["swing_deg"])
    start = first_point(by(conductors, span_id="A:P2-P3", load_case="wind6").geometry)
    np.testing.assert_allclose(start, [X0 + 300, Y0 + 200 - 1.8 * math.sin(psi),
                                       118.2 + 1.8 * (1 - math.cos(psi))], atol=1e-6)
    # Without wind the wire hangs 1.8 m below the string's top at 120 m.
    still = first_point(by(conductors, span_id="A:P2-P3", load_case="still").geometry)
    np.testing.assert_allclose(still, [X0 + 300, Y0 + 200, 118.2], atol=1e-6)
    assert by(loads, structure_id="P2", load_case="still")["swing_deg"] == 0.0


def test_swung_clamp_is_what_the_clearance_sees(level_line):
    result = routesag.run(level_line)
    row = by(result["conductors"], span_id="A:P1-P2", load_case="wind6")
    xyz = shapely.get_coordinates(row.geometry, include_z=True)
    # Flat ground at 100 m: the smallest clearance is the lowest point of the swung wire.
    assert row["min_clearance_m"] == pytest.approx(xyz[:, 2].min() - 100.0, abs=1e-3)
    assert xyz[-1, 2] > 118.2  # the end clamp at P2 was lifted by the swing


def test_string_weight_and_wind_enter_the_swing(level_line):
    level_line.write_text(level_line.read_text() + "\n[insulators]\nweight_n = 600.0\nwind_area_m2 = 0.5\n")
    result = routesag.run(level_line)
    p2 = by(result["structure_loads"], structure_id="P2", load_case="wind6")
    tensions = result["conductors"]
    w_n_m = 1.628 * G  # Drake mass, FIELD.md §5
    f_n_m = SIX_PSF_PA * 0.02814
    # psi = atan((F*wind span + P/2) / (w*weight span + W/2)), FIELD.md §8 (from memory); P = 0.5 m2 x 6 psf.
    expected = math.atan((f_n_m * 300 + 0.5 * SIX_PSF_PA / 2) / (w_n_m * p2["weight_span_m"] + 300.0))
    assert math.radians(p2["swing_deg"]) == pytest.approx(expected, rel=1e-9)
    assert len(tensions) == 2 * 2
    still = by(result["structure_loads"], structure_id="P2", load_case="still")
    assert still["vertical_n"] == pytest.approx(w_n_m * 300 + 600.0, rel=2e-3)  # string weight included
    assert still["swing_deg"] == 0.0  # no wind in this case: the string's wind area carries no load


def wadhwa_valley(folder, p2_height_m=30.0, bearing_deg=90.0, p2_string_m=None):
    """Wadhwa's inclined span twice over (FIELD.md §7): spans 250 m, w 0.8 kgf/m, H 1250 kgf, ends 70 m high.

    The straight line runs from P1 at the given bearing; P2 stands ``p2_height_m`` high, with an optional string.
    """
    b = math.radians(bearing_deg)
    xy = [(X0 + i * 250 * math.sin(b), Y0 + 200 + i * 250 * math.cos(b)) for i in range(3)]
    write_plane_raster(folder / "terrain.tif", a=100.0)
    write_structures(folder / "structures.gpkg", xy, kinds=["strain", "suspension", "strain"],
                     heights=[70.0, p2_height_m, 70.0], extra={"insulator_m": [None, p2_string_m, None]})
    path = write_project(folder, cases=[("strung", 15.0, 0.0, 0.0)], ground_m=1.0, tension_kn=1250 * G / 1e3)
    conductor = DRAKE_TOML.replace("mass_kg_m = 1.628", "mass_kg_m = 0.8").replace(
        "rated_strength_kn = 140.1", "rated_strength_kn = 78.45")
    path.write_text(path.read_text().replace(DRAKE_TOML, conductor))
    return path, xy


@pytest.fixture
def valley(tmp_path):
    """Supports 70, 30, 70 m high on an east-west line (FIELD.md §7)."""
    return wadhwa_valley(tmp_path)[0]


def test_uplift_detected_where_the_low_point_falls_outside(valley):
    result = routesag.run(valley)
    ahead = by(result["conductors"], span_id="A:P2-P3", load_case="strung")
    # FIELD.md §7 (Wadhwa, catenary values derived): low point 123.68 m beyond the lower support.
    assert ahead["horizontal_tension_n"] == pytest.approx(1250 * G, rel=1e-6)
    assert ahead["low_point_m"] == pytest.approx(-123.68, abs=0.01)
    p2 = by(result["structure_loads"], structure_id="P2", load_case="strung")
    # Each span pulls the low support up by 99.05 kgf (FIELD.md §7): the net load points up.
    assert p2["vertical_n"] == pytest.approx(-2 * 99.05 * G, rel=1e-3)
    assert p2["weight_span_m"] == pytest.approx(-2 * 123.68, abs=0.02)
    assert bool(p2["uplift"]) is True
    assert not result["structure_loads"]["uplift"].to_numpy()[[0, 2]].any()  # dead ends are never flagged


def test_summary_lists_uplift(valley):
    from routesag.report import summary_text

    text = summary_text(routesag.run(valley))
    assert "uplift at suspension structures: 1" in text and "structure P2" in text


def valley_on_a_string(folder, bearing_deg):
    """P2's 3 m string hangs its clamp 12 - 3 = 9 m above the ground, 61 m below its neighbours' clamps."""
    return wadhwa_valley(folder, p2_height_m=12.0, bearing_deg=bearing_deg, p2_string_m=3.0)


@pytest.mark.parametrize("bearing_deg", [83.0, 90.0, 160.0])
def test_string_in_uplift_stays_plumb_and_is_flagged(tmp_path, bearing_deg):
    path, xy = valley_on_a_string(tmp_path, bearing_deg)
    result = routesag.run(path)
    p2 = by(result["structure_loads"], structure_id="P2", load_case="strung")
    # Clamps 61 m below their neighbours on 250 m spans, c = 1562.5 m: h > w S^2 / (2H) = 20 m, the low points
    # fall outside (FIELD.md §1): both spans pull P2 up, and the string has no hanging position.
    assert p2["vertical_n"] < 0 and bool(p2["uplift"]) is True
    assert np.isnan(p2["swing_deg"])
    # The clamp stays at its plumb rest position, 12 - 3 = 9 m above the flat ground at 100 m.
    np.testing.assert_allclose([p2.geometry.x, p2.geometry.y, p2.geometry.z], [*xy[1], 109.0], atol=1e-9)
    # The wire is lowest at that clamp: 9.0 m of clearance, not the 12.0 m a string swung up by 90 deg would give.
    for span in ("A:P1-P2", "A:P2-P3"):
        assert by(result["conductors"], span_id=span, load_case="strung")["min_clearance_m"] == pytest.approx(
            9.0, abs=1e-6)
    warned = [w for w in result.warnings if "uplift" in w and "string" in w]
    assert len(warned) == 1 and "P2" in warned[0] and "wire A" in warned[0] and "strung" in warned[0]


def test_heavy_string_that_is_lifted_still_counts_as_uplift(tmp_path):
    # A 6 kN string: the structure is pressed down (V_wire + W > 0) but the clamp carries V_wire + W/2 < 0, so the
    # string cannot hang (FIELD.md §8 form, half the string weight at the clamp, from memory).
    path, xy = valley_on_a_string(tmp_path, 83.0)
    path.write_text(path.read_text() + "\n[insulators]\nweight_n = 6000.0\n")
    p2 = by(routesag.run(path)["structure_loads"], structure_id="P2", load_case="strung")
    wire_n = p2["vertical_n"] - 6000.0
    assert wire_n + 6000.0 > 0 > wire_n + 3000.0
    assert bool(p2["uplift"]) is True and np.isnan(p2["swing_deg"])
    assert p2.geometry.z == pytest.approx(109.0, abs=1e-9)


def test_straight_suspension_string_hangs_plumb_without_wind(tmp_path):
    # Same straight line, clamps level (weight on P2): rounding in the line-angle load must not swing the string.
    b = math.radians(83.0)
    xy = [(X0 + i * 250 * math.sin(b), Y0 + 200 + i * 250 * math.cos(b)) for i in range(3)]
    write_plane_raster(tmp_path / "terrain.tif", a=100.0)
    write_structures(tmp_path / "structures.gpkg", xy, kinds=["strain", "suspension", "strain"],
                     heights=[18.2, 20.0, 18.2], extra={"insulator_m": [None, 1.8, None]})
    result = routesag.run(write_project(tmp_path, cases=[("still", 15.0, 0.0, 0.0)]))
    p2 = by(result["structure_loads"], structure_id="P2")
    assert p2["swing_deg"] == 0.0
    np.testing.assert_allclose([p2.geometry.x, p2.geometry.y, p2.geometry.z], [*xy[1], 118.2], atol=1e-9)
    assert not result.warnings


def test_nesc_heavy_structure_loads_are_physical_and_tension_keeps_k(tmp_path):
    # Drake, NESC heavy district (Grigsby Table 14.5, FIELD.md §4): 0.5 in ice, 4 psf, K = 0.30 lb/ft, 0 F.
    lb_ft, psf = LBF_N / FT_M, LBF_N / FT_M**2
    write_plane_raster(tmp_path / "terrain.tif", a=100.0)
    write_structures(tmp_path / "structures.gpkg", [(X0 + i * 300, Y0 + 200) for i in range(3)],
                     kinds=["strain", "suspension", "strain"])
    path = write_project(tmp_path, cases=[("heavy", -17.78, 12.7, 4 * psf)])
    wind = f"wind_pa = {4 * psf}"
    path.write_text(path.read_text().replace(wind, f"{wind}\nconstant_n_m = {0.30 * lb_ft}"))
    result = routesag.run(path)
    p2 = by(result["structure_loads"], structure_id="P2", load_case="heavy")
    span = by(result["conductors"], span_id="A:P1-P2", load_case="heavy")
    assert p2["weight_span_m"] == pytest.approx(300.0) and p2["wind_span_m"] == pytest.approx(300.0)
    # Grigsby Table 14.5: iced vertical 2.094 lb/ft. Level spans: P2 holds half of each, i.e. one span's length
    # of iced wire; that is 2.094 lb/ft x weight span within the arc-length difference (0.14 % here).
    assert p2["vertical_n"] == pytest.approx(2.094 * lb_ft * span["length_m"], rel=5e-4)
    assert p2["vertical_n"] == pytest.approx(2.094 * lb_ft * 300.0, rel=2e-3)
    # Grigsby Table 14.5: wind 0.7027 lb/ft on the wind span; a straight line adds no line-angle load.
    assert p2["transverse_n"] == pytest.approx(0.7027 * lb_ft * 300.0, rel=5e-4)
    # The sag still hangs from the resultant with K: 2.509 lb/ft (Grigsby Table 14.5) sets c = H / w.
    assert span["horizontal_tension_n"] / span["catenary_m"] == pytest.approx(2.509 * lb_ft, rel=5e-4)


@pytest.fixture
def angle_line(tmp_path):
    """A 30 deg right turn at strain structure P2; spans 300 m; three phases."""
    heading = math.radians(-30.0)
    xy = [(X0, Y0 + 300), (X0 + 300, Y0 + 300),
          (X0 + 300 + 300 * math.cos(heading), Y0 + 300 + 300 * math.sin(heading))]
    write_plane_raster(tmp_path / "terrain.tif", a=100.0)
    write_structures(tmp_path / "structures.gpkg", xy, kinds=["strain", "strain", "strain"])
    return write_project(tmp_path, cases=[("still", 15.0, 0.0, 0.0)], extra=PHASES), np.asarray(xy)


def distance_to_line(point, a, b):
    d = (b - a) / np.linalg.norm(b - a)
    v = point - a
    return abs(v[0] * d[1] - v[1] * d[0])


def test_phases_at_a_30_degree_angle_land_on_the_bisector(angle_line):
    path, xy = angle_line
    result = routesag.run(path)
    loads = result["structure_loads"]
    for wire, offset in (("L", -4.5), ("C", 0.0), ("R", 4.5)):
        clamp = by(loads, structure_id="P2", wire=wire).geometry
        point = np.array([clamp.x, clamp.y])
        # On the bisector of the line angle: equally far from both span lines, 4.5 cos 15 deg
        # (elementary geometry), and 4.5 m from the structure.
        assert distance_to_line(point, xy[0], xy[1]) == pytest.approx(abs(offset) * math.cos(math.radians(15)),
                                                                       abs=1e-6)
        assert distance_to_line(point, xy[1], xy[2]) == pytest.approx(abs(offset) * math.cos(math.radians(15)),
                                                                       abs=1e-6)
        assert np.hypot(*(point - xy[1])) == pytest.approx(abs(offset), abs=1e-6)
        # The wire of span P1-P2 ends there.
        end = shapely.get_coordinates(by(result["conductors"], span_id="A:P1-P2", wire=wire).geometry)[-1]
        np.testing.assert_allclose(end, point, atol=1e-6)
    # The right phase is on the inside of a right turn: south of the first span.
    assert by(loads, structure_id="P2", wire="R").geometry.y < xy[1, 1]
    # Line ends: perpendicular to the single span.
    start = by(loads, structure_id="P1", wire="R").geometry
    assert (start.x, start.y) == pytest.approx((xy[0, 0], xy[0, 1] - 4.5), abs=1e-6)


def test_angle_structure_carries_2h_sin_half_angle(angle_line):
    path, _ = angle_line
    result = routesag.run(path)
    centre = by(result["structure_loads"], structure_id="P2", wire="C")
    h = by(result["conductors"], span_id="A:P1-P2", wire="C")["horizontal_tension_n"]
    # Equal spans, so both sections hold the same tension: 2 H sin(15 deg) transverse (ASCE Manual 74,
    # standard statics), nothing longitudinal; a dead end takes the full tension along the line.
    assert by(result["conductors"], span_id="A:P2-P3", wire="C")["horizontal_tension_n"] == pytest.approx(h)
    assert centre["transverse_n"] == pytest.approx(2 * h * math.sin(math.radians(15)), rel=1e-9)
    assert centre["longitudinal_n"] == pytest.approx(0.0, abs=1e-6)
    assert by(result["structure_loads"], structure_id="P1", wire="C")["longitudinal_n"] == pytest.approx(h)
    assert centre["deviation_deg"] == pytest.approx(30.0)


@pytest.fixture
def phased_survey(tmp_path):
    """Four structures (P2 suspension with a 1.8 m string), three phases and an earth wire."""
    write_plane_raster(tmp_path / "terrain.tif", a=100.0, bx=0.01, cy=0.02)
    write_structures(tmp_path / "structures.gpkg", [(X0 + x, Y0 + 200.0) for x in (0.0, 300.0, 550.0, 900.0)],
                     kinds=["strain", "suspension", "strain", "strain"],
                     extra={"insulator_m": [None, 1.8, None, None]})
    return write_project(tmp_path, cases=[("hot", 90.0, 0.0, 0.0), ("strung", 15.0, 0.0, 0.0)],
                         extra=PHASES + EARTH_WIRE)


def test_every_wire_gets_its_own_rows_and_solution(phased_survey):
    result = routesag.run(phased_survey)
    conductors = result["conductors"]
    assert len(conductors) == 3 * 4 * 2  # spans x wires x load cases
    assert sorted(conductors["wire"].unique()) == ["C", "E", "L", "R"]
    earth = conductors[(conductors.wire == "E") & (conductors.load_case == "strung")]
    # The earth wire's own stringing: 20 % of its own 50 kN, at the stringing temperature.
    np.testing.assert_allclose(earth["horizontal_tension_n"], 0.2 * 50e3, rtol=1e-6)
    phase = conductors[(conductors.wire == "C") & (conductors.load_case == "strung")]
    np.testing.assert_allclose(phase["horizontal_tension_n"], 30e3, rtol=1e-6)
    loads = result["structure_loads"]
    assert len(loads) == 4 * 4 * 2
    structures = result["structures"].set_index("structure_id")
    attach_z = structures.loc["P2", "attach_z_m"]
    # The earth wire is clamped 5 m above the attachment; the phases hang 1.8 m below it on the string.
    assert by(loads, structure_id="P2", wire="E", load_case="hot").geometry.z == pytest.approx(attach_z + 5.0)
    assert by(loads, structure_id="P2", wire="L", load_case="hot").geometry.z == pytest.approx(attach_z - 1.8)
    assert structures.loc["P2", "insulator_m"] == 1.8


def test_wire_columns_reach_the_geopackage(phased_survey):
    phased_survey.write_text(phased_survey.read_text().replace("ground_m = 7.5", "ground_m = 30.0"))
    routesag.run(phased_survey)
    path = phased_survey.parent / "out.gpkg"
    for layer in ("conductors", "clearance_violations", "structure_loads"):
        assert "wire" in pyogrio.read_info(path, layer=layer)["fields"], layer
    info = pyogrio.read_info(path, layer="structure_loads")
    assert info["geometry_type"] == "Point Z"
    assert {"structure_id", "load_case", "weight_span_m", "wind_span_m", "vertical_n", "transverse_n",
            "longitudinal_n", "uplift"} <= set(info["fields"])
    violations = pyogrio.read_dataframe(path, layer="clearance_violations")
    assert set(violations["wire"]) == {"L", "C", "R", "E"}


def test_default_wire_is_named_after_the_line(survey):
    result = routesag.run(survey)
    assert set(result["conductors"]["wire"]) == {"A"}
    assert set(result["structure_loads"]["wire"]) == {"A"}


def test_insulator_on_a_strain_structure_is_ignored_with_a_warning(tmp_path):
    write_plane_raster(tmp_path / "terrain.tif", a=100.0)
    write_structures(tmp_path / "structures.gpkg", [(X0, Y0 + 200), (X0 + 300, Y0 + 200)],
                     kinds=["strain", "strain"], extra={"insulator_m": [1.8, None]})
    result = routesag.run(write_project(tmp_path))
    assert any("structure P1: insulator_m ignored" in w for w in result.warnings)
    assert (result["structure_loads"]["insulator_m"] == 0).all()


@pytest.mark.parametrize("length", [-0.5, 20.0])
def test_impossible_string_length_is_refused(tmp_path, length):
    write_plane_raster(tmp_path / "terrain.tif", a=100.0)
    write_structures(tmp_path / "structures.gpkg", [(X0, Y0 + 200), (X0 + 300, Y0 + 200), (X0 + 600, Y0 + 200)],
                     extra={"insulator_m": [None, length, None]})
    with pytest.raises(DataError, match=r"structures file .*structures.gpkg: structure P2 \(row 2\): "
                                        r"field 'insulator_m'"):
        routesag.run(write_project(tmp_path))


def test_wire_conductor_problems_name_the_wire(survey):
    survey.write_text(survey.read_text() + EARTH_WIRE.replace("area_mm2 = 157.2\n", "")
                      .replace("tension_percent_rts = 20.0", "tension_percent_rts = 20.0\ncatenary_m = 900.0"))
    with pytest.raises(ProjectError) as info:
        routesag.load_project(survey)
    problems = "\n".join(info.value.problems)
    assert "[[wires]] #1 ('E') conductor: missing 'area_mm2'" in problems
    assert "[[wires]] #1 ('E') stringing: give exactly one of" in problems


def test_string_at_an_angle_suspension_swings_to_the_inside(tmp_path):
    heading = math.radians(-10.0)
    xy = [(X0, Y0 + 300), (X0 + 300, Y0 + 300),
          (X0 + 300 + 300 * math.cos(heading), Y0 + 300 + 300 * math.sin(heading))]
    write_plane_raster(tmp_path / "terrain.tif", a=100.0)
    write_structures(tmp_path / "structures.gpkg", xy, kinds=["strain", "suspension", "strain"],
                     heights=[18.2, 20.0, 18.2], extra={"insulator_m": [None, 1.8, None]})
    result = routesag.run(write_project(tmp_path, cases=[("still", 15.0, 0.0, 0.0)]))
    p2 = by(result["structure_loads"], structure_id="P2")
    h = by(result["conductors"], span_id="A:P1-P2")["horizontal_tension_n"]
    # No wind: the string carries only the line-angle load 2 H sin(5 deg) (ASCE Manual 74) against the
    # weight on its weight span, psi = atan(P / V) (FIELD.md §8 form, from memory).
    angle_load = 2 * h * math.sin(math.radians(5.0))
    assert p2["transverse_n"] == pytest.approx(angle_load, rel=1e-9)
    assert math.radians(p2["swing_deg"]) == pytest.approx(
        math.atan(angle_load / (1.628 * G * p2["weight_span_m"])), rel=1e-9)
    # Towards the inside of the right turn: the clamp moves along the bisector's right-hand normal.
    across = np.array([math.sin(math.radians(-5.0)), -math.cos(math.radians(-5.0))])
    moved = np.array([p2.geometry.x, p2.geometry.y]) - np.asarray(xy[1])
    np.testing.assert_allclose(moved, 1.8 * math.sin(math.radians(p2["swing_deg"])) * across, atol=1e-9)
