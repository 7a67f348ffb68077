"""Read and validate the structures layer.

Raw layer -> checked GeoDataFrame in a projected working CRS in metres. Every
problem in the layer is collected and raised together as one DataError, each
message naming the file, the feature (structure_id or row) and the field.
"""
from __future__ import annotations

import difflib
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import shapely
from pyproj import CRS
from pyproj.exceptions import CRSError, ProjError

from routesag.errors import DataError, cut
from routesag.io.crs_checks import MAX_SCALE_DISTORTION, centre_lon_lat, local_conformal_crs, scale_distortion
from routesag.io.fields import (
    apply_field_map, coordinate_columns, decimal_commas_to_numbers, hint_for_missing, sniff_separator,
)
from routesag.project import MAX_ATTACH_HEIGHT_M
from routesag.project.model import DEFAULT_LINE_ID, line_label

REQUIRED_FIELDS = ("structure_id", "seq")
OPTIONAL_FIELDS = ("line_id", "kind", "attach_height_m", "ground_z_m", "insulator_m")
FIELDS = REQUIRED_FIELDS + OPTIONAL_FIELDS
KINDS = ("suspension", "strain")
#: The trade's words for a structure's kind (lower case; spaces and underscores read as hyphens).
KIND_WORDS = {"suspension": "suspension", "tangent": "suspension",
              "strain": "strain", "dead-end": "strain", "deadend": "strain", "anchor": "strain",
              "angle-strain": "strain", "terminal": "strain"}
#: Metres per unit of the height attributes ([inputs] height_units).
HEIGHT_FACTORS = {"m": 1.0, "ft": 0.3048, "ftUS": 1200.0 / 3937.0}
#: Heights all above this, in a feet CRS with no height_units, are probably feet [m] (common practice:
#: distribution and transmission attachment heights are mostly 8-30 m, 25-100 ft).
FEET_SUSPECT_MIN = 30.0


def read_structures_file(path, layer=None, crs=None, x_column=None, y_column=None, fields=None) -> gpd.GeoDataFrame:
    """Read structures from any vector source GDAL reads, or a CSV with coordinate columns.

    A CSV's separator (, ; tab |) is sniffed and decimal commas are read; its
    coordinate columns are ``x_column``/``y_column`` or a recognised pair
    (x/y, easting/northing, lon/lat ...). ``gdf.attrs["note"]`` says which
    were used.

    Parameters
    ----------
    path : str or Path
        Vector file or CSV.
    layer : str, optional
        Layer inside a multi-layer source.
    crs : str, optional
        CRS for a source that has none (needed for a CSV without lon/lat columns).
    x_column, y_column : str, optional
        A CSV's coordinate columns.
    fields : dict, optional
        ``[inputs.fields]``; given, a CSV's header is checked for the required fields before its body is read.
    """
    path = Path(path)
    if not path.exists():
        raise DataError(f"structures file {path}: not found")
    if path.is_file() and path.suffix.lower() in (".csv", ".txt"):
        return _read_csv(path, crs, x_column, y_column, fields)
    try:
        layers = [name for name, _ in pyogrio.list_layers(path)]
    except Exception as exc:  # GDAL raises several types for unreadable files
        raise DataError(f"structures file {path}: cannot be read as a vector dataset ({_short(exc)})") from None
    if layer is not None and layer not in layers:
        raise DataError(f"structures file {path}: no layer {layer!r}; layers: {', '.join(layers) or 'none'}")
    layer = _default_layer(path, layers) if layer is None else layer
    try:
        gdf = pyogrio.read_dataframe(path, layer=layer)
    except Exception as exc:
        raise DataError(f"structures file {path}: cannot be read ({_short(exc)})") from None
    if not isinstance(gdf, gpd.GeoDataFrame) or gdf.geometry is None:
        raise DataError(f"structures file {path}: layer {layer!r} has no geometry; expected points")
    if len(gdf) == 0:
        raise DataError(f"structures file {path}: layer {layer!r} is empty (no features)")
    if gdf.crs is None and crs:
        gdf = _set_crs(gdf, crs, path)
    return gdf


def _default_layer(path, layers) -> str:
    """The only layer, or the one called ``structures``; several others need a name."""
    if len(layers) == 1:
        return layers[0]
    if "structures" in layers:
        return "structures"
    if not layers:
        raise DataError(f"structures file {path}: holds no layers")
    raise DataError(f"structures file {path}: holds {len(layers)} layers ({', '.join(layers)}); "
                    "name the structures layer with [inputs] structures_layer")


