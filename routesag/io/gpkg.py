"""Atomic GeoPackage output: all layers land together or not at all.

Layers are written into a hidden temporary GeoPackage next to the target and
moved over it with :func:`os.replace`, which is atomic on one file system. A
failed or interrupted run therefore leaves the previous output as it was.
"""

import os
import secrets
from pathlib import Path

import geopandas as gpd
import pandas as pd
import pyogrio
import pyogrio.errors

from routesag.errors import DataError, OutputError

#: Files SQLite may create beside a GeoPackage while it is being written.
_SQLITE_SIDECARS = ("-journal", "-wal", "-shm")


def write_layers(path, layers, *, protect=(), finalize=None):
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
    temporary = _temporary_path(destination)
    try:
        for name, frame, geometry_type in prepared:
            _write_one(temporary, name, frame, geometry_type)
        if finalize is not None:
            finalize(temporary)
        _fsync(temporary)
        os.replace(temporary, destination)
    except BaseException:
        _remove_with_sidecars(temporary)
        raise


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


def _check_destination(destination, protect):
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


def _write_one(temporary, name, frame, geometry_type):
    # pyogrio takes the CRS from the GeoDataFrame itself (write_dataframe has
    # no crs argument), and writes a plain DataFrame as an attribute table.
    pyogrio.write_dataframe(frame, temporary, layer=name, driver="GPKG",
                            geometry_type=geometry_type)


def _temporary_path(destination):
    """Hidden, not-yet-existing ``.<stem>.tmp-<random>.gpkg`` beside the target."""
    while True:
        candidate = destination.with_name(f".{destination.stem}.tmp-{secrets.token_hex(6)}.gpkg")
        if not candidate.exists():
            return candidate


def _fsync(path):
    """Flush the finished file to disk so the rename never exposes a partial file."""
    with open(path, "rb") as f:
        os.fsync(f.fileno())


def _remove_with_sidecars(path):
    for candidate in (path, *(Path(f"{path}{suffix}") for suffix in _SQLITE_SIDECARS)):
        try:
            candidate.unlink()
        except OSError:  # already gone; never mask the error being handled
            pass
