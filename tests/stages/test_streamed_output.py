"""Streamed output: conductors reach the temporary GeoPackage section by section, the result is unchanged."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely

import routesag
import routesag.io.gpkg as gpkg
import routesag.stages.output as output
from routesag.api import compute
from routesag.io.gpkg import write_layers


def layer_frames(path):
    """Every layer of a GeoPackage in listed order, geometry as WKB (exact coordinates, Z included)."""
    frames = {}
    for name, _ in pyogrio.list_layers(path):
        frame = pd.DataFrame(pyogrio.read_dataframe(path, layer=name))
        if "geometry" in frame:
            frame["geometry"] = shapely.to_wkb(frame["geometry"].to_numpy(), hex=True)
        frames[name] = frame
    return frames


def in_memory_conductors(project):
    """The conductors layer built at once from the merged sections (how it was written before streaming)."""
    data = compute(project, ("conductors", "clearance", "tensions", "spans", "work_crs"))
    try:
        return output.conductors_layer(data["conductors"], data["clearance"], data["tensions"], data["spans"],
                                       data["work_crs"])
    finally:
        data["terrain"].close()


@pytest.fixture
def deep(tmp_path):
    """The two-section survey with a clearance the wire misses, so there are violation rows too."""
    from tests.conftest import X0, Y0, write_plane_raster, write_project, write_structures

    xs = [0.0, 300.0, 550.0, 900.0, 1200.0]
    write_plane_raster(tmp_path / "terrain.tif", a=100.0, bx=0.01, cy=0.02, shape=(400, 900))
    write_structures(tmp_path / "structures.gpkg", [(X0 + x, Y0 + 200.0) for x in xs],
                     kinds=["strain", "suspension", "strain", "suspension", "strain"])
    return write_project(tmp_path, ground_m=14.0)


def test_streamed_conductors_equal_the_layer_built_at_once(deep, tmp_path, monkeypatch):
    monkeypatch.setattr(output, "STREAM_BATCH_STATIONS", 1)  # every section its own batch
    result = routesag.run(deep, read_back=False)
    assert result["clearance_violations"].shape[0] > 0
    reference = tmp_path / "reference.gpkg"
    write_layers(reference, {"conductors": (in_memory_conductors(deep), "LineString Z")})
    streamed = layer_frames(result.path)["conductors"]
    pd.testing.assert_frame_equal(streamed, layer_frames(reference)["conductors"], check_exact=True)


def test_batch_size_changes_nothing_but_the_number_of_writes(deep, tmp_path, monkeypatch):
    writes = []
    real_write = gpkg._write_one
    monkeypatch.setattr(gpkg, "_write_one", lambda path, name, *a, **k: (writes.append(name),
                                                                          real_write(path, name, *a, **k)))
    frames = {}
    for batch in (1, 10**9):
        monkeypatch.setattr(output, "STREAM_BATCH_STATIONS", batch)
        writes.clear()
        frames[batch] = layer_frames(routesag.run(deep, out=tmp_path / f"b{batch}.gpkg").path)
        frames[batch]["run_info"] = frames[batch]["run_info"].query("key not in ('run_utc', 'output_file')")
        frames[batch]["run_info"] = frames[batch]["run_info"][~frames[batch]["run_info"]["key"].str.contains(
            "seconds")].reset_index(drop=True)
        frames[batch]["layer_styles"] = frames[batch]["layer_styles"].drop(columns="update_time")  # when, not what
        assert writes.count("conductors") == (2 if batch == 1 else 1)  # one transaction per batch of sections
        assert len(writes) == len(set(writes)) + writes.count("conductors") - 1
    assert list(frames[1]) == list(frames[10**9])
    for name in frames[1]:
        pd.testing.assert_frame_equal(frames[1][name], frames[10**9][name], check_exact=True)


def test_failure_after_the_first_section_leaves_no_output_and_no_temporary_file(deep, monkeypatch):
    out = deep.parent / "out.gpkg"
    routesag.run(deep)  # an earlier result (only a GeoPackage may be replaced)
    earlier = out.read_bytes()
    real_take = output.LayerStream.take_section
    calls = []

    def take_then_fail(self, result):
        calls.append(1)
        if len(calls) == 2:
            assert self.writer.temporary.exists()  # the first section's rows are in the temporary file
            raise KeyboardInterrupt
        return real_take(self, result)

    monkeypatch.setattr(output, "STREAM_BATCH_STATIONS", 1)
    monkeypatch.setattr(output.LayerStream, "take_section", take_then_fail)
    with pytest.raises(KeyboardInterrupt):
        routesag.run(deep)
    assert out.read_bytes() == earlier
    assert sorted(p.name for p in deep.parent.iterdir() if p.name.startswith(".")) == []


def test_finish_profiles_keep_their_summary_without_stations(deep):
    from routesag.profiles import Profiles

    data = compute(deep, ("conductors",))
    data["terrain"].close()
    light = output.summaries(data["conductors"])
    assert isinstance(light, Profiles) and light.keys() == data["conductors"].keys()
    assert all(len(p.xyz) == 0 and len(p.stations_m) == 0 for p in light)
    assert [p.sag_m for p in light] == [p.sag_m for p in data["conductors"]]


def test_input_hashes_are_those_of_the_files(deep):
    from routesag.io.hashing import sha256_file

    info = routesag.run(deep)["run_info"].set_index("key")["value"]
    for role in ("structures", "terrain"):
        path = info[f"input.{role}"]
        assert info[f"input.{role}.sha256"] == sha256_file(path)


def test_wire_lengths_at_once_equal_each_polyline_measured_alone():
    rng = np.random.default_rng(8)
    sizes = (2, 3, 17, 1, 250, 2, 0, 129, 1000, 7, 136)  # one run of segments each, at any offset in the stack
    parts = [np.cumsum(rng.normal(size=(n, 3)) * 50.0, axis=0) + 5e5 for n in sizes]
    alone = [float(np.linalg.norm(np.diff(p, axis=0), axis=1).sum()) if len(p) else 0.0 for p in parts]
    assert output.wire_lengths_m(parts) == alone  # bit for bit: the same sums, not only close
    assert output.wire_lengths_m([]) == []


def test_sections_travel_as_rows_and_summaries(deep):
    """Where a section runs, its profiles become conductor rows (geometry as WKB) and summaries without stations;
    the main process receives no station array."""
    from routesag.pipeline import RunContext, assemble_chain, section_tasks, split_phases, run_section, run_stages
    from routesag.project import load_project

    project = load_project(deep, output=deep.parent / "rows.gpkg")
    phases = split_phases(assemble_chain(project.pipeline_stages))
    ctx, data = RunContext(), {"project": project}
    try:
        run_stages(phases.start, data, ctx)
        task = next(section_tasks(phases, data, ctx.section_shapers))
        result, _ = run_section(task)
        rows = result[output.ROWS]
        assert all(len(p.xyz) == 0 for p in result["conductors"])
        assert len(rows.attributes) == len(rows.wkb) == len(result["conductors"])
        assert rows.stations == sum(len(shapely.get_coordinates(g)) for g in shapely.from_wkb(rows.wkb))
        assert "geometry" not in rows.attributes and rows.attributes["section_id"].eq(task.section_id).all()
    finally:
        data["output_stream"].close()
        data["terrain"].close()
    assert not (deep.parent / "rows.gpkg").exists()


@pytest.mark.parametrize("right_rows", [
    [("S2", "a", 2.0), ("S1", "a", 1.0), ("S1", "b", 1.5)],                 # every key once, in another order
    [("S1", "a", 1.0)],                                                      # some rows find nothing
    [("S1", "a", 1.0), ("S1", "a", 9.0), ("S2", "a", 2.0), ("S1", "b", 3.0)],  # a key twice: rows repeat
])
def test_looked_up_columns_are_the_left_merges_or_none(right_rows):
    left = pd.DataFrame({"span_id": ["S1", "S2", "S1"], "wire": ["a", "a", "b"], "sag_m": [1.0, 2.0, 3.0]})
    right = pd.DataFrame(right_rows, columns=["span_id", "wire", "required_m"]).assign(status="ok")
    for on in (["span_id", "wire"], ["span_id"]):
        r = right.drop(columns="wire") if on == ["span_id"] else right
        found = output.looked_up(left.to_dict("list"), r, on)
        merged = left.merge(r, on=on, how="left")
        if found is None:  # the merge decides: it repeats or misses rows
            assert len(merged) != len(left) or merged["required_m"].isna().any()
        else:
            pd.testing.assert_frame_equal(left.assign(**found), merged)
        pd.testing.assert_frame_equal(pd.DataFrame(output.joined(left.to_dict("list"), [(r, on)])), merged)  # either way


def test_line_level_layers_reach_the_file_as_the_first_section_arrives(deep, monkeypatch):
    """They are written while the sections run, not before the first is sent (nor all at the end)."""
    seen = []
    real_take = output.LayerStream.take_section

    def take_and_look(self, result):
        taken = real_take(self, result)
        seen.append(list(self.writer.layers))
        return taken

    monkeypatch.setattr(output, "STREAM_BATCH_STATIONS", 10**9)
    monkeypatch.setattr(output.LayerStream, "take_section", take_and_look)
    routesag.run(deep, read_back=False)
    assert len(seen) == 2 and seen[0] == seen[1]  # two sections; all written at the first
    assert seen[0] == ["structures", "spans", "sections", "tension_exceedances", "sag_table"]


def test_the_styles_legend_from_the_written_rows_equals_the_one_read_from_the_file(deep, tmp_path):
    import sqlite3
    from contextlib import closing

    from routesag.io.layer_styles import styles_for

    result = routesag.run(deep, out=tmp_path / "legend.gpkg", read_back=False)
    with closing(sqlite3.connect(result.path)) as con:
        read = styles_for(con)["conductors"]
        qml = con.execute("SELECT styleQML FROM layer_styles WHERE f_table_name = 'conductors'").fetchone()[0]
    cases = [rule[1][2] for rule in read[1]]
    assert cases == [c["name"] for c in result.project.settings["load_cases"]]  # order of the project's cases
    assert all(f"load case {case}" in qml for case in cases)


@pytest.mark.parametrize("rated_dtype", ["float64", "Float64"])
def test_percent_of_rated_strength_is_the_frame_arithmetic(rated_dtype):
    """The conductor row's percentages, computed on arrays, equal pandas' own on a frame (bit for bit, dtype)."""
    frame = pd.DataFrame({"wire": ["a", "b", "c"], "span_id": ["S1", "S1", "S2"],
                          "horizontal_tension_n": [21_000.0, 23_456.7, 1.0 / 3.0],
                          "max_tension_n": [22_000.0, 24_000.1, 2.0 / 3.0],
                          "rated_strength_n": pd.array([140_000.0, 97_900.0, None], dtype=rated_dtype)})
    expected = frame.assign(
        tension_percent_rts=100.0 * frame["horizontal_tension_n"] / frame["rated_strength_n"],
        max_tension_percent_rts=100.0 * frame["max_tension_n"] / frame["rated_strength_n"]).drop(
        columns="rated_strength_n")
    columns = {"wire": list(frame["wire"]), "span_id": list(frame["span_id"]),
               "horizontal_tension_n": frame["horizontal_tension_n"].to_numpy(),
               "max_tension_n": list(frame["max_tension_n"]), "rated_strength_n": frame["rated_strength_n"].array}
    got = pd.DataFrame(output.with_percent_rts(columns))
    pd.testing.assert_frame_equal(got, expected[["span_id", "wire"] + list(expected.columns[2:])], check_exact=True)