def _set_crs(gdf, crs, path):
    try:
        return gdf.set_crs(crs)
    except CRSError:
        raise DataError(f"structures file {path}: [inputs] crs = {crs!r} is not a CRS PROJ knows "
                        "(give e.g. 'EPSG:32633')") from None


def _read_csv(path: Path, crs, x_column=None, y_column=None, fields=None) -> gpd.GeoDataFrame:
    where = f"structures file {path}"
    try:
        with path.open(encoding="utf-8-sig", newline="") as fh:
            separator = sniff_separator(fh.read(8192))
        header = pd.read_csv(path, sep=separator, encoding="utf-8-sig", nrows=0)
    except Exception as exc:
        raise DataError(f"{where}: cannot be read as CSV ({_short(exc)})") from None
    # The header alone tells a missing column: a large file is not read before saying so.
    header.columns = [str(c).strip() for c in header.columns]
    x, y, degrees = coordinate_columns(header.columns, x_column, y_column, where)
    if fields is not None:
        missing = missing_required_fields(apply_field_map(header, fields, FIELDS, where)[0], where)
        if missing:
            raise DataError(missing)
    try:
        df = decimal_commas_to_numbers(pd.read_csv(path, sep=separator, encoding="utf-8-sig"))
    except Exception as exc:
        raise DataError(f"{where}: cannot be read as CSV ({_short(exc)})") from None
    df.columns = [str(c).strip() for c in df.columns]
    note = f"CSV separator {separator!r}; coordinates from columns {x!r}, {y!r}"
    if not crs and degrees:
        crs, note = "EPSG:4326", note + " read as WGS 84 lon/lat (no [inputs] crs)"
    if not crs:
        raise DataError(f"{where}: a CSV carries no CRS; set [inputs] crs in the project file")
    bad = [i for i in range(len(df)) if not (_is_number(df[x].iloc[i]) and _is_number(df[y].iloc[i]))]
    if bad:
        raise DataError([f"{where}: row {i + 1}: {x}/{y} must be numbers" for i in bad])
    geometry = gpd.points_from_xy(df[x].astype(float), df[y].astype(float))
    gdf = _set_crs(gpd.GeoDataFrame(df.drop(columns=[x, y]), geometry=geometry), crs, path)
    gdf.attrs["note"] = note
    return gdf


def _short(exc: Exception) -> str:
    return str(exc).splitlines()[0][:200] if str(exc) else type(exc).__name__


def _is_number(value) -> bool:
    try:
        return np.isfinite(float(value))
    except (TypeError, ValueError):
        return False


def _near(name: str, columns) -> str:
    norm = {c.lower().replace("_", "").replace(" ", ""): c for c in map(str, columns)}
    key = name.replace("_", "")
    if key in norm:
        return f" (found {norm[key]!r}: rename it to {name!r})"
    close = difflib.get_close_matches(name, list(map(str, columns)), n=1, cutoff=0.6)
    return f" (did you mean {close[0]!r}?)" if close else ""


