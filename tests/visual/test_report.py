"""The HTML report built from the demo's GeoPackage: files, links, tables and the profile figures' artists."""
import shutil
import sqlite3
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pyogrio
import pytest
from click.testing import CliRunner

from routesag.cli import main
from routesag.visual import palette
from routesag.visual.profiles import draw_profile
from routesag.visual.results import read_results


class Page(HTMLParser):
    """Every reference (src, href), every id, the tables' rows and the page's text."""

    def __init__(self):
        super().__init__()
        self.refs, self.ids, self.tags, self.text = [], set(), [], []
        self.rows = {}
        self._table = None

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        self.tags.append((tag, attrs))
        if "id" in attrs:
            self.ids.add(attrs["id"])
        for key in ("src", "href"):
            if attrs.get(key) is not None:
                self.refs.append((tag, key, attrs[key]))
        if tag == "table":
            self._table = attrs.get("id")
            self.rows.setdefault(self._table, 0)
        if tag == "tr" and self._table:
            self.rows[self._table] += 1

    def handle_endtag(self, tag):
        if tag == "table":
            self._table = None

    def handle_data(self, data):
        self.text.append(data)


def parse(path: Path) -> Page:
    page = Page()
    page.feed(path.read_text(encoding="utf-8"))
    page.close()
    return page


def layer(path, name):
    return pyogrio.read_dataframe(path, layer=name)


def edited_copy(gpkg, tmp_path, *statements):
    """A copy of the results file with SQL statements applied (a result whose inputs moved or changed), read back."""
    copy = tmp_path / "copy.gpkg"
    shutil.copy(gpkg, copy)
    with sqlite3.connect(copy) as con:
        for statement in statements:
            con.execute(*(statement if isinstance(statement, tuple) else (statement,)))
    return read_results(copy)


def test_report_command_writes_every_expected_file(demo_gpkg, tmp_path):
    out = tmp_path / "rep"
    result = CliRunner().invoke(main, ["report", str(demo_gpkg), "--out", str(out)])
    assert result.exit_code == 0, result.output
    # The spans that need a drawing, found here from the layers themselves.
    ids = set(layer(demo_gpkg, "clearance_violations")["span_id"]) | set(layer(demo_gpkg, "hotspots")["span_id"])
    ids |= set(layer(demo_gpkg, "unknown_stretches")["span_id"])
    assert ids, "the demo is expected to have findings"
    expected = ["index.html", "overview_1.png", "overview_1.svg"]
    for span_id in ids:
        stem = "profile_" + span_id.replace(":", "_")
        expected += [f"{stem}.png", f"{stem}.svg"]
    for name in expected:
        assert (out / name).is_file() and (out / name).stat().st_size > 0, name
    assert len(list(out.glob("profile_*.png"))) == len(ids)


def test_all_draws_every_span(demo_gpkg, tmp_path):
    result = CliRunner().invoke(main, ["report", str(demo_gpkg), "--out", str(tmp_path), "--all"])
    assert result.exit_code == 0, result.output
    assert len(list(tmp_path.glob("profile_*.svg"))) == len(layer(demo_gpkg, "spans"))


def test_html_parses_is_offline_and_every_link_resolves(demo_report):
    page = parse(demo_report.index)
    assert page.refs
    for tag, key, ref in page.refs:
        assert not ref.startswith(("http://", "https://", "//", "file:")), (tag, key, ref)
        if ref.startswith("#"):
            assert ref[1:] in page.ids, ref
        else:
            assert (demo_report.folder / ref).is_file(), ref
    assert not any(tag == "script" and "src" in attrs for tag, attrs in page.tags)
    assert not any(tag == "link" for tag, _ in page.tags)
    styles = demo_report.index.read_text()
    assert "@media print" in styles and "url(" not in styles and "@import" not in styles


def test_html_tables_caution_and_summary(demo_report, demo_gpkg):
    page = parse(demo_report.index)
    text = " ".join(page.text)
    assert "screening aid" in text and "licensed engineer" in text and "EN 50341" in text
    assert "changed or gone" not in text and "changed since the run" not in text  # the demo's inputs are there
    # One header row plus one row per hotspot and per span.
    assert page.rows["hotspots"] == 1 + len(layer(demo_gpkg, "hotspots"))
    assert page.rows["spans"] == 1 + len(layer(demo_gpkg, "spans"))
    info = layer(demo_gpkg, "run_info")
    for sha in info[info["key"].str.endswith(".sha256")]["value"]:
        assert sha in text
    for span_id in layer(demo_gpkg, "hotspots")["span_id"]:
        assert f'href="#profile-{span_id.replace(":", "_")}"' in demo_report.index.read_text()


