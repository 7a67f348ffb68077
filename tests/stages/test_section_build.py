"""A tension section built at once (stacked stations) equals the same section built profile by profile.

The reference below builds every profile on its own from the per-span physics (span_geometry,
conductor_stations, conductor_points, exact_minimum_stations) and samples the terrain per profile. The section
is invented: three inclined spans, two wires, still air, ice and wind blowing either way (blowout, a curved plan
path), over a rough raster with a nodata hole, in the working CRS and in lat/lon.
"""
import math

import numpy as np
import pandas as pd
import pytest
import rasterio
from rasterio.transform import from_origin

from routesag.io.terrain import TerrainSampler
from routesag.physics.bilinear import exact_minimum_stations
from routesag.physics.conductor3d import conductor_points, conductor_stations, span_geometry
from routesag.physics.stacked import StackedStations
from routesag.stages.conductors import TerrainView, span_cases, span_profiles

CRS = "EPSG:32633"
X0, Y0 = 500_000.0, 5_600_000.0
DRAKE_N_M = 15.965                 # bare Drake, 1.628 kg/m x 9.80665 (FIELD.md §5)


def rough_raster(path, geographic=False):
    """Rough ground (kinks and vertices everywhere) with a nodata hole under the second span."""
    rng = np.random.default_rng(5)
    z = (100.0 + rng.uniform(0.0, 4.0, size=(260, 900))).astype("float32")
    z[120:135, 420:445] = -9999.0
    if geographic:  # the same area in degrees: about 1 m cells at 50.55 N
        transform, crs = from_origin(14.99929, 50.55310, 1.42e-5, 9e-6), "EPSG:4326"
    else:
        transform, crs = from_origin(X0 - 50.0, Y0 + 130.0, 1.0, 1.0), CRS
    with rasterio.open(path, "w", driver="GTiff", width=900, height=260, count=1, dtype="float32", crs=crs,
                       transform=transform, nodata=-9999.0) as dst:
        dst.write(z, 1)


def section_cases(origin):
    """Columns of one section: 3 spans x 2 wires x 3 load cases, in span order (as span_cases gives them)."""
    towers = [origin + np.array(d) for d in ((0.0, 0.0, 125.0), (260.0, 25.0, 131.0), (520.0, 10.0, 122.0),
                                             (790.0, 40.0, 128.0))]
    wind_n_m = 700.0 * 0.02814
    loads = {"hot": (DRAKE_N_M, 0.0, 1.0, 21_000.0), "ice": (32.0, 0.0, 1.0, 30_000.0),
             "wind": (math.hypot(DRAKE_N_M, wind_n_m), math.atan2(wind_n_m, DRAKE_N_M), 1.0, 27_000.0)}
    rows = []
    for k in range(3):
        for wire, offset, side in (("left", -3.0, 1.0), ("right", 3.0, -1.0)):
            a, b = towers[k] + [0.0, offset, 0.0], towers[k + 1] + [0.0, offset, 0.0]
            for case, (w, phi, _, h) in loads.items():
                rows.append({"x0": a[0], "y0": a[1], "z0": a[2], "x1": b[0], "y1": b[1], "z1": b[2],
                             "horizontal_tension_n": h, "resultant_n_m": w, "blowout_rad": phi,
                             "blowout_deg": math.degrees(phi), "side": side, "span_id": f"S{k}",
                             "section_id": "T1", "load_case": case, "wire": wire})
    return {name: [row[name] for row in rows] for name in rows[0]}, rows


def reference_profile(row, station_m, sampler, crs):
    """One profile on its own, the straightforward way."""
    start = np.array([row["x0"], row["y0"], row["z0"]])
    end = np.array([row["x1"], row["y1"], row["z1"]])
    span_m = float(np.hypot(*(end - start)[:2]))
    args = (row["horizontal_tension_n"], row["resultant_n_m"], row["blowout_rad"])
    geometry = span_geometry(span_m, end[2] - start[2], *args)

    def at(s):
        return conductor_points(start, end, *args, s, side=row["side"])

    def grid_uv(s):
        xyz = at(s)
        return sampler.grid_coords(xyz[:, 0], xyz[:, 1], crs=crs)

    def clearance(s):
        xyz = at(s)
        return xyz[:, 2] - sampler.sample(xyz[:, 0], xyz[:, 1], crs=crs)

    stations = exact_minimum_stations(conductor_stations(span_m, station_m, float(geometry.low_point_m)),
                                      grid_uv, clearance)
    xyz = at(stations)
    across = np.array([end[1] - start[1], start[0] - end[0]]) / span_m
    reach = 0.0 if row["blowout_rad"] == 0 else float(np.max(np.abs((xyz[:, :2] - start[:2]) @ across)))
    return stations, xyz, geometry, reach


