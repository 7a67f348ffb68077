"""Atomic GeoPackage output: all layers land together or not at all.

Layers are written into a hidden temporary GeoPackage next to the target and
moved over it with :func:`os.replace`, which is atomic on one file system. A
failed or interrupted run therefore leaves the previous output as it was.
"""

import contextlib
import functools
import os
import struct
import threading
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pyogrio.errors
import pyogrio.raw
import pyproj
import shapely

from routesag.errors import DataError, OutputError
from routesag.io.gpkg_version import DEFAULT_VERSION, stamp_version
from routesag.io.outputs_guard import check_output_target, keep_mode, temporary_path, write_error

#: Files SQLite may create beside a GeoPackage while it is being written.
_SQLITE_SIDECARS = ("-journal", "-wal", "-shm")
#: WKB of a LineString Z: byte order, type, point count, then x y z per point (OGC 06-103r4 clause 8.2;
#: the Z flag 0x80000000 is the extended form shapely writes and GDAL reads).
_LINESTRING_Z_HEADER = struct.Struct("<BII")
_WKB_LINESTRING_Z = 0x80000002


def write_layers(path, layers, *, protect=(), version=DEFAULT_VERSION, finalize=None):
    """Write several layers to one GeoPackage atomically.

    Parameters
    ----------
    path : str or os.PathLike
        Destination ``.gpkg``; replaced as a whole if it exists.
    layers : mapping of str to tuple
        Layer name -> ``(frame, geometry_type)`` or
        ``(frame, geometry_type, crs)``, in writing order. ``frame`` is a
        GeoDataFrame (a spatial layer) or a plain DataFrame (an attribute
        table; ``geometry_type`` must then be None). ``geometry_type`` such
        as ``"Point Z"`` or ``"LineString Z"`` is stored even when the frame
        is empty; None lets pyogrio infer it from the geometries. ``crs``
        labels a GeoDataFrame that has none.
    protect : iterable of path-like
        Files that must never be overwritten (the run's inputs).
    version : str
        GeoPackage version the file declares (see :mod:`routesag.io.gpkg_version`).
    finalize : callable, optional
        Called with the temporary file's path after the layers are written and before the rename
        (layer styles are added this way), so it lands atomically with them.

    Raises
    ------
    OutputError
        Before anything is written: ``path`` is one of ``protect``, its
        folder is missing or not writable, ``path`` is a folder, or there is
        nothing to write.

    Notes
    -----
    Any exception while writing, KeyboardInterrupt included, removes the
    temporary file and is re-raised; the earlier file at ``path`` is left
    byte-identical.

    References
    ----------
    .. [1] OGC GeoPackage Encoding Standard 1.3.1 (OGC 12-128r18), 2021;
       attribute tables (no geometry) are clause 2.4.
    .. [2] POSIX.1-2017, rename(): replacing the target is atomic.
    """
    destination = Path(path)
    _check_destination(destination, protect)
    prepared = [_prepare_layer(name, spec) for name, spec in layers.items()]
    if not prepared:
        raise OutputError(f"no layers to write to {destination}")
    with GeoPackageWriter(destination, protect=protect, version=version) as writer:
        for name, frame, geometry_type in prepared:
            writer.write(name, frame, geometry_type)
        writer.commit(finalize)


