"""Fuzzing the input readers: truncated, corrupted, random and wrong-typed files.

Whatever the bytes, a reader either succeeds or raises a RoutesagError subclass: never another
exception type, and never a hang (each call runs under a time limit; examples are bounded).
"""
from __future__ import annotations

import contextlib
import itertools
import random
import signal
from types import SimpleNamespace

import geopandas as gpd
import numpy as np
import pyogrio
import pytest
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import routesag
from routesag.errors import RoutesagError
from routesag.io.crossings import check_crossings, read_crossings_file
from routesag.io.pointcloud import chord_corridor, read_points
from routesag.io.structures import check_structures, read_structures_file, to_working_crs
from routesag.io.terrain import TerrainSampler
from routesag.project import ClearanceRules, load_project
from routesag.stages.surface import SurfaceModel
from tests.cloud_survey import write_las
from tests.conftest import CRS, X0, Y0, write_plane_raster, write_project, write_structures

TIME_LIMIT_S = 20
FUZZ = settings(max_examples=40, deadline=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
_names = itertools.count()


class Hang(BaseException):
    """Raised by the time limit; a BaseException so no reader's ``except Exception`` can hide it."""


@contextlib.contextmanager
def time_limit(seconds):
    def stop(signum, frame):
        raise Hang(f"reader still running after {seconds} s")

    previous = signal.signal(signal.SIGALRM, stop)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)


def only_routesag_errors(call):
    """Run ``call``; success or a RoutesagError pass, anything else fails the test."""
    try:
        with time_limit(TIME_LIMIT_S):
            call()
    except RoutesagError as exc:
        assert str(exc), "a RoutesagError must carry a message"


def read_structures(path):
    gdf = read_structures_file(path, crs=CRS)
    to_working_crs(check_structures(gdf, path, 20.0), path)


def read_terrain(path):
    """Open and sample a 6 x 6 grid spread over the whole raster, so every tile is read."""
    with TerrainSampler(path) as terrain:
        left, bottom, right, top = terrain.bounds
        x, y = np.meshgrid(np.linspace(left, right, 6), np.linspace(bottom, top, 6))
        terrain.sample(x, y)


def read_crossings(path):
    """Read and check a crossings layer as the read_crossings stage does (working CRS: the structures')."""
    check_crossings(read_crossings_file(path), path, ClearanceRules(), CRS, default_crs=CRS)


def read_surface(path, terrain_path):
    """Open a surface model and measure one span's wire (a level chord over the valid raster) against it."""
    xyz = np.column_stack([np.linspace(X0 - 100.0, X0 + 300.0, 41), np.full(41, Y0 + 298.0), np.full(41, 112.0)])
    profile = SimpleNamespace(xyz=xyz, span_id="A:P1-P2", load_case="hot", section_id="A:P1-P2",
                              key=("A:P1-P2", "A:P1-P2", "", "hot"))
    with TerrainSampler(path) as raster, TerrainSampler(terrain_path) as terrain:
        model = SurfaceModel(raster, terrain, CRS, heights=False, min_height_m=0.5, required_m=3.0,
                             largest_required_m=8.0)
        model.sample([profile])


def read_point_cloud_file(path):
    """Read a point cloud (LAS/LAZ or CSV) into the working CRS, cut to a corridor, as read_point_cloud does."""
    corridor = chord_corridor([X0], [Y0], [X0 + 300.0], [Y0], 20.0)
    read_points(path, CRS, corridor, crs=CRS if path.suffix == ".csv" else None, chunk_points=500)


# Reader name -> (file extension, reader). A wrong-typed file is the valid file of another reader, unless both
# take the same kind of file (terrain and surface model are both elevation rasters).
READERS = {"structures": (".gpkg", read_structures), "structures_csv": (".csv", read_structures),
           "terrain": (".tif", read_terrain), "project": (".toml", load_project),
           "crossings": (".gpkg", read_crossings), "surface": (".tif", None),
           "point_cloud": (".laz", read_point_cloud_file), "point_csv": (".csv", read_point_cloud_file)}
SAME_KIND = {frozenset({"terrain", "surface"})}


