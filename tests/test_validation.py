"""Every bad input gets a clear error: one table of cases, run through the API and the CLI.

Each case builds a small survey in tmp_path, spoils one thing, and names the
error class (checked exactly, not as a subclass) and what the message must say
(the file, the feature, the field, what was expected). The same table runs
through ``routesag run``: exit code 2, the message, no traceback, no output.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from click.testing import CliRunner

import routesag
from routesag.cli import main
from routesag.errors import DataError, OutputError, ProjectError, SolveError
from tests.conftest import CRS, X0, Y0, write_plane_raster, write_project, write_structures

XS = [0.0, 300.0, 550.0, 900.0]  # spans 300, 250, 350 m
KINDS = ["strain", "suspension", "strain", "strain"]


def line_xy(xs=XS):
    return [(X0 + x, Y0 + 200.0) for x in xs]


def good_survey(tmp: Path, **project) -> Path:
    """The conftest survey (terrain plane, 4 structures, 2 tension sections); returns the project file."""
    write_plane_raster(tmp / "terrain.tif", a=100.0, bx=0.01, cy=0.02)
    write_structures(tmp / "structures.gpkg", line_xy(), kinds=KINDS)
    return write_project(tmp, **project)


def edit(path: Path, old: str, new: str) -> Path:
    text = path.read_text()
    assert old in text, old
    path.write_text(text.replace(old, new))
    return path


def write_layer(path: Path, columns: dict, geometry, crs=CRS, layer="structures") -> None:
    gdf = gpd.GeoDataFrame(columns, geometry=geometry, crs=crs)
    gdf.to_file(path, layer=layer, driver="GPKG")


def with_structures(tmp: Path, columns: dict, geometry=None, crs=CRS, **project) -> Path:
    """Good terrain and project; the structures layer built from ``columns``."""
    project_path = good_survey(tmp, **project)
    n = len(next(iter(columns.values())))
    geometry = shapely.points(np.asarray(line_xy(XS[:n]))) if geometry is None else geometry
    write_layer(tmp / "structures.gpkg", columns, geometry, crs)
    return project_path


def heights(value):
    return lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2", "P3"], "seq": [1, 2, 3],
                                             "attach_height_m": [20.0, value, 20.0]})


def stringing(line):
    return lambda tmp: edit(good_survey(tmp), "horizontal_tension_kn = 30.0", line)


def local_grid(unit: str, metres: float) -> str:
    """An engineering (site) CRS: planar coordinates that PROJ cannot place on earth."""
    return (f'ENGCRS["site grid",EDATUM["site"],CS[Cartesian,2],AXIS["x",east,LENGTHUNIT["{unit}",{metres}]],'
            f'AXIS["y",north,LENGTHUNIT["{unit}",{metres}]]]')


def several_layers(tmp: Path) -> Path:
    """A GeoPackage holding a 'poles' point layer and a 'towers' attribute table, no 'structures'."""
    project = good_survey(tmp)
    path = tmp / "structures.gpkg"
    path.unlink()
    write_layer(path, {"structure_id": ["P1", "P2"], "seq": [1, 2]},
                shapely.points(np.asarray(line_xy(XS[:2]))), layer="poles")
    pyogrio.write_dataframe(pd.DataFrame({"structure_id": ["P1"], "seq": [1]}), path, layer="towers")
    return project


def bad_field_and_missing_terrain(tmp: Path) -> Path:
    project = with_structures(tmp, {"structure_id": ["P1", "P2"], "seq": [1, 2], "kind": ["strain", "pole"]})
    return edit(project, 'terrain = "terrain.tif"', 'terrain = "gone.tif"')


def wire_without_creep_allowance(tmp: Path) -> Path:
    """The line creeps 20 C (so every case is final); wire E has its own stringing but no allowance."""
    project = good_survey(tmp, extra='[[wires]]\nname = "E"\n[wires.stringing]\ntemperature_c = 15.0\n'
                                     'horizontal_tension_kn = 10.0\n')
    return edit(project, "horizontal_tension_kn = 30.0", "horizontal_tension_kn = 30.0\ncreep_allowance_c = 20.0")


def with_crossings(crs, layer="crossings"):
    """Good survey plus a road across the first span, written in ``crs`` as it stands (coordinates unchanged)."""
    def build(tmp: Path) -> Path:
        project = good_survey(tmp)
        write_layer(tmp / "crossings.gpkg", {"category": ["road"]},
                    [shapely.box(X0 + 140.0, Y0 + 150.0, X0 + 160.0, Y0 + 250.0)], crs, layer=layer)
        return edit(project, 'terrain = "terrain.tif"',
                    f'terrain = "terrain.tif"\ncrossings = "crossings.gpkg"\ncrossings_layer = "{layer}"')
    return build


def with_cloud(cloud_text: str | None = "x,y,z\n", name="cloud.csv", toml="", stringing_source=None):
    """Good survey reading a point cloud file holding ``cloud_text`` (none written when None), plus TOML."""
    def build(tmp: Path) -> Path:
        project = good_survey(tmp)
        if cloud_text is not None:
            (tmp / name).write_text(cloud_text)
        edit(project, 'terrain = "terrain.tif"',
             f'terrain = "terrain.tif"\npoint_cloud = "{name}"\npoint_cloud_crs = "{CRS}"')
        if stringing_source:
            edit(project, "horizontal_tension_kn = 30.0", f"horizontal_tension_kn = 30.0\nsource = '{stringing_source}'")
        project.write_text(project.read_text() + toml)
        return project
    return build


def no_cloud_but(toml: str):
    return lambda tmp: edit(good_survey(tmp), 'path = "out.gpkg"', 'path = "out.gpkg"\n' + toml)


def vrt_with_missing_source(tmp: Path) -> Path:
    project = good_survey(tmp)
    (tmp / "tiles").mkdir()
    (tmp / "terrain.tif").rename(tmp / "tiles" / "tile_1.tif")
    import rasterio

    with rasterio.open(tmp / "tiles" / "tile_1.tif") as ds:
        width, height, transform = ds.width, ds.height, ds.transform
    (tmp / "terrain.vrt").write_text(
        f'<VRTDataset rasterXSize="{width}" rasterYSize="{height}"><SRS>EPSG:32633</SRS>'
        f'<GeoTransform>{transform.c}, {transform.a}, 0, {transform.f}, 0, {transform.e}</GeoTransform>'
        '<VRTRasterBand dataType="Float32" band="1"><SimpleSource>'
        '<SourceFilename relativeToVRT="1">tiles/tile_1.tif</SourceFilename><SourceBand>1</SourceBand>'
        '</SimpleSource><SimpleSource><SourceFilename relativeToVRT="1">tiles/tile_2.tif</SourceFilename>'
        '<SourceBand>1</SourceBand></SimpleSource></VRTRasterBand></VRTDataset>')
    return edit(project, 'terrain = "terrain.tif"', 'terrain = "terrain.vrt"')


def csv_missing_column_with_a_bad_body(tmp: Path) -> Path:
    """The header lacks 'seq'; the body is malformed, so reading it first would give another error."""
    project = edit(good_survey(tmp, structures="s.csv"), 'terrain = "terrain.tif"',
                   'terrain = "terrain.tif"\ncrs = "EPSG:32633"')
    (tmp / "s.csv").write_text("structure_id,x,y\nP1,1,2\nP2,1,2,3,4,5\n" + "P3,1\n" * 1000)
    return project


@dataclass
class Case:
    id: str
    build: Callable[[Path], Path]   # makes the spoilt survey in tmp_path; returns the project file
    error: type
    match: tuple[str, ...]          # regexes the message must contain


CASES = [
    # -- files and layers ------------------------------------------------------------------------------------
    Case("project file missing", lambda tmp: tmp / "nowhere.toml", ProjectError,
         (r"project file .*nowhere\.toml: not found",)),
    Case("structures file missing", lambda tmp: good_survey(tmp, structures="nope.gpkg"), DataError,
         (r"structures file .*nope\.gpkg: not found",)),
    Case("structures file unreadable",
         lambda tmp: (good_survey(tmp), (tmp / "structures.gpkg").write_bytes(b"\x00junk" * 99))[0],
         DataError, (r"structures file .*structures\.gpkg: cannot be read",)),
    Case("terrain file missing", lambda tmp: good_survey(tmp, terrain="nope.tif"), DataError,
         (r"terrain .*nope\.tif cannot be opened: file not found",)),
    Case("terrain file unreadable",
         lambda tmp: (good_survey(tmp), (tmp / "terrain.tif").write_bytes(b"II*\x00garbage" * 40))[0],
         DataError, (r"terrain .*terrain\.tif cannot be opened as a raster",)),
    Case("unknown layer lists the layers",
         lambda tmp: edit(good_survey(tmp), 'terrain = "terrain.tif"',
                          'terrain = "terrain.tif"\nstructures_layer = "towers"'),
         DataError, (r"structures\.gpkg: no layer 'towers'; layers: structures",)),
    Case("several layers and none named", several_layers, DataError,
         (r"structures\.gpkg: holds 2 layers \(poles, towers\); name the structures layer with "
          r"\[inputs\] structures_layer",)),
    Case("layer without geometry",
         lambda tmp: edit(several_layers(tmp), 'terrain = "terrain.tif"',
                          'terrain = "terrain.tif"\nstructures_layer = "towers"'),
         DataError, (r"structures\.gpkg: layer 'towers' has no geometry; expected points",)),
    Case("empty layer",
         lambda tmp: with_structures(tmp, {"structure_id": pd.Series([], dtype=str),
                                           "seq": pd.Series([], dtype=float)}, gpd.GeoSeries([], crs=CRS)),
         DataError, (r"structures\.gpkg: layer 'structures' is empty",)),
    Case("non-point geometry",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2"], "seq": [1, 2]},
                                     [shapely.LineString([(X0, Y0), (X0 + 1, Y0)]),
                                      shapely.LineString([(X0 + 300, Y0), (X0 + 301, Y0)])]),
         DataError, (r"structure P1 \(row 1\): geometry is LineString; expected Point",
                     r"structure P2 \(row 2\): geometry is LineString")),
    # -- fields ----------------------------------------------------------------------------------------------
    Case("missing required field suggests the near name",
         lambda tmp: with_structures(tmp, {"structureid": ["P1", "P2"], "seq": [1, 2]}),
         DataError, (r"structures\.gpkg: missing required field 'structure_id' \(found 'structureid': "
                     r"map it with \[inputs.fields\] structure_id = 'structureid'\)",)),
    Case("duplicate structure_id in a line",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2", "P1"], "seq": [1, 2, 3]}),
         DataError, (r"the line: structure_id 'P1' appears more than once",)),
    Case("duplicate seq",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2", "P3"], "seq": [1, 2, 2]}),
         DataError, (r"the line: seq 2 is used by structure P2 \(row 2\), structure P3 \(row 3\)",)),
    Case("non-numeric seq",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2", "P3"], "seq": ["1", "two", "3"]}),
         DataError, (r"structure P2 \(row 2\): field 'seq' = 'two' is not a number",)),
    Case("line with one structure",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2", "Q1"], "seq": [1, 2, 1],
                                           "line_id": ["A", "A", "B"]}),
         DataError, (r"line B has only one structure \(structure Q1 \(row 3\)\); a line needs at least two",)),
    Case("two structures at the same spot",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2", "P3"], "seq": [1, 2, 3]},
                                     shapely.points(np.asarray(line_xy([0.0, 0.0, 300.0])))),
         DataError, (r"the line: structures P1 and P2 stand at the same spot \(0\.00 m apart\): "
                     r"zero-length span",)),
    Case("negative attach height", heights(-3.0), DataError,
         (r"structure P2 \(row 2\): field 'attach_height_m' = -3 m; expected 0 < height <= 200 m",)),
    Case("zero attach height", heights(0.0), DataError,
         (r"structure P2 \(row 2\): field 'attach_height_m' = 0 m; expected 0 < height <= 200 m",)),
    Case("absurd attach height", heights(250.0), DataError,
         (r"structure P2 \(row 2\): field 'attach_height_m' = 250 m; expected 0 < height <= 200 m",)),
    Case("unknown kind",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2"], "seq": [1, 2],
                                           "kind": ["strain", "pole"]}),
         DataError, (r"structure P2 \(row 2\): field 'kind' = 'pole' is not a known kind; accepted \(any case\): "
                     r"suspension \(suspension\), tangent \(suspension\), strain \(strain\), dead-end \(strain\)",)),
    Case("ground_z_m in feet typed as metres",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2", "P3"], "seq": [1, 2, 3],
                                           "ground_z_m": [None, 351.0, None]}),
         DataError, (r"structures\.gpkg: structure P2: field 'ground_z_m' = 351\.00 m but the terrain "
                     r".*terrain\.tif is at 107\.00 m there \(244\.00 m apart, more than \[inputs\] "
                     r"ground_z_tolerance_m = 5 m\)", r"ground_z_mismatch = \"warn\"")),
    Case("ground_z_m beyond a tighter tolerance",
         lambda tmp: edit(with_structures(tmp, {"structure_id": ["P1", "P2", "P3"], "seq": [1, 2, 3],
                                                "ground_z_m": [None, 108.5, None]}),
                          'terrain = "terrain.tif"', 'terrain = "terrain.tif"\nground_z_tolerance_m = 1.0'),
         DataError, (r"structure P2: field 'ground_z_m' = 108\.50 m .*\(1\.50 m apart, more than \[inputs\] "
                     r"ground_z_tolerance_m = 1 m",)),
    Case("ground_z_m infinite",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2", "P3"], "seq": [1, 2, 3],
                                           "ground_z_m": [None, float("inf"), None]}),
         DataError, (r"structures\.gpkg: structure P2 \(row 2\): field 'ground_z_m' = inf is not a finite number",)),
    Case("seq infinite",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2", "P3"], "seq": [1.0, 2.0, -float("inf")]}),
         DataError, (r"structure P3 \(row 3\): field 'seq' = -inf is not a finite number",)),
    Case("insulator length infinite",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2", "P3"], "seq": [1, 2, 3],
                                           "insulator_m": [0.0, float("inf"), 0.0]}),
         DataError, (r"structure P2 \(row 2\): field 'insulator_m' = inf is not a finite number",)),
    Case("CSV field inf",
         lambda tmp: (edit(good_survey(tmp, structures="s.csv"), 'terrain = "terrain.tif"',
                           'terrain = "terrain.tif"\ncrs = "EPSG:32633"'),
                      (tmp / "s.csv").write_text(f"structure_id,seq,x,y,ground_z_m\nP1,1,{X0},{Y0 + 200}\n"
                                                 f"P2,2,{X0 + 300},{Y0 + 200},1e400\n"))[0],
         DataError, (r"s\.csv: structure P2 \(row 2\): field 'ground_z_m' = inf is not a finite number",)),
    Case("CSV coordinate inf",
         lambda tmp: (edit(good_survey(tmp, structures="s.csv"), 'terrain = "terrain.tif"',
                           'terrain = "terrain.tif"\ncrs = "EPSG:32633"'),
                      (tmp / "s.csv").write_text(f"structure_id,seq,x,y\nP1,1,{X0},{Y0 + 200}\nP2,2,inf,{Y0}\n"))[0],
         DataError, (r"s\.csv: row 2: x/y must be numbers",)),
    Case("structure geometry not finite",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2"], "seq": [1, 2]},
                                     shapely.points([(X0, Y0 + 200.0), (X0 + 300.0, float("nan"))])),
         DataError, (r"structure P2 \(row 2\): geometry (has a coordinate that is not a finite number|is empty)",)),
    # -- places and CRS --------------------------------------------------------------------------------------
    Case("structure outside the terrain",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2"], "seq": [1, 2]},
                                     shapely.points(np.asarray(line_xy([0.0, 5000.0])))),
         DataError, (r"structure P2: no ground_z_m and the terrain .*terrain\.tif has no elevation there "
                     r"\(outside the raster\)",)),
    Case("structure over nodata",
         lambda tmp: (good_survey(tmp),
                      write_plane_raster(tmp / "terrain.tif", holes=[(95, 110, 245, 260)]))[0],
         DataError, (r"structure P2: no ground_z_m and the terrain .*terrain\.tif has no elevation there "
                     r"\(over nodata\)",)),
    Case("terrain without CRS",
         lambda tmp: (good_survey(tmp), write_plane_raster(tmp / "terrain.tif", crs=None))[0],
         DataError, (r"terrain .*terrain\.tif has no CRS",)),
    Case("structures without CRS",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2"], "seq": [1, 2]}, crs=None),
         DataError, (r"structures file .*structures\.gpkg: no CRS; give the layer a CRS or set \[inputs\] crs",)),
    Case("projected coordinates labelled lat/lon",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2"], "seq": [1, 2]}, crs="EPSG:4326"),
         DataError, (r"structure P1: coordinates \(500000, 5\.6002e\+06\) are not a place on earth in CRS "
                     r"EPSG:4326",)),
    Case("structures in a local grid the terrain cannot relate to",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2"], "seq": [1, 2]}, crs=local_grid("metre", 1)),
         DataError, (r"terrain .*terrain\.tif: points in CRS 'site grid' cannot be transformed to the raster CRS "
                     r"'WGS 84 / UTM zone 33N'",)),
    Case("structures in a local grid in feet",
         lambda tmp: with_structures(tmp, {"structure_id": ["P1", "P2"], "seq": [1, 2]},
                                     crs=local_grid("foot", 0.3048)),
         DataError, (r"structures\.gpkg: CRS 'site grid' cannot be transformed to lat/lon .*reproject the layer",)),
    Case("crossings in projected metres labelled lat/lon", with_crossings("EPSG:4326"), DataError,
         (r"crossings file .*crossings\.gpkg, layer 'crossings': feature 1 \(category 'road'\): coordinates "
          r"cannot be placed in the working CRS 'WGS 84 / UTM zone 33N'",)),
    Case("crossings required_m infinite",
         lambda tmp: (with_crossings(CRS)(tmp),
                      write_layer(tmp / "crossings.gpkg", {"category": ["road"], "required_m": [float("inf")]},
                                  [shapely.box(X0 + 140.0, Y0 + 150.0, X0 + 160.0, Y0 + 250.0)], CRS,
                                  layer="crossings"))[0],
         DataError, (r"crossings file .*crossings\.gpkg, layer 'crossings': feature 1 \(category 'road'\): field "
                     r"'required_m' = inf is not a finite number",)),
    Case("crossings in a local grid", with_crossings(local_grid("metre", 1)), DataError,
         (r"crossings file .*crossings\.gpkg, layer 'crossings': CRS 'site grid' cannot be transformed to the "
          r"working CRS 'WGS 84 / UTM zone 33N'",)),
    Case("CSV without CRS",
         lambda tmp: (good_survey(tmp, structures="s.csv"),
                      (tmp / "s.csv").write_text(f"structure_id,seq,x,y\nP1,1,{X0},{Y0}\nP2,2,{X0 + 300},{Y0}\n")
                      )[0],
         DataError, (r"s\.csv: a CSV carries no CRS; set \[inputs\] crs",)),
    Case("unknown CRS name",
         lambda tmp: edit(good_survey(tmp), 'terrain = "terrain.tif"', 'terrain = "terrain.tif"\ncrs = "UTM33"'),
         ProjectError, (r"\[inputs\]: crs = 'UTM33' is not a CRS PROJ knows",)),
    Case("VRT whose source tile is missing", vrt_with_missing_source, DataError,
         (r"terrain .*terrain\.vrt: its source file .*tiles/tile_2\.tif is missing",)),
    Case("CSV missing a column is refused from its header", csv_missing_column_with_a_bad_body, DataError,
         (r"s\.csv: missing required field 'seq'",)),
    # -- project file ----------------------------------------------------------------------------------------
    Case("TOML syntax error gives line and column",
         lambda tmp: edit(good_survey(tmp), "ground_m = 7.5", "ground_m = = 7.5"),
         ProjectError, (r"project\.toml: TOML syntax error: .*\(at line \d+, column 12\)",)),
    Case("unknown key suggests the nearest",
         lambda tmp: edit(good_survey(tmp), "ground_m =", "groundm ="),
         ProjectError, (r"\[clearance\]: unknown key 'groundm'; did you mean 'ground_m'\?",)),
    Case("wrong type",
         lambda tmp: edit(good_survey(tmp), "mass_kg_m = 1.628", 'mass_kg_m = "heavy"'),
         ProjectError, (r"\[conductor\]: mass_kg_m = 'heavy' has the wrong type: expected a number, got str",)),
    Case("missing stringing tension", stringing(""), ProjectError,
         (r"\[stringing\]: give exactly one of horizontal_tension_kn, tension_percent_rts, catenary_m "
          r"\(found 0\)",)),
    Case("zero stringing tension", stringing("horizontal_tension_kn = 0.0"), ProjectError,
         (r"\[stringing\]: horizontal_tension_kn = 0\.0 must be > 0",)),
    Case("negative stringing tension", stringing("tension_percent_rts = -20.0"), ProjectError,
         (r"\[stringing\]: tension_percent_rts = -20\.0 must be > 0",)),
    Case("stringing tension above the rated strength", stringing("horizontal_tension_kn = 150.0"), ProjectError,
         (r"\[stringing\] tension 150\.0 kN is not below the rated strength 140\.1 kN",)),
    Case("stringing catenary above the rated strength", stringing("catenary_m = 10000.0"), ProjectError,
         (r"\[stringing\] tension 159\.7 kN is not below the rated strength 140\.1 kN",)),
    # Expansion coefficient typed without its exponent (18.9 instead of 18.9e-6): cooling by 35 C would
    # shrink the wire by 66000 %, which no tension can make up; both tension sections fail in one report.
    Case("load case the change of state cannot solve",
         lambda tmp: edit(good_survey(tmp), "expansion_per_c = 18.9e-6", "expansion_per_c = 18.9"),
         SolveError, (r"tension section A:P1-P3, load case 'cold': change of state cannot be solved",
                      r"tension section A:P3-P4, load case 'cold': change of state cannot be solved",
                      r"thermal strain shrinks the wire to nothing")),
    Case("modulus typed in Pa as GPa: no convergence, no numpy warnings",
         lambda tmp: edit(good_survey(tmp), "modulus_gpa = 70.0", "modulus_gpa = 7e250"),
         SolveError, (r"tension section A:P1-P3, load case 'hot': change of state cannot be solved \(section change "
                      r"of state did not converge", r"check the conductor's modulus")),
    Case("modulus absurdly small: overflow inside the catenary, reported without numpy warnings",
         lambda tmp: edit(good_survey(tmp), "modulus_gpa = 70.0", "modulus_gpa = 1e-9"),
         SolveError, (r"tension section A:P1-P3, load case 'hot': change of state cannot be solved",)),
    Case("wire's own stringing without a creep allowance in a final case", wire_without_creep_allowance,
         ProjectError, (r"project\.toml: \[\[wires\]\] #1 \('E'\) stringing: missing key 'creep_allowance_c'.*"
                        r"give creep_allowance_c \(0 for a wire that does not creep\)",)),
    Case("station spacing zero", lambda tmp: good_survey(tmp, station_m=0.0), ProjectError,
         (r"\[clearance\]: station_m = 0\.0 must be > 0",)),
    Case("station spacing larger than the shortest span", lambda tmp: good_survey(tmp, station_m=260.0),
         ProjectError, (r"\[clearance\] station_m = 260 m is larger than the shortest span A:P2-P3 \(250\.0 m\)",)),
    Case("station spacing absurdly fine", lambda tmp: good_survey(tmp, station_m=1e-6), ProjectError,
         (r"\[clearance\] station_m = 1e-06 m asks for 5\.5e\+08 stations per load case in tension section "
          r"A:P1-P3 \(550 m; at most 1e\+06 per section\); use at least 0\.00055 m",)),
    Case("absurd default attach height", lambda tmp: good_survey(tmp, attach_height_m=300.0), ProjectError,
         (r"\[line\]: attach_height_m = 300\.0 must be > 0 and <= 200",)),
    Case("temperature beyond any float (OverflowError)",
         lambda tmp: edit(good_survey(tmp), "temperature_c = 90.0", "temperature_c = 1" + "0" * 400),
         ProjectError, (r"\[\[load_cases\]\] #1: temperature_c = 1000.*characters cut.*0 is too large to be "
                        r"a number",)),
    Case("temperature 1e400 reads as infinity",
         lambda tmp: edit(good_survey(tmp), "temperature_c = 90.0", "temperature_c = 1e400"),
         ProjectError, (r"\[\[load_cases\]\] #1: temperature_c = inf must be a finite number",)),
    Case("temperature NaN", lambda tmp: edit(good_survey(tmp), "temperature_c = 90.0", "temperature_c = nan"),
         ProjectError, (r"\[\[load_cases\]\] #1: temperature_c = nan must be a finite number",)),
    Case("temperature below absolute zero",
         lambda tmp: edit(good_survey(tmp), "temperature_c = -20.0", "temperature_c = -300.0"),
         ProjectError, (r"\[\[load_cases\]\] #2: temperature_c = -300\.0 is below absolute zero",)),
    Case("stringing temperature below absolute zero",
         lambda tmp: edit(good_survey(tmp), "temperature_c = 15.0", "temperature_c = -273.15"),
         ProjectError, (r"\[stringing\]: temperature_c = -273\.15 is below absolute zero",)),
    Case("TOML nested 200 000 deep (RecursionError)",
         lambda tmp: (good_survey(tmp).write_text("a = " + "[" * 200_000 + "]" * 200_000 + "\n"),
                      tmp / "project.toml")[1],
         ProjectError, (r"project\.toml: tables or lists are nested too deeply to read",)),
    Case("wire offset beyond any cross-arm (span inf m before)",
         lambda tmp: good_survey(tmp, extra='[[wires]]\nname = "L1"\noffset_m = 1e308\n'),
         ProjectError, (r"\[\[wires\]\] #1: offset_m = 1e\+308 must be between -100 and 100",)),
    Case("wire height beyond any structure",
         lambda tmp: good_survey(tmp, extra='[[wires]]\nname = "E"\ndz_m = -250.0\n'),
         ProjectError, (r"\[\[wires\]\] #1: dz_m = -250\.0 must be between -100 and 100",)),
    Case("plugin stage list holds a number",
         lambda tmp: edit(good_survey(tmp), 'path = "out.gpkg"', 'path = "out.gpkg"\n[pipeline]\nstages = [3]'),
         ProjectError, (r"\[pipeline\]: stages = \[3\] must list stage names as text",)),
    # -- point cloud -----------------------------------------------------------------------------------------
    Case("point cloud settings without a point cloud", no_cloud_but("[point_cloud]\nwire_search_m = 2.0"),
         ProjectError, (r"\[point_cloud\] needs \[inputs\] point_cloud",)),
    Case("as-found stringing without a point cloud",
         lambda tmp: edit(good_survey(tmp), "horizontal_tension_kn = 30.0",
                          "horizontal_tension_kn = 30.0\nsource = 'as_found'"),
         ProjectError, (r"\[stringing\]: source = 'as_found' needs \[inputs\] point_cloud",)),
    Case("as-found stringing without a survey temperature", with_cloud(stringing_source="as_found"),
         ProjectError, (r"source = 'as_found' needs \[survey\] conductor_temperature_c",)),
    Case("stringing source misspelt", with_cloud(stringing_source="asfound"),
         ProjectError, (r"\[stringing\]: source = 'asfound' must be one of 'design', 'as_found'",)),
    Case("wire class not a LAS class", with_cloud(toml="\n[point_cloud]\nwire_classes = [14, 300]\n"),
         ProjectError, (r"\[point_cloud\]: wire_classes = \[14, 300\] must list LAS classes as whole numbers 0-255",)),
    Case("a class both wire and surface", with_cloud(toml="\n[point_cloud]\nwire_classes = [5]\n"),
         ProjectError, (r"class\(es\) 5 are in both wire_classes and surface_classes",)),
    Case("survey temperature below absolute zero",
         with_cloud(toml="\n[survey]\nconductor_temperature_c = -300.0\n"),
         ProjectError, (r"\[survey\]: conductor_temperature_c = -300.0 is below absolute zero",)),
    Case("survey temperature of a wire that is not strung",
         with_cloud(toml='\n[[wires]]\nname = "phase_a"\n[survey]\nconductor_temperature_c = 20.0\n'
                         '[survey.wire_temperature_c]\nphase_b = 18.0\n'),
         ProjectError, (r"\[survey.wire_temperature_c\]: 'phase_b' is not a \[\[wires\]\] name \(wires: phase_a\)",)),
    Case("fit attachments misspelt", with_cloud(toml="\n[point_cloud]\nfit_attachments = 'loose'\n"),
         ProjectError, (r"fit_attachments = 'loose' must be one of 'free', 'fixed'",)),
    Case("point cloud file missing", with_cloud(None), DataError,
         (r"point cloud .*cloud\.csv: not found",)),
    Case("point cloud CSV without z", with_cloud("x,y\n1,2\n"), DataError,
         (r"point cloud .*cloud\.csv: missing column\(s\) z",)),
    Case("point cloud CSV with a text elevation", with_cloud("x,y,z\n1,2,3\n4,5,high\n"), DataError,
         (r"point cloud .*cloud\.csv: row 2: field 'z' = 'high' is not a number",)),
    Case("point cloud LAZ that is not one", with_cloud("not a point cloud", name="cloud.laz"), DataError,
         (r"point cloud .*cloud\.laz: cannot be read as LAS/LAZ",)),
    # -- output ----------------------------------------------------------------------------------------------
    Case("output over an input file",
         lambda tmp: edit(good_survey(tmp), 'path = "out.gpkg"', 'path = "structures.gpkg"'),
         OutputError, (r"output .*structures\.gpkg is one of the input files",)),
    Case("output folder missing",
         lambda tmp: edit(good_survey(tmp), 'path = "out.gpkg"', 'path = "no/such/out.gpkg"'),
         OutputError, (r"output folder .*no/such does not exist",)),
    # -- several problems of different files in one report ---------------------------------------------------
    Case("bad structures field and missing terrain reported together", bad_field_and_missing_terrain,
         DataError, (r"2 problems found", r"field 'kind' = 'pole'", r"gone\.tif cannot be opened: file not found")),
]


def idfn(case: Case) -> str:
    return case.id.replace(" ", "-")


@pytest.mark.parametrize("case", CASES, ids=idfn)
def test_api_raises_the_named_error(case, tmp_path):
    project = case.build(tmp_path)
    with pytest.raises(routesag.RoutesagError) as info:
        routesag.run(project)
    assert type(info.value) is case.error, f"{type(info.value).__name__}: {info.value}"
    for pattern in case.match:
        assert _search(pattern, str(info.value)), f"{pattern!r} not in:\n{info.value}"
    assert not (tmp_path / "out.gpkg").exists()


@pytest.mark.parametrize("case", CASES, ids=idfn)
def test_cli_exits_2_with_the_message_and_no_traceback(case, tmp_path):
    project = case.build(tmp_path)
    before = folder_snapshot(tmp_path)
    result = CliRunner().invoke(main, ["run", str(project)])
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output and "RuntimeWarning" not in result.output
    for pattern in case.match:
        assert _search(pattern, result.output), f"{pattern!r} not in:\n{result.output}"
    assert not (tmp_path / "out.gpkg").exists()
    assert folder_snapshot(tmp_path) == before   # nothing written, nothing changed, no temporary file left


def folder_snapshot(folder: Path) -> dict:
    """Every regular file under ``folder`` with its bytes' SHA-256, to show a failed run changed nothing."""
    import hashlib

    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def test_project_file_with_a_utf8_byte_order_mark_runs(tmp_path):
    """Editors on some systems start UTF-8 files with a BOM; TOML forbids it, so it is dropped, not reported."""
    project = good_survey(tmp_path)
    project.write_bytes(b"\xef\xbb\xbf" + project.read_bytes())
    assert routesag.run(project).path == tmp_path / "out.gpkg"


