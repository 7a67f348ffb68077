"""Every section and wire solved together gives the rows each gets when solved alone.

The tensions stage and the sag table solve all their changes of state in a few vectorised calls
grouped by stretch laws and span count; these tests make the groups mixed (wires of different
conductors, offset wires whose spans differ on an angled line, initial and final conditions) so a
row taken from the wrong group or position would show.
"""
import numpy as np
import pandas as pd
import pytest

import routesag.api as api
from routesag.stages.as_found import reference_stringing
from routesag.stages.sag_table import section_sag_table
from routesag.stages.tensions import section_tensions
from tests.conftest import X0, Y0, write_plane_raster, write_structures
from tests.test_wires import EARTH_WIRE

# Invented line: two-material Drake phases (catalog conductor) and a small linear earth wire that creeps too.
CASES = [("hot", "temperature_c = 80.0"), ("cold", 'temperature_c = -20.0\ncondition = "initial"'),
         ("ice", "temperature_c = 0.0\nice_mm = 12.5"), ("wind", "temperature_c = 15.0\nwind_pa = 430.0")]
PROJECT = """
[inputs]
structures = "structures.gpkg"
terrain = "terrain.tif"

[line]
attach_height_m = 20.0

[conductor]
name = "Drake"
model = "two_material"

[stringing]
temperature_c = 15.0
horizontal_tension_kn = 28.0
creep_allowance_c = 10.0

[[wires]]
name = "L"
offset_m = -6.0

[[wires]]
name = "C"

[[wires]]
name = "R"
offset_m = 6.0

{cases}
[clearance]
ground_m = 7.5

[output]
path = "out.gpkg"
"""


@pytest.fixture
def angled_line(tmp_path):
    """Seven structures with two line angles and uneven heights: two tension sections of 3 spans each."""
    write_plane_raster(tmp_path / "terrain.tif", a=100.0, bx=0.02, cy=-0.03, shape=(700, 1400),
                       origin=(X0 - 200, Y0 + 700))
    xy = [(0, 200), (310, 230), (560, 250), (900, 330), (1200, 380), (1450, 380), (1800, 420)]
    write_structures(tmp_path / "structures.gpkg", [(X0 + x, Y0 + y) for x, y in xy],
                     kinds=["strain", "suspension", "suspension", "strain", "suspension", "suspension", "strain"],
                     heights=[20.0, 24.0, 18.0, 22.0, 30.0, 19.0, 21.0],
                     extra={"insulator_m": [None, 2.0, 2.0, None, 2.0, 2.0, None]})
    path = tmp_path / "project.toml"
    cases = "\n".join(f'[[load_cases]]\nname = "{name}"\n{keys}\n' for name, keys in CASES)
    path.write_text(PROJECT.format(cases=cases) + EARTH_WIRE + "creep_allowance_c = 10.0\n")
    return path


def solved_alone(data):
    """Rows of every (section, wire), each solved by its own section_tensions call, in the stage's order."""
    project, rows = data["project"], []
    by_wire = dict(tuple(data["wire_spans"].groupby(["section_id", "wire"], sort=False)))
    for _, section in data["sections"].iterrows():
        for wire in project.line_wires(section["line_id"]):
            spans = by_wire[(section["section_id"], wire.name)]
            own = section.copy()
            own["ruling_span_m"] = spans["ruling_span_m"].iloc[0]
            stringing, _, _ = reference_stringing(wire.stringing, data["as_found_states"], section["section_id"],
                                                  wire.name)
            rows += [dict(row, wire=wire.name) for row in section_tensions(own, project, wire.conductor, stringing,
                                                                           spans)]
    return pd.DataFrame(rows)


def test_tensions_solved_together_equal_each_wire_solved_alone(angled_line):
    data = api.compute(angled_line, ("tensions",))
    together, alone = data["tensions"], solved_alone(data)
    assert len(together) == 2 * 4 * 4  # sections x wires x load cases
    assert set(together["condition"]) == {"initial", "final"}
    assert list(together["wire"]) == list(alone["wire"]) and list(together["load_case"]) == list(alone["load_case"])
    for column in alone.columns:
        if pd.api.types.is_float_dtype(alone[column]):
            np.testing.assert_array_equal(together[column].to_numpy(), alone[column].to_numpy(), err_msg=column)
        else:
            assert list(together[column]) == list(alone[column]), column
    # the groups really differ: offset wires have other spans, the earth wire another conductor and no knee
    by = together.set_index(["section_id", "wire", "load_case"])["horizontal_tension_n"]
    first = together["section_id"].iloc[0]
    assert by[(first, "L", "hot")] != by[(first, "R", "hot")]
    assert np.isnan(together.loc[together.wire == "E", "knee_point_initial_c"]).all()
    assert np.isfinite(together.loc[together.wire == "C", "knee_point_final_c"]).all()


def test_sag_table_solved_together_equals_each_wire_alone(angled_line):
    data = api.compute(angled_line, ("sag_table",))
    project, table = data["project"], data["sag_table"]
    first = data["tensions"].drop_duplicates(["section_id", "wire"]).set_index(["section_id", "wire"])
    by_wire = dict(tuple(data["wire_spans"].groupby(["section_id", "wire"], sort=False)))
    parts = []
    for _, section in data["sections"].iterrows():
        for wire in project.line_wires(section["line_id"]):
            key = (section["section_id"], wire.name)
            parts.append(section_sag_table(section, by_wire[key], float(first.loc[key, "stringing_tension_n"]),
                                           wire, np.arange(-20.0, 55.0, 5.0), "initial",
                                           float(first.loc[key, "stringing_temperature_c"])))
    alone = pd.concat(parts, ignore_index=True)
    pd.testing.assert_frame_equal(table, alone, check_exact=True)
    assert table["wire"].nunique() == 4
