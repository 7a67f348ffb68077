"""The pipeline with creep, tension limits and design tension: layers, columns and the summary."""
import numpy as np
import pyogrio
import pytest

import routesag
from routesag.report import summary_text
from tests.conftest import write_project

DRAKE_RTS_N = 140.1e3  # FIELD.md section 5 (ASTM B232 via CPUC GO 95 Table 23)
LIMITS = '''
[[limits]]
load_case = "cold"
max_percent_rts = {cold}

[[limits]]
load_case = "hot"
max_percent_rts = 40.0
max_catenary_m = 2500.0
applies_to = "support"
'''


def with_creep(path, allowance_c=15.0):
    text = path.read_text().replace("horizontal_tension_kn = 30.0",
                                    f"horizontal_tension_kn = 30.0\ncreep_allowance_c = {allowance_c}")
    path.write_text(text)
    return path


def test_conductors_carry_condition_and_percent_rts(survey):
    conductors = routesag.run(with_creep(survey))["conductors"]
    assert (conductors["condition"] == "final").all()
    np.testing.assert_allclose(conductors["tension_percent_rts"],
                               100 * conductors["horizontal_tension_n"] / DRAKE_RTS_N)
    np.testing.assert_allclose(conductors["max_tension_percent_rts"],
                               100 * conductors["max_tension_n"] / DRAKE_RTS_N)
    info = pyogrio.read_info(survey.parent / "out.gpkg", layer="conductors")
    assert {"condition", "tension_percent_rts"} <= set(info["fields"])


def test_final_sag_equals_initial_sag_at_temperature_plus_allowance(survey, tmp_path):
    # Creep as an equivalent temperature increase (FIELD.md section 3).
    final = routesag.run(with_creep(survey))["conductors"].set_index(["span_id", "load_case"])
    write_project(tmp_path, cases=[("hot", 105.0, 0.0, 0.0), ("cold", -5.0, 0.0, 0.0)])
    initial = routesag.run(tmp_path / "project.toml")["conductors"].set_index(["span_id", "load_case"])
    assert (initial["condition"] == "initial").all()
    np.testing.assert_allclose(final["sag_m"], initial.loc[final.index, "sag_m"], rtol=1e-9)


def test_exceeded_limits_are_listed_and_summarised(survey):
    survey.write_text(survey.read_text() + LIMITS.format(cold=20.0))
    result = routesag.run(survey)
    exceeded = result["tension_exceedances"]
    # Stringing 30 kN at 15 C is already 21.4 % of 140.1 kN, so -20 C exceeds 20 % in both sections.
    assert sorted(exceeded["section_id"]) == ["A:P1-P3", "A:P3-P4"]
    assert (exceeded["load_case"] == "cold").all() and (exceeded["utilisation"] > 1).all()
    assert (exceeded["percent_rts"] > 20.0).all() and (exceeded["max_percent_rts"] == 20.0).all()
    text = summary_text(result)
    assert "tension limits: 4 checks, 2 exceeded" in text
    assert "section A:P1-P3 wire A [cold, initial]: 20 % RTS horizontal exceeded" in text
    stored = pyogrio.read_dataframe(survey.parent / "out.gpkg", layer="tension_exceedances")
    assert len(stored) == 2


def test_no_exceedance_gives_an_empty_table(survey):
    survey.write_text(survey.read_text() + LIMITS.format(cold=30.0))
    result = routesag.run(survey)
    assert result["tension_exceedances"].empty
    info = pyogrio.read_info(survey.parent / "out.gpkg", layer="tension_exceedances")
    assert info["features"] == 0 and "utilisation" in info["fields"]


def test_design_tension_per_section_in_sections_and_summary(survey):
    text = survey.read_text().replace("horizontal_tension_kn = 30.0", "from_limits = true")
    survey.write_text(text + LIMITS.format(cold=22.0))
    result = routesag.run(survey)
    sections = result["sections"].set_index("section_id")
    assert sections["governing_case"].notna().all()
    np.testing.assert_array_equal(sections["design_tension_n"], sections["stringing_tension_n"])
    assert result["tension_exceedances"].empty
    cold = result["conductors"].query("load_case == 'cold'").groupby("section_id")["tension_percent_rts"].max()
    for section_id, row in sections.iterrows():
        if row["governing_case"] == "cold":
            assert cold[section_id] == pytest.approx(22.0, abs=0.022)  # tight within 0.1 %
    assert "design stringing tension per tension section" in summary_text(result)
    stored = pyogrio.read_dataframe(survey.parent / "out.gpkg", layer="sections")
    assert {"design_tension_n", "governing_case", "governing_limit"} <= set(stored.columns)