def test_long_values_are_cut_in_messages(tmp_path):
    """A value pasted by mistake (here a 100 000-character name) is echoed cut, not in full."""
    project = edit(good_survey(tmp_path), "temperature_c = 90.0", 'temperature_c = "' + "x" * 100_000 + '"')
    result = CliRunner().invoke(main, ["run", str(project)])
    assert result.exit_code == 2
    assert "characters cut" in result.output and len(result.output) < 2000, len(result.output)


def _search(pattern: str, text: str) -> bool:
    return re.search(pattern, text) is not None


def test_every_problem_of_a_layer_in_one_report(tmp_path):
    """Five spoilt fields in one layer: one run names all five."""
    project = with_structures(tmp_path, {
        "structure_id": ["P1", "P2", "P2", "P4"], "seq": [1, "x", 3, 3],
        "kind": ["strain", "pole", None, None], "attach_height_m": [20.0, 20.0, 500.0, 20.0]})
    with pytest.raises(DataError) as info:
        routesag.run(project)
    assert len(info.value.problems) == 5, info.value.problems
    text = str(info.value)
    assert text.startswith("5 problems found")
    for needle in ("field 'seq' = 'x' is not a number", "field 'kind' = 'pole'",
                   "field 'attach_height_m' = 500 m", "structure_id 'P2' appears more than once",
                   "seq 3 is used by structure P2 (row 3), structure P4 (row 4)"):
        assert needle in text


def test_every_problem_of_the_project_file_in_one_report(tmp_path):
    project = good_survey(tmp_path)
    for old, new in (("ground_m =", "grund_m ="), ("mass_kg_m = 1.628", "mass_kg_m = true"),
                     ("horizontal_tension_kn = 30.0", "horizontal_tension_kn = -1.0")):
        edit(project, old, new)
    with pytest.raises(ProjectError) as info:
        routesag.run(project)
    text = str(info.value)
    assert "unknown key 'grund_m'; did you mean 'ground_m'?" in text
    assert "mass_kg_m = True has the wrong type: expected a number, got true/false" in text
    assert "horizontal_tension_kn = -1.0 must be > 0" in text

