"""Section tensions: a catalog Drake against the published final rows, creep as a temperature shift."""
import math
import textwrap

import numpy as np
import pandas as pd
import pytest

from routesag.project import load_project
from routesag.stages.tensions import section_tensions

LBF = 4.4482216152605  # N per lbf (NIST SP 811)
FT = 0.3048  # m (exact)
LB_FT = LBF / FT  # N/m per lb/ft
PSF = LBF / FT**2  # Pa per lb/ft2


def fahrenheit(temp_f):
    return (temp_f - 32.0) / 1.8


def project_file(folder, stringing, cases, conductor='name = "Drake"\nmodel = "linear"', extra=""):
    """A project file with only the settings the tension stage reads (inputs are never opened).

    The default conductor is Drake pinned to the linear composite (auto would take its two members): these
    tests are about the change of state, creep allowance and limits of the linear model.
    """
    case_text = "".join(f"\n[[load_cases]]\n{body}\n" for body in cases)
    text = textwrap.dedent(f"""
        [inputs]
        structures = "none.gpkg"
        terrain = "none.tif"

        [conductor]
        {conductor}

        [stringing]
        {stringing}

        [clearance]
        ground_m = 7.5
        """) + case_text + extra
    path = folder / "project.toml"
    path.write_text(text)
    return load_project(path)


def section(ruling_span_m, section_id="S1"):
    return pd.Series({"section_id": section_id, "ruling_span_m": ruling_span_m})


def by_case(rows):
    return {row["load_case"]: row for row in rows}


# Grigsby (ed.), Electric Power Generation, Transmission and Distribution, ch. 14, Table 14.5 (FIELD.md section 7):
# Drake, 700 ft level span, final 5429 lb at 60 F. NESC heavy: 0.5 in ice, 4 psf, K 0.30 lb/ft, 0 F.
DRAKE_FINAL_ROWS = {  # case: (tension lb, sag ft)
    "heavy_0f": (11318.0, 13.61),
    "iced_32f": (9224.0, 13.93),
    "bare_120f": (4330.0, 15.52),
}


@pytest.fixture
def drake_700ft(tmp_path):
    stringing = f"temperature_c = {fahrenheit(60.0)}\nhorizontal_tension_kn = {5429.0 * LBF / 1e3}"
    cases = [
        f'name = "heavy_0f"\ntemperature_c = {fahrenheit(0.0)}\nice_mm = 12.7\nwind_pa = {4 * PSF}\n'
        f'constant_n_m = {0.30 * LB_FT}',
        'name = "iced_32f"\ntemperature_c = 0.0\nice_mm = 12.7',
        f'name = "bare_120f"\ntemperature_c = {fahrenheit(120.0)}',
    ]
    project = project_file(tmp_path, stringing, cases)
    return by_case(section_tensions(section(700.0 * FT), project))


@pytest.mark.parametrize("case", list(DRAKE_FINAL_ROWS))
def test_catalog_drake_reproduces_published_final_rows(drake_700ft, case):
    tension_lb, sag_ft = DRAKE_FINAL_ROWS[case]
    row = drake_700ft[case]
    # Grigsby Table 14.5 final rows up to 120 F; a linear-elastic model lands within 2 % (FIELD.md section 7).
    assert row["horizontal_tension_n"] / LBF == pytest.approx(tension_lb, rel=0.02)
    half_angle = 700.0 * FT / (2.0 * row["catenary_m"])
    sag_m = row["catenary_m"] * (math.cosh(half_angle) - 1.0)  # level-span catenary sag, FIELD.md section 1
    assert sag_m / FT == pytest.approx(sag_ft, rel=0.02)


def test_heavy_load_matches_the_published_resultant(drake_700ft):
    # Grigsby Table 14.5 (FIELD.md section 4): Drake under NESC heavy, resultant + K = 2.509 lb/ft.
    assert drake_700ft["heavy_0f"]["resultant_n_m"] / LB_FT == pytest.approx(2.509, abs=0.002)