@pytest.fixture(scope="module")
def valid(tmp_path_factory):
    """Bytes of one valid file for each reader, and the terrain the surface reader measures against."""
    folder = tmp_path_factory.mktemp("valid")
    write_plane_raster(folder / "terrain.tif", bx=0.01, cy=0.02, shape=(120, 300))
    # Every surface cell 1 m above the terrain (objects), with a nodata hole next to the wire.
    write_plane_raster(folder / "surface.tif", a=101.0, bx=0.01, cy=0.02, shape=(120, 300),
                       holes=[(40, 50, 100, 110)])
    write_structures(folder / "structures.gpkg", [(X0, Y0), (X0 + 300.0, Y0), (X0 + 550.0, Y0)])
    (folder / "structures.csv").write_text(
        f"structure_id,seq,kind,attach_height_m,x,y\nP1,1,strain,20,{X0},{Y0}\nP2,2,,18.5,{X0 + 300},{Y0}\n")
    gpd.GeoDataFrame({"category": ["road", "water"], "width_m": [None, 6.0]},
                     geometry=[shapely.box(X0 + 100, Y0 - 50, X0 + 112, Y0 + 50),
                               shapely.LineString([(X0 + 400, Y0 - 80), (X0 + 420, Y0 + 80)])],
                     crs=CRS).to_file(folder / "crossings.gpkg", layer="crossings", driver="GPKG")
    write_project(folder)
    write_las(folder / "points.laz", np.linspace(X0, X0 + 300.0, 2000), np.full(2000, Y0 + 1.0),
              np.linspace(110.0, 120.0, 2000), np.full(2000, 14))
    (folder / "points.csv").write_text(f"x,y,z,classification\n{X0 + 10},{Y0},110.5,14\n{X0 + 20},{Y0 + 1},111,5\n")
    files = {"structures": "structures.gpkg", "structures_csv": "structures.csv", "terrain": "terrain.tif",
             "project": "project.toml", "crossings": "crossings.gpkg", "surface": "surface.tif",
             "point_cloud": "points.laz", "point_csv": "points.csv"}
    data = {name: (folder / file).read_bytes() for name, file in files.items()}
    data["terrain_path"] = folder / "terrain.tif"
    return data


def reader(name, valid):
    """The reader called ``name``; the surface reader measures against the valid terrain."""
    if name == "surface":
        return lambda path: read_surface(path, valid["terrain_path"])
    return READERS[name][1]


def test_valid_files_are_read(tmp_path, valid):
    """Every valid file reads without error, so the fuzzing starts from something a reader accepts."""
    for name, (ext, _) in READERS.items():
        reader(name, valid)(fresh(tmp_path, ext, valid[name]))


def fresh(tmp_path, ext, data: bytes):
    """A new file name per example, so no driver cache sees an earlier file."""
    path = tmp_path / f"fuzz{next(_names)}{ext}"
    path.write_bytes(data)
    return path


@pytest.mark.parametrize("name", list(READERS))
@FUZZ
@given(data=st.binary(max_size=4096))
def test_random_bytes(tmp_path, valid, name, data):
    ext = READERS[name][0]
    only_routesag_errors(lambda: reader(name, valid)(fresh(tmp_path, ext, data)))


@pytest.mark.parametrize("name", list(READERS))
@FUZZ
@given(fraction=st.floats(0.0, 1.0, exclude_max=True))
def test_truncated_file(tmp_path, valid, name, fraction):
    ext, data = READERS[name][0], valid[name]
    only_routesag_errors(lambda: reader(name, valid)(fresh(tmp_path, ext, data[:int(len(data) * fraction)])))


@pytest.mark.parametrize("name", list(READERS))
@FUZZ
@given(flips=st.lists(st.tuples(st.integers(0, 2**31), st.integers(0, 255)), min_size=1, max_size=40))
def test_corrupted_file(tmp_path, valid, name, flips):
    data = bytearray(valid[name])
    for where, byte in flips:
        data[where % len(data)] = byte
    only_routesag_errors(lambda: reader(name, valid)(fresh(tmp_path, READERS[name][0], bytes(data))))


def test_corrupted_geopackage_as_terrain_prints_no_traceback(tmp_path, valid, capfd):
    """GDAL quotes bytes of a damaged SQLite file in its messages; they must not print a traceback.

    Seeded corruption spread over the whole file (the schema text sits in the middle, where
    hypothesis' shrinking rarely goes); without the guard in io/terrain.py this prints.
    """
    rng = random.Random(5)
    for _ in range(30):
        data = bytearray(valid["structures"])
        for _ in range(rng.randint(1, 50)):
            data[rng.randrange(len(data))] = rng.randrange(256)
        only_routesag_errors(lambda: read_terrain(fresh(tmp_path, ".tif", bytes(data))))
    err = capfd.readouterr().err
    assert "Traceback" not in err and "UnicodeDecodeError" not in err, err


WRONG_TYPES = [(r, c) for r in READERS for c in READERS if r != c and frozenset({r, c}) not in SAME_KIND]


@pytest.mark.parametrize("reader_name, content", WRONG_TYPES)
def test_wrong_type_of_file(tmp_path, valid, reader_name, content):
    """A raster given as structures, a project file given as terrain, structures given as crossings, ..."""
    path = fresh(tmp_path, READERS[reader_name][0], valid[content])
    with pytest.raises(RoutesagError):
        with time_limit(TIME_LIMIT_S):
            reader(reader_name, valid)(path)


@pytest.mark.parametrize("name", list(READERS))
def test_empty_file_and_folder(tmp_path, valid, name):
    ext = READERS[name][0]
    folder = tmp_path / f"folder{ext}"
    folder.mkdir()
    for path in (fresh(tmp_path, ext, b""), folder):
        with pytest.raises(RoutesagError):
            reader(name, valid)(path)