def test_span_table_reports_the_smaller_of_terrain_and_object_clearance(demo_results):
    from routesag.visual.tables import span_rows

    conductors = demo_results["conductors"]
    for row in span_rows(demo_results):
        for case, worst in row["worst_m"].items():
            if not isinstance(worst, tuple):
                continue
            mine = conductors[(conductors["span_id"] == row["span_id"]) & (conductors["load_case"] == case)]
            smallest = np.nanmin(np.r_[mine["min_clearance_m"].to_numpy(float), mine["min_surface_m"].to_numpy(float)])
            assert worst[0] == pytest.approx(smallest)
    statuses = {r["span_id"]: r["status"] for r in span_rows(demo_results)}
    for span_id in demo_results["clearance_violations"]["span_id"]:
        assert statuses[span_id] == "violation"


def _worst_span(results):
    violations = results["clearance_violations"]
    return str(violations.sort_values("deficit_m", ascending=False)["span_id"].iloc[0])


def test_profile_has_a_line_per_case_the_required_line_and_a_marker_per_violation(demo_results):
    span_id = _worst_span(demo_results)
    fig = draw_profile(demo_results, span_id)
    lines = fig.axes[0].get_lines()
    gids = [line.get_gid() or "" for line in lines]
    cases = sorted(set(demo_results["conductors"]["load_case"]))
    assert sorted(g.removeprefix("wire:") for g in gids if g.startswith("wire:")) == cases
    assert gids.count("required") == 1
    violations = demo_results["clearance_violations"]
    worst_wire = violations.sort_values("deficit_m", ascending=False)["wire"].iloc[0]
    mine = violations[(violations["span_id"] == span_id) & (violations["wire"] == worst_wire)]
    markers = [line for line, gid in zip(lines, gids) if gid == "violation"]
    assert len(markers) == len(mine)
    assert all(m.get_color() == palette.VIOLATION for m in markers)
    assert "vertical exaggeration" in fig.axes[0].get_title()
    hotspots = demo_results["hotspots"]
    ranks = hotspots[(hotspots["span_id"] == span_id) & (hotspots["wire"] == worst_wire)]["rank"]
    assert len(ranks) and sorted(t.get_gid() for t in fig.axes[0].texts if (t.get_gid() or "").startswith(
        "hotspot:")) == sorted(f"hotspot:{r}" for r in ranks)
    assert any("deficit" in t.get_text() for t in fig.axes[0].texts)


def test_profile_ground_and_required_line_match_the_run(demo_results):
    # The drawn terrain and required line must be what the clearances were measured against.
    violations = demo_results["clearance_violations"]
    # against the terrain: not the surface model's or the point cloud's objects (distances in 3D)
    ground = violations[~violations["category"].isin(["surface", "vegetation", "building"])].sort_values("deficit_m", ascending=False).iloc[0]
    fig = draw_profile(demo_results, str(ground["span_id"]))
    lines = {line.get_gid(): line for line in fig.axes[0].get_lines()}
    station, terrain = lines["terrain"].get_data()
    _, required = lines["required"].get_data()
    at = int(np.argmin(np.abs(station - ground["station_m"])))
    assert abs(station[at] - ground["station_m"]) < 1.0
    # Within the slope over one station step (the figure samples the first load case's plan position).
    assert terrain[at] == pytest.approx(ground["ground_z_m"], abs=0.3)
    assert required[at] - terrain[at] == pytest.approx(ground["required_m"])


def test_missing_or_changed_terrain_is_said_on_the_figure(demo_gpkg, tmp_path):
    results = edited_copy(demo_gpkg, tmp_path, ("UPDATE run_info SET value = ? WHERE key = 'input.terrain'", (str(tmp_path / "gone.tif"),)),
                          "UPDATE run_info SET value = 'ff' WHERE key = 'input.surface.sha256'")
    fig = draw_profile(results, _worst_span(results))
    gids = [line.get_gid() for line in fig.axes[0].get_lines()]
    assert "terrain" not in gids and "required" not in gids
    note = " ".join(t.get_text() for t in fig.axes[0].texts if t.get_gid() == "raster_note")
    assert "not found" in note and "changed since the run" in note


@pytest.mark.parametrize("make, words", [
    (lambda p: p.write_text("not a database"), "cannot be read as a GeoPackage"),
    (lambda p: None, "not found"),
])
def test_bad_results_file_exits_2_naming_it_and_writes_nothing(tmp_path, make, words):
    bad = tmp_path / "bad.gpkg"
    make(bad)
    out = tmp_path / "rep"
    result = CliRunner().invoke(main, ["report", str(bad), "--out", str(out)])
    assert result.exit_code == 2
    assert str(bad) in result.output and words in result.output
    assert not out.exists()