def test_level_span_support_tension_is_h_cosh(drake_700ft):
    # FIELD.md section 1: support tension T = H + w D = H cosh(S/2c) on a level span.
    row = drake_700ft["bare_120f"]
    expected = row["horizontal_tension_n"] * math.cosh(700.0 * FT / (2.0 * row["catenary_m"]))
    assert row["max_support_tension_n"] == pytest.approx(expected, rel=1e-9)


@pytest.fixture
def creep_project(tmp_path):
    stringing = "temperature_c = 15.0\nhorizontal_tension_kn = 30.0\ncreep_allowance_c = 20.0"
    cases = ['name = "final_30"\ntemperature_c = 30.0',
             'name = "initial_30"\ntemperature_c = 30.0\ncondition = "initial"',
             'name = "initial_50"\ntemperature_c = 50.0\ncondition = "initial"',
             'name = "final_iced"\ntemperature_c = 0.0\nice_mm = 10.0',
             'name = "initial_iced_20"\ntemperature_c = 20.0\nice_mm = 10.0\ncondition = "initial"']
    return project_file(tmp_path, stringing, cases)


def test_final_state_is_initial_state_at_temperature_plus_allowance(creep_project):
    rows = by_case(section_tensions(section(320.0), creep_project))
    # Creep as an equivalent temperature increase (FIELD.md section 3): final at T == initial at T + 20 C.
    assert rows["final_30"]["horizontal_tension_n"] == pytest.approx(rows["initial_50"]["horizontal_tension_n"],
                                                                     rel=1e-12)
    assert rows["final_iced"]["horizontal_tension_n"] == pytest.approx(
        rows["initial_iced_20"]["horizontal_tension_n"], rel=1e-12)
    # Creep lengthens the wire: the final state at the same temperature is slacker.
    assert rows["final_30"]["horizontal_tension_n"] < 0.97 * rows["initial_30"]["horizontal_tension_n"]
    assert [rows[c]["condition"] for c in ("final_30", "initial_30")] == ["final", "initial"]
    assert rows["final_30"]["state_temperature_c"] == 50.0 and rows["final_30"]["temperature_c"] == 30.0


def test_explicit_conductor_and_stringing_override_the_project(creep_project):
    from dataclasses import replace

    stringing = replace(creep_project.stringing, horizontal_tension_kn=10.0, creep_allowance_c=0.0)
    rows = by_case(section_tensions(section(320.0), creep_project, stringing=stringing))
    assert rows["final_30"]["stringing_tension_n"] == 10e3
    assert rows["final_30"]["horizontal_tension_n"] == pytest.approx(rows["initial_30"]["horizontal_tension_n"])


def test_support_tension_uses_the_section_spans(creep_project):
    spans = pd.DataFrame({"span_m": [300.0, 340.0], "dz_m": [0.0, 60.0]})
    level = by_case(section_tensions(section(320.0), creep_project))["initial_30"]
    inclined = by_case(section_tensions(section(320.0), creep_project, spans=spans))["initial_30"]
    # default method "section": the 60 m rise lengthens the wire, so H differs from the level ruling span's
    assert inclined["horizontal_tension_n"] != pytest.approx(level["horizontal_tension_n"], rel=1e-4)
    # Exact inclined catenary (FIELD.md section 1): T_B = H cosh((S - x_m)/c), x_m = S/2 - c asinh(h/(2c sinh(S/2c))).
    c, s, h = inclined["catenary_m"], 340.0, 60.0
    x_m = s / 2 - c * math.asinh(h / (2 * c * math.sinh(s / (2 * c))))
    assert inclined["max_support_tension_n"] == pytest.approx(inclined["horizontal_tension_n"]
                                                              * math.cosh((s - x_m) / c), rel=1e-9)
    assert np.isnan(inclined["design_tension_n"]) and inclined["governing_case"] is None
