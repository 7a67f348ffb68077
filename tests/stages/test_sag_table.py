"""Stringing sag tables: shape, the stringing state, and an independent parabolic estimate."""
import numpy as np
import pandas as pd
import pyogrio
import pytest
from click.testing import CliRunner

import routesag
from routesag.cli import main

G = 9.80665
# The conftest survey: Drake (FIELD.md section 5) E 70 GPa, alpha 18.9e-6; stringing 30 kN at 15 C;
# sections S1 (spans 300, 250 m) and S2 (350 m).
W_N_M, EA_N, ALPHA = 1.628 * G, 70e9 * 468.6e-6, 18.9e-6
H0_N, T0_C = 30e3, 15.0
TEMPERATURES = np.arange(-20, 55, 5)


def parabolic_tension_n(span_m, temperature_c):
    """Parabolic change-of-state cubic (Grigsby ch. 14, FIELD.md section 3), bare wire both states."""
    b = -H0_N + EA_N * W_N_M**2 * span_m**2 / (24 * H0_N**2) + EA_N * ALPHA * (temperature_c - T0_C)
    roots = np.roots([1.0, b, 0.0, -EA_N * W_N_M**2 * span_m**2 / 24])
    return max(r.real for r in roots if abs(r.imag) < 1e-6 * abs(r) and r.real > 0)


@pytest.fixture
def table(survey):
    return routesag.run(survey)["sag_table"]


def test_rows_per_section_span_and_temperature(table):
    assert sorted(table["temperature_c"].unique()) == list(TEMPERATURES)
    counts = table.groupby(["section_id", "kind"]).size().to_dict()
    assert counts == {("A:P1-P3", "ruling"): 15, ("A:P1-P3", "span"): 30, ("A:P3-P4", "ruling"): 15,
                      ("A:P3-P4", "span"): 15}
    assert (table["condition"] == "initial").all()
    assert table[table.kind == "span"]["span_id"].unique().tolist() == ["A:P1-P2", "A:P2-P3", "A:P3-P4"]


def test_stringing_temperature_gives_the_stringing_tension(table):
    at_stringing = table[table["temperature_c"] == T0_C]
    np.testing.assert_allclose(at_stringing["horizontal_tension_n"], H0_N, rtol=1e-9)


def test_ruling_span_agrees_with_the_parabolic_estimate(table):
    ruling = table[table["kind"] == "ruling"]
    for _, row in ruling.iterrows():
        expected_n = parabolic_tension_n(row["span_m"], row["temperature_c"])
        assert row["horizontal_tension_n"] == pytest.approx(expected_n, rel=3e-3)
        # Parabolic sag w S^2 / 8H (FIELD.md section 1); the catenary differs by well under 1 %.
        assert row["sag_m"] == pytest.approx(W_N_M * row["span_m"] ** 2 / (8 * expected_n), rel=5e-3)


def test_every_span_shares_the_section_tension_and_sags_more_when_hot(table):
    spans = table[table["kind"] == "span"]
    shared = spans.merge(table[table.kind == "ruling"][["section_id", "temperature_c", "horizontal_tension_n"]],
                         on=["section_id", "temperature_c"], suffixes=("", "_ruling"))
    np.testing.assert_array_equal(shared["horizontal_tension_n"], shared["horizontal_tension_n_ruling"])
    for _, group in spans.groupby("span_id"):
        assert np.all(np.diff(group.sort_values("temperature_c")["sag_m"]) > 0)
    # Mid-span sag of an inclined parabola is w S^2 / 8H as on a level span (FIELD.md section 1).
    np.testing.assert_allclose(spans["sag_m"], W_N_M * spans["span_m"] ** 2 / (8 * spans["horizontal_tension_n"]),
                               rtol=5e-3)


def test_run_writes_the_sag_table_layer(survey, table):
    stored = pyogrio.read_dataframe(survey.parent / "out.gpkg", layer="sag_table")
    assert len(stored) == len(table) and "geometry" not in stored.columns


def test_sag_table_command_writes_csv(survey, tmp_path, table):
    out = tmp_path / "sag.csv"
    result = CliRunner().invoke(main, ["sag-table", str(survey), "--csv", str(out)])
    assert result.exit_code == 0, result.output
    assert "75 rows, 2 tension sections" in result.output
    written = pd.read_csv(out)
    assert written.columns.tolist()[:4] == ["section_id", "wire", "kind", "span_id"]
    np.testing.assert_allclose(written["sag_m"], table["sag_m"], atol=5e-4)


def test_sag_table_command_prints_csv_and_writes_no_geopackage(survey):
    result = CliRunner().invoke(main, ["sag-table", str(survey), "--csv", "-"])
    assert result.exit_code == 0, result.output
    lines = result.output.splitlines()
    assert lines[0].startswith("section_id,wire,kind,span_id") and len(lines) == 1 + 75
    assert not (survey.parent / "out.gpkg").exists()


def test_only_the_stages_the_table_needs_run(survey):
    from routesag.api import compute

    seen = []
    data = compute(survey, ("sag_table",), progress=seen.append)
    # the point cloud stages too: with [stringing] source = "as_found" the tensions start from the fitted state
    assert seen == ["read_inputs", "build_spans", "read_point_cloud", "fit_wires", "solve_tensions",
                    "build_sag_table"]
    assert "sag_table" in data and "conductors" not in data


def test_sag_table_into_a_missing_folder_is_bad_output(survey, tmp_path):
    result = CliRunner().invoke(main, ["sag-table", str(survey), "--csv", str(tmp_path / "no" / "sag.csv")])
    assert result.exit_code == 2 and "cannot write the sag table" in result.output
