"""Tension limits: utilisation, exceedances and the design stringing tension."""
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from routesag.errors import SolveError
from routesag.project import TensionLimit
from routesag.stages.limits import TOLERANCE, limit_checks, utilisation
from routesag.stages.tensions import section_tensions
from tests.stages.test_tensions import by_case, project_file, section

DRAKE_RTS_N = 140.1e3  # FIELD.md section 5: Drake rated strength 31,500 lb (ASTM B232 via CPUC GO 95 Table 23)


def test_utilisation_of_each_criterion():
    horizontal = TensionLimit("a", max_percent_rts=25.0)
    support = TensionLimit("a", max_percent_rts=25.0, applies_to="support")
    both = TensionLimit("a", max_percent_rts=50.0, max_catenary_m=1000.0)
    # 30 kN of 100 kN against 25 %: 1.2; 1500 m against 1000 m: 1.5.
    assert utilisation(horizontal, 30e3, 40e3, 1500.0, 100e3) == pytest.approx(1.2)
    assert utilisation(support, 30e3, 40e3, 1500.0, 100e3) == pytest.approx(1.6)
    assert utilisation(both, 30e3, 40e3, 1500.0, 100e3) == pytest.approx(1.5)
    assert utilisation(both, 30e3, 40e3, 900.0, 100e3) == pytest.approx(0.9)


def test_limit_checks_pick_the_rows_of_their_case():
    tensions = pd.DataFrame({
        "section_id": ["S1", "S1", "S2", "S2"], "load_case": ["cold", "hot"] * 2,
        "condition": "final", "horizontal_tension_n": [30e3, 20e3, 20e3, 10e3],
        "max_support_tension_n": [31e3, 21e3, 21e3, 11e3], "catenary_m": [1900.0, 1250.0, 1250.0, 630.0],
        "rated_strength_n": 100e3})
    checks = limit_checks(tensions, [TensionLimit("cold", max_percent_rts=25.0)])
    assert checks["section_id"].tolist() == ["S1", "S2"]
    assert checks["utilisation"].tolist() == pytest.approx([1.2, 0.8])
    assert checks["percent_rts"].tolist() == pytest.approx([30.0, 20.0])
    assert limit_checks(tensions, []).empty


# NESC-style limits (FIELD.md section 4, Rule 261H1 summary): 60 % RTS loaded, 25 % RTS final unloaded.
# NESC heavy loading (FIELD.md section 4, Grigsby Table 14.5): 12.5 mm ice, 190 Pa, -20 C, K 4.40 N/m.
NESC_CASES = ['name = "heavy"\ntemperature_c = -20.0\nice_mm = 12.5\nwind_pa = 190.0\nconstant_n_m = 4.40\n'
              'condition = "initial"',
              'name = "everyday_final"\ntemperature_c = 15.0\ncondition = "final"',
              'name = "hot"\ntemperature_c = 90.0']
NESC_LIMITS = [TensionLimit("heavy", max_percent_rts=60.0), TensionLimit("everyday_final", max_percent_rts=25.0)]


def design_project(tmp_path, creep_c=15.0):  # 10-25 C typical for ACSR, FIELD.md section 3 (from memory)
    limits = ('\n[[limits]]\nload_case = "heavy"\nmax_percent_rts = 60.0\n'
              '\n[[limits]]\nload_case = "everyday_final"\nmax_percent_rts = 25.0\n')
    project = project_file(tmp_path, f"temperature_c = 15.0\nfrom_limits = true\ncreep_allowance_c = {creep_c}",
                           NESC_CASES, extra=limits)
    assert project.limits == NESC_LIMITS
    return project


def percent_of_drake_rts(row, support=False):
    return 100.0 * row["max_support_tension_n" if support else "horizontal_tension_n"] / DRAKE_RTS_N


@pytest.mark.parametrize("ruling_span_m", [120.0, 300.0, 500.0])
def test_design_tension_meets_every_limit_and_one_is_tight(tmp_path, ruling_span_m):
    rows = by_case(section_tensions(section(ruling_span_m), design_project(tmp_path)))
    heavy, everyday = percent_of_drake_rts(rows["heavy"]), percent_of_drake_rts(rows["everyday_final"])
    assert heavy <= 60.0 * (1 + TOLERANCE) and everyday <= 25.0 * (1 + TOLERANCE)
    tight = max(heavy / 60.0, everyday / 25.0)
    assert tight == pytest.approx(1.0, abs=1e-3)  # within 0.1 %
    governing = rows["hot"]["governing_case"]
    assert governing == ("heavy" if heavy / 60.0 > everyday / 25.0 else "everyday_final")
    assert rows["hot"]["stringing_tension_n"] == rows["hot"]["design_tension_n"] < DRAKE_RTS_N
    assert {r["design_tension_n"] for r in rows.values()} == {rows["hot"]["design_tension_n"]}


@settings(max_examples=25, deadline=None)
@given(ruling_span_m=st.floats(80.0, 600.0), loaded=st.floats(40.0, 70.0), everyday=st.floats(12.0, 30.0),
       creep_c=st.floats(0.0, 30.0), catenary=st.one_of(st.none(), st.floats(800.0, 2500.0)),
       support=st.booleans())
def test_design_never_exceeds_a_limit(tmp_path_factory, ruling_span_m, loaded, everyday, creep_c, catenary,
                                      support):
    project = design_project(tmp_path_factory.mktemp("p"), creep_c)
    project.limits = [TensionLimit("heavy", loaded, applies_to="support" if support else "horizontal"),
                      TensionLimit("everyday_final", everyday, max_catenary_m=catenary)]
    rows = section_tensions(section(ruling_span_m), project,
                            spans=pd.DataFrame({"span_m": [ruling_span_m * 0.8, ruling_span_m * 1.15],
                                                "dz_m": [25.0, -40.0]}))
    checks = limit_checks(pd.DataFrame(rows), project.limits)
    assert (checks["utilisation"] <= 1.0 + TOLERANCE).all()
    assert checks["utilisation"].max() == pytest.approx(1.0, abs=1e-3)


def test_support_limit_is_stricter_on_inclined_spans(tmp_path):
    project = design_project(tmp_path)
    spans = pd.DataFrame({"span_m": [250.0, 400.0], "dz_m": [0.0, 80.0]})
    project.limits = [TensionLimit("heavy", 60.0, applies_to="support")]
    support = by_case(section_tensions(section(350.0), project, spans=spans))["heavy"]
    project.limits = [TensionLimit("heavy", 60.0)]
    horizontal = by_case(section_tensions(section(350.0), project, spans=spans))["heavy"]
    assert percent_of_drake_rts(support, support=True) == pytest.approx(60.0, abs=0.06)
    assert support["design_tension_n"] < horizontal["design_tension_n"]


def test_impossible_or_slack_limits_are_reported(tmp_path):
    project = design_project(tmp_path)
    project.limits = [TensionLimit("everyday_final", max_catenary_m=50.0)]
    with pytest.raises(SolveError, match="tension section S1: the tension limits cannot be met"):
        section_tensions(section(300.0), project)
    project.limits = [TensionLimit("hot", max_percent_rts=99.0)]
    with pytest.raises(SolveError, match="no tension limit binds below the rated strength"):
        section_tensions(section(300.0), project)