CELLS = ["", "P1", "P2", "1", "2", "2.5", "-1", "0", "250", "nan", "inf", "-inf", "1e400", "strain",
         "Suspension ", "anchor", "NULL", "true", '"a,b"', "91", "181", "-91", str(X0), str(Y0), str(X0 + 300),
         "1e30", "é", "\t"]
COLUMNS = ["structure_id", "seq", "x", "y", "line_id", "kind", "attach_height_m", "ground_z_m", "geometry",
           "insulator_m", "structureid", "", "X"]


@FUZZ
@given(columns=st.lists(st.sampled_from(COLUMNS), max_size=9),
       rows=st.lists(st.lists(st.sampled_from(CELLS), min_size=9, max_size=9), max_size=6),
       crs=st.sampled_from([CRS, "EPSG:4326", "EPSG:2229", "EPSG:3857"]), default_height=st.sampled_from([None, 20.0]))
def test_csv_tables(tmp_path, columns, rows, crs, default_height):
    """Well-formed CSV with any mix of columns and cell values: checked, never crashing."""
    text = "\n".join([",".join(columns)] + [",".join(row[:len(columns)]) for row in rows]) + "\n"
    path = fresh(tmp_path, ".csv", text.encode())

    def read():
        to_working_crs(check_structures(read_structures_file(path, crs=crs), path, default_height), path)

    only_routesag_errors(read)


SITE_GRID = ('ENGCRS["site grid",EDATUM["site"],CS[Cartesian,2],AXIS["x",east,LENGTHUNIT["metre",1]],'
             'AXIS["y",north,LENGTHUNIT["metre",1]]]')


@pytest.mark.parametrize("label", ["EPSG:4326", "EPSG:2229", "EPSG:3857", "EPSG:32733", SITE_GRID])
def test_crossings_under_a_wrong_crs_label(tmp_path, valid, label):
    """The valid crossings' coordinates relabelled with another CRS: read, refused by name, never a crash."""
    gdf = pyogrio.read_dataframe(fresh(tmp_path, ".gpkg", valid["crossings"])).set_crs(label, allow_override=True)
    path = tmp_path / f"relabelled{next(_names)}.gpkg"
    gdf.to_file(path, layer="crossings", driver="GPKG")
    only_routesag_errors(lambda: read_crossings(path))


TOKENS = ["1", "-1", "0", "1e400", "nan", "inf", '"x"', "true", "[]", "[1, 2]", '["a", 3]', "{}", "{ a = 1 }",
          "1979-05-27", '"EPSG:4326"', '"nonsense"', '""', '"../../x"', "[[x]]", "= =", "'''"]


@FUZZ
@given(edits=st.lists(st.tuples(st.floats(0.0, 1.0, exclude_max=True),
                                st.sampled_from(["delete", "value", "duplicate", "insert"]),
                                st.sampled_from(TOKENS)), min_size=1, max_size=6))
def test_project_file_edits(tmp_path, valid, edits):
    """The valid project file with lines deleted, duplicated, or given odd values."""
    lines = valid["project"].decode().splitlines()
    for where, action, token in edits:
        i = int(where * len(lines))
        if action == "delete":
            del lines[i]
        elif action == "value" and "=" in lines[i]:
            lines[i] = lines[i].split("=")[0] + "= " + token
        elif action == "duplicate":
            lines.insert(i, lines[i])
        else:
            lines.insert(i, token)
        if not lines:
            break
    only_routesag_errors(lambda: load_project(fresh(tmp_path, ".toml", "\n".join(lines).encode())))


@settings(max_examples=10, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(kind=st.sampled_from([".gpkg", ".tif"]), fraction=st.floats(0.05, 0.95))
def test_whole_run_with_a_damaged_input(tmp_path, survey, kind, fraction):
    """A damaged structures file or terrain inside a real run: a clean error, no output."""
    name = "structures.gpkg" if kind == ".gpkg" else "terrain.tif"
    target = survey.parent / name
    original = target.read_bytes()
    try:
        target.write_bytes(original[:int(len(original) * fraction)])
        only_routesag_errors(lambda: routesag.run(survey, out=tmp_path / f"out{next(_names)}.gpkg"))
    finally:
        target.write_bytes(original)


def test_time_limit_catches_a_hang():
    """The guard itself works: a reader stuck in Python is stopped and reported."""
    with pytest.raises(Hang):
        with time_limit(0.2):
            while True:
                pass


def test_a_leaking_reader_would_fail():
    """The check is not a tautology: an exception outside the RoutesagError family gets through."""
    with pytest.raises(ZeroDivisionError):
        only_routesag_errors(lambda: 1 / 0)
    only_routesag_errors(lambda: (_ for _ in ()).throw(routesag.DataError("fine")))