def check_structures(gdf: gpd.GeoDataFrame, source, default_attach_height_m=None, *, fields=None,
                     height_units=None, warn=None) -> gpd.GeoDataFrame:
    """Validate fields and geometry; return a clean frame with normalised columns.

    Parameters
    ----------
    fields : dict, optional
        ``[inputs.fields]``: routesag field name -> the file's field name.
    height_units : {"m", "ft", "ftUS"}, optional
        Unit of attach_height_m, insulator_m and ground_z_m (None: metres,
        with a warning when they look like feet in a feet CRS).
    warn : callable, optional
        Called with each warning (unmapped look-alike fields, feet heights).

    Output columns: structure_id (str), line_id (str), seq (float), kind
    (suspension or strain), kind_given (the file's word), attach_height_m,
    ground_z_m (NaN when not surveyed), insulator_m (suspension string
    length, 0 when not given), geometry (points); heights in metres.
    """
    problems: list[str] = []
    where = f"structures file {source}"
    warn = warn or (lambda message: None)
    if len(gdf) == 0:
        raise DataError(f"{where}: the layer is empty")
    gdf, warnings = apply_field_map(gdf, fields, FIELDS, where)
    for message in warnings:
        warn(message)
    if gdf.crs is None:
        problems.append(f"{where}: no CRS; give the layer a CRS or set [inputs] crs in the project file")
    problems += missing_required_fields(gdf, where)
    if problems:
        raise DataError(problems)

    out = gpd.GeoDataFrame(geometry=gdf.geometry.values, crs=gdf.crs)
    out["structure_id"] = gdf["structure_id"].astype("string").str.strip()
    labels = [_label(i, sid) for i, sid in enumerate(out["structure_id"])]
    out["line_id"] = (gdf["line_id"].astype("string").fillna(DEFAULT_LINE_ID)
                      if "line_id" in gdf.columns else DEFAULT_LINE_ID)
    out["seq"] = _numeric(gdf["seq"], "seq", labels, where, problems, required=True)
    out["kind"], out["kind_given"] = _kinds(gdf, labels, where, problems)
    factor = HEIGHT_FACTORS[height_units or "m"]
    _warn_feet(gdf, height_units, default_attach_height_m, where, warn)
    out["attach_height_m"] = _attach_heights(gdf, default_attach_height_m, factor, labels, where, problems)
    out["ground_z_m"] = (factor * _numeric(gdf["ground_z_m"], "ground_z_m", labels, where, problems)
                         if "ground_z_m" in gdf.columns else np.nan)
    out["insulator_m"] = _insulators(gdf, out["attach_height_m"].to_numpy(), factor, labels, where, problems)
    for i, sid in enumerate(out["structure_id"]):
        if pd.isna(sid) or sid == "":
            problems.append(f"{where}: {labels[i]}: field 'structure_id' is empty")
    _check_geometry(out, labels, where, problems)
    _check_duplicates(out, labels, where, problems)
    if problems:
        raise DataError(problems)
    return out


def missing_required_fields(frame, where) -> list[str]:
    """A message for each required field the frame (after the field map) lacks, with a hint at a near name."""
    return [f"{where}: missing required field {name!r}{hint_for_missing(name, frame.columns)}"
            for name in REQUIRED_FIELDS if name not in frame.columns]


def _warn_feet(gdf, height_units, default_m, where, warn) -> None:
    """Heights that look like feet in a feet CRS, with no unit declared: a loud warning."""
    if height_units is not None or gdf.crs is None or "attach_height_m" not in gdf.columns:
        return
    axis = CRS(gdf.crs).axis_info
    if not axis or not any(word in axis[0].unit_name.lower() for word in ("foot", "feet")):
        return
    heights = pd.to_numeric(gdf["attach_height_m"], errors="coerce").dropna()
    if len(heights) and (heights > FEET_SUSPECT_MIN).all() and (default_m is None or default_m < heights.min() / 2):
        warn(f"{where}: HEIGHTS MAY BE IN FEET: the CRS is in {axis[0].unit_name} and every attach_height_m is "
             f"above {FEET_SUSPECT_MIN:g} (lowest {heights.min():g}); they are read as metres. Set "
             "[inputs] height_units = \"ft\" (or \"ftUS\"), or \"m\" to confirm metres")


def _label(i: int, sid) -> str:
    return f"row {i + 1}" if pd.isna(sid) or sid == "" else f"structure {sid} (row {i + 1})"


def _numeric(series, name, labels, where, problems, required=False) -> np.ndarray:
    values = pd.to_numeric(series, errors="coerce").to_numpy(dtype=float)
    for i, (raw, val) in enumerate(zip(series, values)):
        if np.isinf(val):
            problems.append(f"{where}: {labels[i]}: field {name!r} = {val:g} is not a finite number")
        elif np.isnan(val) and not pd.isna(raw):
            problems.append(f"{where}: {labels[i]}: field {name!r} = {_shown(raw)} is not a number")
        elif np.isnan(val) and required:
            problems.append(f"{where}: {labels[i]}: field {name!r} is empty")
    return values


def _shown(raw) -> str:
    """A field's raw value for a message, a long text cut in the middle."""
    return repr(cut(raw)) if isinstance(raw, str) else repr(raw)


