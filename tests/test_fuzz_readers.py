"""Fuzzing the input readers: truncated, corrupted, random and wrong-typed files.

Whatever the bytes, a reader either succeeds or raises a RoutesagError subclass: never another
exception type, and never a hang (each call runs under a time limit; examples are bounded).
"""
from __future__ import annotations

import contextlib
import itertools
import random
import signal

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import routesag
from routesag.errors import RoutesagError
from routesag.io.structures import check_structures, read_structures_file, to_working_crs
from routesag.io.terrain import TerrainSampler
from routesag.project import load_project
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


READERS = {".gpkg": read_structures, ".csv": read_structures, ".tif": read_terrain, ".toml": load_project}


@pytest.fixture(scope="module")
def valid(tmp_path_factory):
    """Bytes of one valid file of each kind the readers take."""
    folder = tmp_path_factory.mktemp("valid")
    write_plane_raster(folder / "terrain.tif", bx=0.01, cy=0.02, shape=(120, 300))
    write_structures(folder / "structures.gpkg", [(X0, Y0), (X0 + 300.0, Y0), (X0 + 550.0, Y0)])
    (folder / "structures.csv").write_text(
        f"structure_id,seq,kind,attach_height_m,x,y\nP1,1,strain,20,{X0},{Y0}\nP2,2,,18.5,{X0 + 300},{Y0}\n")
    write_project(folder)
    return {ext: (folder / name).read_bytes() for ext, name in
            ((".tif", "terrain.tif"), (".gpkg", "structures.gpkg"), (".csv", "structures.csv"),
             (".toml", "project.toml"))}


def fresh(tmp_path, ext, data: bytes):
    """A new file name per example, so no driver cache sees an earlier file."""
    path = tmp_path / f"fuzz{next(_names)}{ext}"
    path.write_bytes(data)
    return path


@pytest.mark.parametrize("ext", list(READERS))
@FUZZ
@given(data=st.binary(max_size=4096))
def test_random_bytes(tmp_path, ext, data):
    only_routesag_errors(lambda: READERS[ext](fresh(tmp_path, ext, data)))


@pytest.mark.parametrize("ext", list(READERS))
@FUZZ
@given(fraction=st.floats(0.0, 1.0, exclude_max=True))
def test_truncated_file(tmp_path, valid, ext, fraction):
    data = valid[ext]
    only_routesag_errors(lambda: READERS[ext](fresh(tmp_path, ext, data[:int(len(data) * fraction)])))


@pytest.mark.parametrize("ext", list(READERS))
@FUZZ
@given(flips=st.lists(st.tuples(st.integers(0, 2**31), st.integers(0, 255)), min_size=1, max_size=40))
def test_corrupted_file(tmp_path, valid, ext, flips):
    data = bytearray(valid[ext])
    for where, byte in flips:
        data[where % len(data)] = byte
    only_routesag_errors(lambda: READERS[ext](fresh(tmp_path, ext, bytes(data))))


def test_corrupted_geopackage_as_terrain_prints_no_traceback(tmp_path, valid, capfd):
    """GDAL quotes bytes of a damaged SQLite file in its messages; they must not print a traceback.

    Seeded corruption spread over the whole file (the schema text sits in the middle, where
    hypothesis' shrinking rarely goes); without the guard in io/terrain.py this prints.
    """
    rng = random.Random(5)
    for _ in range(30):
        data = bytearray(valid[".gpkg"])
        for _ in range(rng.randint(1, 50)):
            data[rng.randrange(len(data))] = rng.randrange(256)
        only_routesag_errors(lambda: read_terrain(fresh(tmp_path, ".tif", bytes(data))))
    err = capfd.readouterr().err
    assert "Traceback" not in err and "UnicodeDecodeError" not in err, err


@pytest.mark.parametrize("reader_ext, content_ext",
                         [(r, c) for r in READERS for c in READERS if r != c])
def test_wrong_type_of_file(tmp_path, valid, reader_ext, content_ext):
    """A raster given as structures, a project file given as terrain, and so on."""
    path = fresh(tmp_path, reader_ext, valid[content_ext])
    with pytest.raises(RoutesagError):
        with time_limit(TIME_LIMIT_S):
            READERS[reader_ext](path)


@pytest.mark.parametrize("ext", list(READERS))
def test_empty_file_and_folder(tmp_path, ext):
    folder = tmp_path / f"folder{ext}"
    folder.mkdir()
    for path in (fresh(tmp_path, ext, b""), folder):
        with pytest.raises(RoutesagError):
            READERS[ext](path)


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


TOKENS = ["1", "-1", "0", "1e400", "nan", "inf", '"x"', "true", "[]", "[1, 2]", '["a", 3]', "{}", "{ a = 1 }",
          "1979-05-27", '"EPSG:4326"', '"nonsense"', '""', '"../../x"', "[[x]]", "= =", "'''"]


@FUZZ
@given(edits=st.lists(st.tuples(st.floats(0.0, 1.0, exclude_max=True),
                                st.sampled_from(["delete", "value", "duplicate", "insert"]),
                                st.sampled_from(TOKENS)), min_size=1, max_size=6))
def test_project_file_edits(tmp_path, valid, edits):
    """The valid project file with lines deleted, duplicated, or given odd values."""
    lines = valid[".toml"].decode().splitlines()
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