class GeoPackageWriter:
    """A GeoPackage written piece by piece into a hidden temporary file, then moved over the target at once.

    ``write`` creates a layer or appends rows to one (each call is one
    transaction); ``commit`` stamps the GeoPackage version, flushes the file
    to disk, gives it the permissions of the file it replaces and renames it
    over ``path`` atomically; ``discard`` (also on leaving a ``with`` block
    without a commit, whatever the exception) removes the temporary file and
    its SQLite side files, so the earlier file at ``path`` stays as it was.
    OS and SQLite write errors are raised as :class:`OutputError` saying what to do.

    Parameters
    ----------
    path : str or os.PathLike
        Destination ``.gpkg``.
    protect : iterable of path-like
        Files that must never be overwritten (the run's inputs).
    version : str
        GeoPackage version the file declares (see :mod:`routesag.io.gpkg_version`).

    Raises
    ------
    OutputError
        As :func:`write_layers`, before the temporary file exists.
    """

    def __init__(self, path, *, protect=(), version=DEFAULT_VERSION):
        self.destination = Path(path)
        _check_destination(self.destination, protect)
        self.temporary = temporary_path(self.destination)
        self.version = version
        self.layers: list[str] = []
        self.done = False
        self._flusher: threading.Thread | None = None

    def write(self, name, frame, geometry_type=None, wkb=None, crs=None):
        """Create layer ``name`` with ``frame``'s rows, or append them when it exists (same columns).

        ``wkb``: each row's geometry already encoded (an array of WKB bytes, e.g. from
        :func:`linestrings_z_wkb`), with ``frame`` a plain DataFrame of the attributes and ``crs``
        the label :func:`crs_label` gives; the rows then never become geometry objects.
        """
        if self.done:
            raise OutputError(f"{self.destination}: the GeoPackage is already committed or discarded")
        if wkb is None:
            name, frame, geometry_type = _prepare_layer(name, (frame, geometry_type))
        append = name in self.layers
        if append and len(frame) == 0:
            return
        with self._errors_in_words():
            _write_one(self.temporary, name, frame, geometry_type, append=append, wkb=wkb, crs=crs)
        if not append:
            self.layers.append(name)
        self._flush_in_background()

    def _flush_in_background(self):
        """Start sending the written pages to the disk (fsync in a thread, which releases the GIL), so the run
        goes on while they travel and the flush before the rename has little left to do."""
        if self._flusher is None or not self._flusher.is_alive():
            self._flusher = threading.Thread(target=_fsync_quietly, args=(self.temporary,), daemon=True,
                                             name="routesag-gpkg-flush")
            self._flusher.start()

    def commit(self, finalize=None):
        """Make the written layers the file at ``path`` (atomic rename).

        ``finalize(temporary_path)``, when given, runs on the finished temporary file just before the rename.
        """
        with self._errors_in_words():
            stamp_version(self.temporary, self.version)
            if finalize is not None:  # while the background flush may still be sending the layers' pages
                finalize(self.temporary)
            if self._flusher is not None:
                self._flusher.join()
            _fsync(self.temporary)  # after every write: what the rename exposes is on the disk
            keep_mode(self.temporary, self.destination)
            os.replace(self.temporary, self.destination)
        self.done = True

    def discard(self):
        """Remove the temporary file; the destination is not touched. Safe to call twice."""
        if not self.done:
            _remove_with_sidecars(self.temporary)
            self.done = True

    @contextlib.contextmanager
    def _errors_in_words(self):
        try:
            yield
        except BaseException as exc:
            self.discard()
            told = write_error(exc, self.destination)
            if told is not None:
                raise told from None
            raise

    def __enter__(self):
        return self

    def __exit__(self, *exc_info):
        self.discard()


def read_layer(path, layer):
    """Read one layer of a vector file.

    Parameters
    ----------
    path : str or os.PathLike
        Vector file (GeoPackage or any format GDAL reads).
    layer : str
        Layer name.

    Returns
    -------
    geopandas.GeoDataFrame or pandas.DataFrame
        A DataFrame when the layer has no geometry (attribute table).

    Raises
    ------
    DataError
        The file or the layer cannot be read.
    """
    try:
        return pyogrio.read_dataframe(path, layer=layer)
    except (pyogrio.errors.DataSourceError, pyogrio.errors.DataLayerError) as exc:
        raise DataError(f"cannot read layer {layer!r} of {path}: {exc}") from exc


def read_attributes(path, layer):
    """Read one layer's attribute table without its geometries (a pandas.DataFrame); one row per feature, so a
    long line's conductors cost their few numbers per profile, not their stations.

    Raises
    ------
    DataError
        The file or the layer cannot be read.
    """
    try:
        return pyogrio.read_dataframe(path, layer=layer, read_geometry=False)
    except (pyogrio.errors.DataSourceError, pyogrio.errors.DataLayerError) as exc:
        raise DataError(f"cannot read layer {layer!r} of {path}: {exc}") from exc


def _check_destination(destination, protect):
    check_output_target(destination, protect)
    folder = destination.parent.resolve()
    if not folder.is_dir():
        raise OutputError(f"output folder {folder} does not exist")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise OutputError(f"output folder {folder} is not writable")
    if destination.is_dir():
        raise OutputError(f"output {destination} is a folder, not a file")
    for protected in protect:
        if _same_file(destination, Path(protected)):
            raise OutputError(f"refusing to write output {destination}: it is the input "
                              f"file {protected}")


def _same_file(a, b):
    """Same path after resolving links and '..', or the same inode (hard link)."""
    if a.resolve() == b.resolve():
        return True
    try:
        return os.path.samefile(a, b)
    except OSError:  # one of them does not exist
        return False


def _prepare_layer(name, spec):
    """Validate one layer spec; returns (name, frame, geometry_type)."""
    frame, geometry_type, *rest = spec
    if len(rest) > 1:
        raise ValueError(f"layer {name!r}: expected (frame, geometry_type[, crs])")
    crs = rest[0] if rest else None
    if isinstance(frame, gpd.GeoDataFrame):
        if crs is not None:
            if frame.crs is None:
                frame = frame.set_crs(crs)
            elif frame.crs != crs:
                raise ValueError(f"layer {name!r}: frame CRS {frame.crs} differs from {crs}")
        return name, frame, geometry_type
    if isinstance(frame, pd.DataFrame):
        if geometry_type is not None or crs is not None:
            raise ValueError(f"layer {name!r}: a plain DataFrame is an attribute table; "
                             "geometry_type and crs must be None")
        return name, frame, None
    raise TypeError(f"layer {name!r}: expected a DataFrame, got {type(frame).__name__}")