def test_geopackage_that_is_not_a_routesag_result_exits_2(tmp_path, demo_gpkg):
    other = tmp_path / "other.gpkg"
    pyogrio.write_dataframe(layer(demo_gpkg, "structures"), other, layer="poles", driver="GPKG")
    result = CliRunner().invoke(main, ["report", str(other), "--out", str(tmp_path / "rep")])
    assert result.exit_code == 2
    assert "missing layer" in result.output and "hotspots" in result.output and str(other) in result.output


def test_report_folder_that_is_a_file_exits_2(demo_gpkg, tmp_path):
    taken = tmp_path / "taken"
    taken.write_text("keep me")
    result = CliRunner().invoke(main, ["report", str(demo_gpkg), "--out", str(taken)])
    assert result.exit_code == 2 and "is a file" in result.output
    assert taken.read_text() == "keep me"


def test_project_report_dir_builds_the_report_with_the_run(survey):
    import routesag

    text = survey.read_text() + '\n[report]\ndir = "rpt"\ntitle = "Invented test line, re-check"\n'
    survey.write_text(text)
    routesag.run(survey)
    index = survey.parent / "rpt" / "index.html"
    assert index.is_file()
    assert "<h1>Invented test line, re-check</h1>" in index.read_text()


def test_overview_pages_a_long_line_and_draws_every_hotspot(demo_results, monkeypatch):
    from routesag.visual import overview

    monkeypatch.setattr(overview, "SPANS_PER_PAGE", 5)
    pages = list(overview.pages(demo_results))
    spans = demo_results["spans"]
    assert len(pages) == -(-len(spans) // 5)
    assert sum(len(page) for _, page in pages) == len(spans)
    drawn = []
    for line_id, page in pages:
        fig = overview.draw_overview(demo_results, line_id, page)
        gids = [a.get_gid() or "" for a in fig.axes[0].get_children()]  # lines and texts included
        assert "scale_bar" in gids and "north_arrow" in gids
        drawn += [g for g in gids if g.startswith("hotspot:")]
        overview.plt.close(fig)
    assert sorted(drawn) == sorted(f"hotspot:{r}" for r in demo_results["hotspots"]["rank"])


def _required_line(results, category):
    violations = results["clearance_violations"]
    worst = violations[violations["category"] == category].sort_values("deficit_m", ascending=False).iloc[0]
    fig = draw_profile(results, str(worst["span_id"]))
    lines = {line.get_gid(): line for line in fig.axes[0].get_lines()}
    return worst, lines


def test_required_line_follows_the_crossing_categories_of_the_run(demo_results):
    # With the run's crossings file unchanged, the road's required value holds across the whole crossing,
    # not only where the wire happens to violate it.
    road, lines = _required_line(demo_results, "road")
    station, terrain = lines["terrain"].get_data()
    _, required = lines["required"].get_data()
    above = required - terrain
    road_m = road["required_m"]
    assert above[int(np.argmin(np.abs(station - road["station_m"])))] == pytest.approx(road_m)
    on_road = np.isclose(above, road_m)
    assert on_road.sum() > road["end_m"] - road["start_m"] + 2  # stations are 1 m apart in the demo
    assert "changed or gone" not in lines["required"].get_label()


def test_required_line_says_so_when_the_crossings_file_changed(demo_gpkg, tmp_path):
    changed = edited_copy(demo_gpkg, tmp_path, "UPDATE run_info SET value = 'ff' WHERE key = 'input.crossings.sha256'")
    road, lines = _required_line(changed, "road")
    assert "changed or gone" in lines["required"].get_label()


def test_span_table_shows_as_found_tension_only_when_the_sections_carry_it(demo_gpkg, demo_report, tmp_path):
    from routesag.visual.html import span_table

    assert "as-found tension [kN]" in demo_report.index.read_text()  # the demo re-rates from its point cloud
    (tmp_path / "plain").mkdir()
    plain = span_table(edited_copy(demo_gpkg, tmp_path / "plain", "ALTER TABLE sections DROP COLUMN as_found_tension_n"), {})
    assert "as-found" not in plain
    table = span_table(edited_copy(demo_gpkg, tmp_path, "UPDATE sections SET as_found_tension_n = 26500.0"), {})
    assert "as-found tension [kN]" in table and 'data-v="26.5"' in table


def test_the_page_says_when_the_figures_lack_the_run_s_inputs(demo_gpkg, tmp_path):
    from routesag.visual.html import index_html

    page = index_html(edited_copy(demo_gpkg, tmp_path, ("UPDATE run_info SET value = ? WHERE key = 'input.terrain'", (str(tmp_path / "gone.tif"),)),
                                  "UPDATE run_info SET value = 'ff' WHERE key = 'input.project.sha256'"), {}, [])
    assert "gone.tif not found" in page and "only where violated" in page