def _kinds(gdf, labels, where, problems) -> tuple[list[str], list[str]]:
    """routesag's kind (suspension or strain) and the word the file gave, per structure."""
    if "kind" not in gdf.columns:
        return ["suspension"] * len(gdf), [""] * len(gdf)
    kinds, given = [], []
    for i, raw in enumerate(gdf["kind"]):
        word = "" if pd.isna(raw) else str(raw).strip()
        key = "-".join(word.lower().replace("_", " ").split())
        kind = "suspension" if word == "" else KIND_WORDS.get(key)
        if kind is None:
            words = ", ".join(f"{w} ({k})" for w, k in KIND_WORDS.items())
            problems.append(f"{where}: {labels[i]}: field 'kind' = {raw!r} is not a known kind; "
                            f"accepted (any case): {words}")
        kinds.append(kind or "suspension")
        given.append(word)
    return kinds, given


def _attach_heights(gdf, default, factor, labels, where, problems) -> np.ndarray:
    if "attach_height_m" not in gdf.columns:
        if default is None:
            problems.append(f"{where}: no field 'attach_height_m' and the project sets no [line] attach_height_m "
                            f"default{hint_for_missing('attach_height_m', gdf.columns)}")
        return np.full(len(gdf), np.nan if default is None else default)
    heights = factor * _numeric(gdf["attach_height_m"], "attach_height_m", labels, where, problems)
    for i, h in enumerate(heights):
        if np.isnan(h):
            if default is None and not _given(gdf["attach_height_m"].iloc[i]):
                problems.append(f"{where}: {labels[i]}: field 'attach_height_m' is empty and the project "
                                "sets no [line] attach_height_m default")
            continue
        if h <= 0 or h > MAX_ATTACH_HEIGHT_M:
            problems.append(f"{where}: {labels[i]}: field 'attach_height_m' = {h:g} m; expected "
                            f"0 < height <= {MAX_ATTACH_HEIGHT_M:g} m")
    if default is not None:
        heights = np.where(np.isnan(heights), default, heights)
    return heights


def _given(raw) -> bool:
    return not (pd.isna(raw) or str(raw).strip() == "")


def _insulators(gdf, heights, factor, labels, where, problems) -> np.ndarray:
    """Suspension string lengths [m]; empty means none (0). The wire must hang above the ground."""
    if "insulator_m" not in gdf.columns:
        return np.zeros(len(gdf))
    lengths = factor * _numeric(gdf["insulator_m"], "insulator_m", labels, where, problems)
    for i, (length, height) in enumerate(zip(lengths, heights)):
        if length < 0 or length >= height:
            problems.append(f"{where}: {labels[i]}: field 'insulator_m' = {length:g} m; expected "
                            f"0 <= length < attach_height_m ({height:g} m)")
    return np.nan_to_num(lengths, nan=0.0)


def _check_geometry(out, labels, where, problems) -> None:
    for i, geom in enumerate(out.geometry):
        if geom is None or geom.is_empty:
            problems.append(f"{where}: {labels[i]}: geometry is empty")
        elif geom.geom_type != "Point":
            problems.append(f"{where}: {labels[i]}: geometry is {geom.geom_type}; expected Point")
        elif not np.isfinite([geom.x, geom.y]).all():
            problems.append(f"{where}: {labels[i]}: geometry has a coordinate that is not a finite number "
                            f"({geom.x!r}, {geom.y!r})")


def _check_duplicates(out, labels, where, problems) -> None:
    for line_id, group in out.groupby("line_id", sort=False):
        ids = group["structure_id"].dropna()
        for sid in sorted(set(ids[ids.duplicated()])):
            problems.append(f"{where}: {line_label(line_id)}: structure_id {sid!r} appears more than once")
        seq = group["seq"].dropna()
        for value in sorted(set(seq[seq.duplicated()])):
            rows = [labels[i] for i in group.index[group["seq"] == value]]
            problems.append(f"{where}: {line_label(line_id)}: seq {value:g} is used by {', '.join(rows)}")
        if len(group) < 2:
            problems.append(f"{where}: {line_label(line_id)} has only one structure ({labels[group.index[0]]}); "
                            "a line needs at least two")