def _write_one(temporary, name, frame, geometry_type, append=False, wkb=None, crs=None):
    # SQLite need not sync each commit of the temporary file: the file is
    # fsync'd before the rename, and a crash before it leaves only the
    # temporary file, never a damaged destination.
    saved = pyogrio.get_gdal_config_option("OGR_SQLITE_SYNCHRONOUS")
    pyogrio.set_gdal_config_options({"OGR_SQLITE_SYNCHRONOUS": "OFF"})
    try:
        if wkb is None and isinstance(frame, gpd.GeoDataFrame):
            wkb, crs, frame = _encoded_geometry(frame, geometry_type)
        fields = _field_arrays(frame) if wkb is not None or not isinstance(frame, gpd.GeoDataFrame) else None
        if fields is None:  # what only pyogrio's frame writer knows: inferred geometry types, date-times
            pyogrio.write_dataframe(frame, temporary, layer=name, driver="GPKG", geometry_type=geometry_type,
                                    append=append)
        else:
            pyogrio.raw.write(temporary, wkb, fields[1], fields[0], field_mask=fields[2], layer=name,
                              driver="GPKG", geometry_type=geometry_type if wkb is not None else None,
                              crs=crs if wkb is not None else None, append=append)
    finally:
        pyogrio.set_gdal_config_options({"OGR_SQLITE_SYNCHRONOUS": saved})


def _encoded_geometry(frame, geometry_type):
    """(WKB array, CRS label, attribute frame) of a GeoDataFrame, or (None, None, frame) when pyogrio's frame
    writer must decide (no geometry type given, or several geometry columns)."""
    if geometry_type is None or (frame.dtypes == "geometry").sum() != 1:
        return None, None, frame
    column = frame.geometry.name
    wkb = shapely.to_wkb(np.asarray(frame[column].array, dtype=object))
    return wkb, crs_label(frame.crs), pd.DataFrame(frame.drop(columns=column))


def _field_arrays(frame):
    """(names, values, masks) of a frame's columns as pyogrio's frame writer hands them to GDAL, or None when a
    column holds date-times (their time zones need that writer's own handling)."""
    names, values, masks = list(frame.columns), [], []
    for name in names:
        column = frame[name]
        if column.dtype.kind == "M" or (column.dtype == object and pd.api.types.infer_dtype(column) == "datetime"):
            return None
        array = column.values
        if isinstance(array, (pd.arrays.IntegerArray, pd.arrays.FloatingArray, pd.arrays.BooleanArray)):
            values.append(array._data)
            masks.append(array._mask)
        elif isinstance(array, pd.api.extensions.ExtensionArray):
            values.append(np.asarray(array))
            masks.append(np.asarray(array.isna()))
        else:
            values.append(array)
            masks.append(None)
    return names, values, masks


@functools.lru_cache(maxsize=16)
def _crs_label_of(crs):
    epsg = crs.to_epsg()
    return f"EPSG:{epsg}" if epsg else crs.to_wkt("WKT1_GDAL")


def crs_label(crs) -> str | None:
    """The CRS as pyogrio's frame writer names it to GDAL (``EPSG:n`` when it has a code, else WKT1), or None."""
    if crs is None:
        return None
    return _crs_label_of(pyproj.CRS.from_user_input(crs))


def linestrings_z_wkb(parts) -> np.ndarray:
    """One WKB LineString Z (little-endian, Z flagged as shapely writes it) per (n, 3) coordinate array."""
    wkb = np.empty(len(parts), dtype=object)
    for i, xyz in enumerate(parts):
        wkb[i] = _LINESTRING_Z_HEADER.pack(1, _WKB_LINESTRING_Z, len(xyz)) + np.ascontiguousarray(xyz, "<f8").tobytes()
    return wkb


def _fsync(path):
    """Flush the finished file to disk so the rename never exposes a partial file."""
    with open(path, "rb") as f:
        os.fsync(f.fileno())


def _fsync_quietly(path):
    """:func:`_fsync`, for a background thread: an error here is met again by the commit's own flush."""
    try:
        _fsync(path)
    except OSError:
        pass


def _remove_with_sidecars(path):
    for candidate in (path, *(Path(f"{path}{suffix}") for suffix in _SQLITE_SIDECARS)):
        try:
            candidate.unlink()
        except OSError:  # already gone; never mask the error being handled
            pass