@pytest.mark.parametrize("geographic", [False, True])
def test_section_at_once_equals_profile_by_profile(tmp_path, geographic):
    path = tmp_path / "terrain.tif"
    rough_raster(path, geographic)
    cases, rows = section_cases(np.array([X0, Y0, 0.0]))
    station_m = 1.0
    with TerrainSampler(path, hold_windows=16) as sampler:
        profiles = span_profiles(cases, station_m, TerrainView(sampler, CRS))
        with TerrainSampler(path) as alone:  # no held windows: every reference profile reads its own
            reference = [reference_profile(row, station_m, alone, CRS) for row in rows]
        ground = [sampler.sample(p.xyz[:, 0], p.xyz[:, 1], crs=CRS) for p in profiles]
    assert [p.key for p in profiles] == [(r["section_id"], r["span_id"], r["wire"], r["load_case"]) for r in rows]
    for p, (stations, xyz, geometry, reach) in zip(profiles, reference, strict=True):
        assert len(p.stations_m) == len(stations) > 1.3 * stations[-1] / station_m  # crossings and vertices added
        np.testing.assert_allclose(p.stations_m, stations, rtol=0, atol=1e-9)
        np.testing.assert_allclose(p.xyz, xyz, rtol=0, atol=1e-8)
        assert np.all(np.diff(p.stations_m) > 0)
        assert p.sag_m == pytest.approx(float(geometry.sag_m), abs=1e-12)
        assert p.low_point_m == pytest.approx(float(geometry.low_point_m), abs=1e-12)
        assert p.max_tension_n == pytest.approx(float(geometry.max_tension_n), rel=1e-14)
        assert p.blowout_m == pytest.approx(reach, abs=1e-9)
    blown = [p for p in profiles if p.load_case == "wind"]
    assert all(p.blowout_m > 1.0 for p in blown)
    assert any(np.isnan(g).any() for g in ground)          # the nodata hole is under some wire
    assert all(np.isfinite(g).any() for g in ground)


def test_span_cases_follow_the_merge_order(tmp_path):
    """span_cases gives the rows, order and clamps the pandas merges gave (the definition it replaced)."""
    rng = np.random.default_rng(2)
    spans = pd.DataFrame({"span_id": ["a", "a", "b", "b", "c", "c"], "line_id": "L",
                          "wire": ["p", "q", "q", "p", "p", "q"], "from_id": ["1", "1", "2", "2", "3", "3"],
                          "to_id": ["2", "2", "3", "3", "4", "4"], "section_id": ["s1", "s1", "s1", "s1", "s2", "s2"]})
    for col in ("x0", "y0", "z0", "x1", "y1", "z1"):
        spans[col] = rng.uniform(0, 1, len(spans))
    tensions = pd.DataFrame({"section_id": ["s2", "s1", "s1", "s1", "s1", "s2"], "wire": ["p", "q", "p", "q", "p", "q"],
                             "load_case": ["hot", "hot", "hot", "cold", "cold", "hot"]})
    for col in ("horizontal_tension_n", "resultant_n_m", "blowout_rad", "blowout_deg", "side"):
        tensions[col] = rng.uniform(0, 1, len(tensions))
    loads = pd.DataFrame([{"line_id": "L", "structure_id": s, "wire": w, "load_case": c}
                          for s in "1234" for w in "pq" for c in ("hot", "cold") if (s, w, c) != ("4", "q", "hot")])
    loads = loads.sample(frac=1.0, random_state=1).reset_index(drop=True)
    loads[["x", "y", "z"]] = rng.uniform(0, 1, (len(loads), 3))
    merged = spans.drop(columns=["x0", "y0", "z0", "x1", "y1", "z1"]).merge(tensions, on=["section_id", "wire"],
                                                                            sort=False)
    clamps = loads[["line_id", "structure_id", "wire", "load_case", "x", "y", "z"]]
    for end, structure in (("0", "from_id"), ("1", "to_id")):
        merged = merged.merge(clamps.rename(columns={"structure_id": structure, "x": f"x{end}", "y": f"y{end}",
                                                     "z": f"z{end}"}),
                              on=["line_id", structure, "wire", "load_case"], how="left", sort=False)
    cases = span_cases(spans, tensions, loads)
    for name in ("span_id", "wire", "load_case", "section_id"):
        assert list(cases[name]) == list(merged[name])
    for name in ("horizontal_tension_n", "side", "x0", "z0", "x1", "y1"):
        np.testing.assert_array_equal(cases[name], merged[name].to_numpy())  # NaN where a clamp is missing
    assert np.isnan(cases["x1"]).any()


def test_stacked_stations_gather_equals_unique_per_wire():
    rng = np.random.default_rng(4)
    values, wire = [], []
    for k in range(6):
        base = np.sort(rng.uniform(0.0, 300.0, 200))
        near = base[:50] + rng.choice([0.0, 1e-13, -2e-12, 5e-12], 50)  # repeats and values within rounding
        values += [base, near, rng.uniform(0.0, 300.0, 20)]
        wire += [np.full(270, k)]
    values, wire = np.concatenate(values), np.concatenate(wire)
    shuffle = rng.permutation(len(values))
    stacked, source = StackedStations.gather(values[shuffle], wire[shuffle], 7, with_source=True)
    for k, got in enumerate(stacked.split()):
        np.testing.assert_array_equal(got, np.unique(values[wire == k]))
    np.testing.assert_array_equal(values[shuffle][source], stacked.values)
    assert stacked.counts[6] == 0


def test_a_section_without_cases_gives_no_profiles(tmp_path):
    path = tmp_path / "terrain.tif"
    rough_raster(path)
    empty = {name: [] for name in section_cases(np.array([X0, Y0, 0.0]))[0]}
    with TerrainSampler(path, hold_windows=16) as sampler:
        assert span_profiles(empty, 1.0, TerrainView(sampler, CRS)) == []
        assert sampler.sample_window_count == 0