def working_crs(crs: CRS, lon_lat_center=None, lon_lat_points=None) -> tuple[CRS, str]:
    """A projected CRS in metres for span geometry, and a note saying why.

    A projected CRS in metres is kept when its scale factor at the structures
    (``lon_lat_points``, default the centre) is within
    :data:`~routesag.io.crs_checks.MAX_SCALE_DISTORTION` of 1. Geographic or
    non-metre CRSs, and projected ones that distort lengths more (Web Mercator
    away from the equator), are replaced by a local conformal CRS at the
    data's centre (see :func:`~routesag.io.crs_checks.local_conformal_crs`),
    so spans are measured in true metres.
    """
    crs = CRS.from_user_input(crs)
    unit = crs.axis_info[0].unit_name if crs.axis_info else ""
    lon, lat = lon_lat_center
    if crs.is_projected and unit in ("metre", "meter"):
        points = lon_lat_points if lon_lat_points is not None else ([lon], [lat])
        distortion = scale_distortion(crs, *points)
        if distortion is None or distortion <= MAX_SCALE_DISTORTION:
            measured = "" if distortion is None else f", scale factor within {100 * distortion:.3g} % of 1"
            return crs, f"structures CRS {crs.to_string()} used as is (projected, metres{measured})"
        why = (f"projected but its scale factor at the structures departs from 1 by up to {100 * distortion:.3g} % "
               f"(more than {100 * MAX_SCALE_DISTORTION:g} %: spans and sags would be wrong)")
    else:
        why = "geographic (lat/lon)" if crs.is_geographic else f"horizontal unit {unit!r}"
    local, name = local_conformal_crs(lon, lat)
    return local, f"structures CRS {crs.to_string()} is {why}: reprojected to {local.to_string()} ({name})"


def to_working_crs(gdf: gpd.GeoDataFrame, source="") -> tuple[gpd.GeoDataFrame, CRS, str]:
    """Reproject structures to a projected metre CRS (see :func:`working_crs`).

    A local (engineering) grid in metres cannot be placed on earth and is used
    as is; the terrain must then be in the same grid.

    Raises
    ------
    DataError
        Coordinates that cannot be placed on the earth in their CRS (e.g. a
        latitude beyond 90 degrees: projected coordinates read as lat/lon), or
        a CRS that cannot be transformed to lat/lon.
    """
    crs = CRS(gdf.crs)
    if crs.is_engineering and crs.axis_info and crs.axis_info[0].unit_name in ("metre", "meter"):
        return gdf, crs, f"structures CRS {crs.name!r} is a local grid in metres: used as is"
    where = f"structures file {source}"
    lon_lat = reproject(gdf, 4326, where, "lat/lon")
    lon, lat = lon_lat.geometry.x.to_numpy(), lon_lat.geometry.y.to_numpy()
    bad = ~(np.isfinite(lon) & np.isfinite(lat) & (np.abs(lat) <= 90.0) & (np.abs(lon) <= 180.0))
    if bad.any():
        raise DataError([f"structures file {source}: structure {sid}: coordinates "
                         f"({x:.6g}, {y:.6g}) are not a place on earth in CRS {CRS(gdf.crs).to_string()}; "
                         "check the CRS (projected metres read as degrees?)"
                         for sid, x, y in zip(gdf.loc[bad, "structure_id"], gdf.geometry.x[bad], gdf.geometry.y[bad])])
    crs, note = working_crs(gdf.crs, centre_lon_lat(lon, lat), (lon, lat))
    return (gdf if CRS(gdf.crs) == crs else reproject(gdf, crs, where, repr(crs.name))), crs, note


def reproject(gdf: gpd.GeoDataFrame, crs, where: str, target: str,
              advice: str = "reproject the layer to a projected CRS in metres") -> gpd.GeoDataFrame:
    """``gdf.to_crs(crs)``; a CRS pair PROJ cannot relate (a local grid, say) is a DataError.

    Parameters
    ----------
    where : str
        File (and layer) for the message.
    target : str
        What ``crs`` is, for the message (e.g. ``"lat/lon"``).
    advice : str
        What the user should do.
    """
    try:
        return gdf.to_crs(crs)
    except (CRSError, ProjError) as exc:
        raise DataError(f"{where}: CRS {CRS(gdf.crs).name!r} cannot be transformed to {target} "
                        f"({_short(exc)}); {advice}") from None


def finite_coordinates(geometries) -> np.ndarray:
    """Whether each geometry has coordinates and all of them (x, y) are finite.

    A transformation that cannot place a point (projected metres read as
    degrees, say) gives infinite coordinates, which later steps turn into
    empty geometry without a word.
    """
    geometries = np.asarray(geometries, dtype=object)
    coords, index = shapely.get_coordinates(geometries, return_index=True)
    finite = ~shapely.is_empty(geometries) & ~shapely.is_missing(geometries)
    finite[index[~np.isfinite(coords).all(axis=1)]] = False
    return finite
