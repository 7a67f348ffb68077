"""`routesag sag-table` for crews: temperature range, ruling spans only, long and wide layouts, imperial units,
initial and final, CSV or a terminal table that fits the screen."""
import io

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

import routesag
from routesag.cli import main
from routesag.cli.sag_table import terminal_text

# 1 ft = 0.3048 m, 1 lbf = 4.4482216152605 N (NIST SP 811, Appendix B.8)
FT, LBF = 0.3048, 4.4482216152605


def invoke(*args):
    result = CliRunner().invoke(main, ["sag-table", *map(str, args)])
    assert result.exit_code == 0, result.output
    return result.stdout


def csv_of(*args):
    return pd.read_csv(io.StringIO(invoke(*args, "--csv", "-")))


@pytest.fixture
def reference(survey):
    return routesag.run(survey)["sag_table"]


def test_temperature_range_and_step(survey, reference):
    table = csv_of(survey, "--from", -10, "--to", 30, "--step", 10)
    assert sorted(table["temperature_c"].unique()) == [-10, 0, 10, 20, 30]
    keys = ["section_id", "wire", "kind", "span_id", "temperature_c"]
    merged = table.fillna({"span_id": "-"}).merge(reference.fillna({"span_id": "-"}), on=keys, suffixes=("", "_r"))
    assert len(merged) == len(table)  # same rows as the run's own table at those temperatures
    np.testing.assert_allclose(merged["sag_m"], merged["sag_m_r"], atol=5e-4)


def test_ruling_spans_only(survey):
    table = csv_of(survey, "--spans", "ruling")
    assert set(table["kind"]) == {"ruling"} and len(table) == 2 * 15


def test_wide_layout_one_row_per_span_one_column_per_temperature(survey, reference):
    table = csv_of(survey, "--layout", "wide", "--from", 0, "--to", 20, "--step", 10)
    assert list(table.columns) == ["section_id", "wire", "condition", "kind", "span_id", "span_m",
                                   "sag_m_0C", "sag_m_10C", "sag_m_20C"]
    assert len(table) == 2 + 3  # two ruling spans, three spans
    hot = reference[(reference["span_id"] == "A:P1-P2") & (reference["temperature_c"] == 20)]["sag_m"].iloc[0]
    assert table.loc[table["span_id"] == "A:P1-P2", "sag_m_20C"].iloc[0] == pytest.approx(hot, abs=5e-4)


def test_imperial_units(survey, reference):
    table = csv_of(survey, "--units", "imperial", "--from", 32, "--to", 122, "--step", 18)
    assert sorted(table["temperature_f"].unique()) == [32, 50, 68, 86, 104, 122]
    assert "sag_m" not in table and "temperature_c" not in table
    # 68 F = 20 C, 122 F = 50 C: the same rows as the SI table there, in feet and pounds-force
    si = reference[reference["temperature_c"].isin([20.0, 50.0])].sort_values(["section_id", "kind", "span_m",
                                                                               "temperature_c"])
    im = table[table["temperature_f"].isin([68, 122])].sort_values(["section_id", "kind", "span_ft", "temperature_f"])
    assert len(im) == len(si)
    np.testing.assert_allclose(im["sag_ft"].to_numpy() * FT, si["sag_m"].to_numpy(), atol=2e-3 * FT)
    np.testing.assert_allclose(im["horizontal_tension_lbf"].to_numpy() * LBF, si["horizontal_tension_n"].to_numpy(),
                               atol=LBF)


def test_report_units_sets_the_default(survey):
    survey.write_text(survey.read_text() + '\n[report]\nunits = "imperial"\n')
    assert "sag_ft" in csv_of(survey).columns
    assert "sag_m" in csv_of(survey, "--units", "si").columns


def test_initial_and_final(survey):
    survey.write_text(survey.read_text().replace("horizontal_tension_kn = 30.0",
                                                 "horizontal_tension_kn = 30.0\ncreep_allowance_c = 15.0"))
    table = csv_of(survey, "--condition", "both", "--spans", "ruling")
    initial = table[table["condition"] == "initial"].set_index(["section_id", "temperature_c"])["sag_m"]
    final = table[table["condition"] == "final"].set_index(["section_id", "temperature_c"])["sag_m"]
    assert (final.loc[initial.index] > initial).all()  # creep lengthens the wire
    # the final state at T is the initial state at T + 15 C (creep as an equivalent temperature)
    np.testing.assert_allclose(final.xs(0.0, level=1), initial.xs(15.0, level=1), atol=1e-3)


def test_final_without_creep_allowance_is_refused(survey):
    result = CliRunner().invoke(main, ["sag-table", str(survey), "--condition", "final"])
    assert result.exit_code == 2 and "creep_allowance_c" in result.output


@pytest.mark.parametrize("args", [["--step", "0"], ["--from", "30", "--to", "10"], ["--step", "0.01"]])
def test_bad_temperature_range_exits_2(survey, args):
    result = CliRunner().invoke(main, ["sag-table", str(survey), *args])
    assert result.exit_code == 2


def test_terminal_table_fits_the_width(survey):
    text = invoke(survey)
    assert "section A:P1-P3, wire A, initial" in text and "-20" in text and "50" in text
    table = csv_of(survey)
    for width in (60, 80, 120):
        lines = terminal_text(table, "si", width=width).splitlines()
        assert all(len(line) <= width for line in lines if not line.startswith("section ")), width
    assert len(text.splitlines()) < len(table)  # far fewer lines than the long table's rows


def test_csv_file_written_with_a_note(survey, tmp_path):
    out = tmp_path / "wide.csv"
    result = CliRunner().invoke(main, ["sag-table", str(survey), "--layout", "wide", "--csv", str(out)])
    assert result.exit_code == 0
    assert "5 rows, 2 tension sections (wide, si)" in result.output
    assert len(pd.read_csv(out)) == 5
