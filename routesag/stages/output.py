"""Stages: assemble the output layers, and write them atomically to one GeoPackage."""
from __future__ import annotations

import json
from collections import OrderedDict
from datetime import datetime, timezone

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely

from routesag import __version__
from routesag.io.gpkg import write_layers
from routesag.io.hashing import sha256_file
from routesag.io.layer_styles import write_layer_styles
from routesag.pipeline import Stage

CAUTION = ("Screening aid only: loads and required clearances come from the governing code (NESC, EN 50341 "
           "national annex, local rules); results must be confirmed by a licensed engineer.")

VIOLATION_COLUMNS = ["span_id", "from_id", "to_id", "section_id", "wire", "load_case", "station_m", "start_m",
                     "end_m", "conductor_z_m", "ground_z_m", "clearance_m", "required_m", "deficit_m", "category",
                     "surface_x", "surface_y", "surface_z"]
TEXT_COLUMNS = ("load_case", "category", "reason", "load_cases", "categories", "span_ids", "wire", "wires")
INTEGER_COLUMNS = ("rank", "n_violations")


class AssembleLayers(Stage):
    name = "assemble_layers"
    requires = ("project", "structures", "spans", "sections", "tensions", "conductors", "clearance",
                "violations", "structure_loads", "tension_exceedances", "sag_table", "hotspots",
                "unknown_stretches", "work_crs")
    provides = ("layers",)
    description = ("turn results into GeoDataFrames: structures, spans, sections, conductors, violations, "
                   "structure loads, tension exceedances, sag table, hotspots, unknown stretches, run_info")

    def run(self, data, ctx):
        crs = data["work_crs"]
        spans = data["spans"]
        layers = OrderedDict()
        layers["structures"] = (structures_layer(data["structures"], spans, crs), "Point Z")
        layers["spans"] = (spans_layer(spans, crs), "LineString Z")
        layers["sections"] = (sections_layer(data["sections"], data["tensions"]), None)
        layers["conductors"] = (conductors_layer(data["conductors"], data["clearance"], data["tensions"],
                                                 spans, crs), "LineString Z")
        layers["clearance_violations"] = (violations_layer(data["violations"], spans, crs), "Point Z")
        layers["structure_loads"] = (structure_loads_layer(data["structure_loads"], crs), "Point Z")
        layers["tension_exceedances"] = (data["tension_exceedances"].copy(), None)
        layers["sag_table"] = (data["sag_table"].copy(), None)
        layers["hotspots"] = (hotspots_layer(data["hotspots"], crs), "Point Z")
        layers["unknown_stretches"] = (unknown_stretches_layer(data["unknown_stretches"], spans, crs),
                                       "LineString Z")
        layers["run_info"] = (run_info_table(data["project"], ctx), None)
        return {"layers": layers}


class WriteGeoPackage(Stage):
    name = "write_geopackage"
    requires = ("project", "layers")
    provides = ("geopackage",)
    description = "write every layer to the output GeoPackage atomically (temp file, then rename)"

    def run(self, data, ctx):
        project = data["project"]
        write_layers(project.output_path, data["layers"], protect=tuple(project.input_paths().values()),
                     finalize=write_layer_styles)
        return {"geopackage": project.output_path}


def structures_layer(structures, spans, crs) -> gpd.GeoDataFrame:
    """Structures as Point Z at the attachment, with the tension section that starts there.

    Structure ids are unique only within a line, so spans are matched on (line_id, structure_id).
    """
    keys = pd.MultiIndex.from_arrays([structures["line_id"].astype(str), structures["structure_id"].astype(str)])
    starting = spans.groupby(["line_id", "from_id"], sort=False)["section_id"].first().reindex(keys)
    ending = spans.groupby(["line_id", "to_id"], sort=False)["section_id"].last().reindex(keys)
    section = starting.fillna(ending)
    columns = ["structure_id", "line_id", "seq", "kind", "attach_height_m", "ground_z_m", "attach_z_m"]
    columns += [c for c in ("insulator_m",) if c in structures]
    frame = pd.DataFrame(structures[columns]).assign(section_id=section.to_numpy())
    geometry = shapely.points(structures["x"], structures["y"], structures["attach_z_m"])
    return gpd.GeoDataFrame(frame.astype({"structure_id": str, "line_id": str}), geometry=geometry, crs=crs)


def spans_layer(spans, crs) -> gpd.GeoDataFrame:
    """Spans as LineString Z from attachment to attachment."""
    coords = np.stack([spans[["x0", "y0", "z0"]].to_numpy(), spans[["x1", "y1", "z1"]].to_numpy()], axis=1)
    columns = ["span_id", "line_id", "from_id", "to_id", "section_id", "span_m", "dz_m", "bearing_deg",
               "ruling_span_m"]
    return gpd.GeoDataFrame(spans[columns].copy(), geometry=shapely.linestrings(coords), crs=crs)


def sections_layer(sections, tensions) -> pd.DataFrame:
    """Tension sections with the stringing tension used and, in limits mode, the limit that set it."""
    keys = ["section_id"] + (["wire"] if "wire" in tensions.columns else [])
    design = tensions.groupby(keys, sort=False).first().reset_index()
    design["stringing_percent_rts"] = 100.0 * design["stringing_tension_n"] / design["rated_strength_n"]
    columns = ["stringing_tension_n", "stringing_percent_rts", "design_tension_n", "governing_case",
               "governing_limit"]
    return sections.merge(design[keys + columns], on="section_id", how="left")


def conductors_layer(profiles, clearance, tensions, spans, crs) -> gpd.GeoDataFrame:
    """One LineString Z per span and load case with tensions, sag and clearance summary."""
    rows = []
    for p in profiles:
        length_m = float(np.linalg.norm(np.diff(p.xyz, axis=0), axis=1).sum())
        rows.append({"span_id": p.span_id, "section_id": p.section_id, "wire": p.wire, "load_case": p.load_case,
                     "horizontal_tension_n": p.horizontal_tension_n, "max_tension_n": p.max_tension_n,
                     "catenary_m": p.catenary_m, "sag_m": p.sag_m, "low_point_m": p.low_point_m,
                     "blowout_deg": p.blowout_deg, "length_m": length_m,
                     "swung_sag_m": p.swung_sag_m, "blowout_m": p.blowout_m})
    frame = pd.DataFrame(rows)
    if len(frame):
        ends = spans[["span_id", "from_id", "to_id"]]
        case_info = tensions[["section_id", "wire", "load_case", "temperature_c", "ice_mm", "wind_pa",
                              "condition", "rated_strength_n"]]
        frame = (frame.merge(ends, on="span_id", how="left")
                 .merge(case_info, on=["section_id", "wire", "load_case"], how="left")
                 .merge(clearance, on=["span_id", "wire", "load_case"], how="left"))
        frame["tension_percent_rts"] = 100.0 * frame["horizontal_tension_n"] / frame["rated_strength_n"]
        frame["max_tension_percent_rts"] = 100.0 * frame["max_tension_n"] / frame.pop("rated_strength_n")
        order = ["span_id", "from_id", "to_id", "section_id", "wire", "load_case"]
        frame = frame[order + [c for c in frame.columns if c not in order]]
    geometry = [shapely.linestrings(p.xyz) for p in profiles]
    return gpd.GeoDataFrame(frame, geometry=geometry, crs=crs)


def empty_layer(columns, crs) -> gpd.GeoDataFrame:
    """A layer with no rows that still carries its columns (text, integer or real) and CRS."""
    def dtype(column):
        if column.endswith("_id") or column in TEXT_COLUMNS:
            return str
        return "int64" if column in INTEGER_COLUMNS else float

    empty = pd.DataFrame({c: pd.Series(dtype=dtype(c)) for c in columns})
    return gpd.GeoDataFrame(empty, geometry=gpd.GeoSeries([], crs=crs), crs=crs)


def violations_layer(violations, spans, crs) -> gpd.GeoDataFrame:
    """Violation points (Point Z on the wire at the worst station of each stretch)."""
    if len(violations) == 0:
        return empty_layer(VIOLATION_COLUMNS, crs)
    frame = violations.merge(spans[["span_id", "from_id", "to_id", "section_id"]], on="span_id", how="left")
    frame = frame.reindex(columns=list(dict.fromkeys(list(frame.columns) + VIOLATION_COLUMNS)))
    geometry = shapely.points(frame["x"], frame["y"], frame["conductor_z_m"])
    extra = [c for c in frame.columns if c not in VIOLATION_COLUMNS + ["x", "y"]]
    return gpd.GeoDataFrame(frame[VIOLATION_COLUMNS + extra], geometry=geometry, crs=crs)


def structure_loads_layer(loads, crs) -> gpd.GeoDataFrame:
    """Loads per structure, wire and load case as Point Z at the wire clamp (swung in that case)."""
    geometry = shapely.points(loads["x"], loads["y"], loads["z"])
    frame = loads.drop(columns=["x", "y", "z"]).astype({"structure_id": str, "line_id": str, "wire": str})
    return gpd.GeoDataFrame(frame, geometry=geometry, crs=crs)


def hotspots_layer(hotspots, crs) -> gpd.GeoDataFrame:
    """Hotspots as Point Z at their governing (worst) violation."""
    columns = [c for c in hotspots.columns if c not in ("x", "y", "z")]
    if len(hotspots) == 0:
        return empty_layer(columns, crs)
    geometry = shapely.points(hotspots["x"], hotspots["y"], hotspots["z"])
    return gpd.GeoDataFrame(hotspots[columns].copy(), geometry=geometry, crs=crs)


def unknown_stretches_layer(stretches, spans, crs) -> gpd.GeoDataFrame:
    """Stretches of wire with unknown clearance as LineString Z, with the span's ends and section."""
    ends = ["span_id", "from_id", "to_id", "section_id"]
    columns = [c for c in stretches.columns if c != "geometry"]
    if len(stretches) == 0:
        return empty_layer(ends + [c for c in columns if c != "span_id"], crs)
    frame = stretches.merge(spans[ends], on="span_id", how="left")
    order = ends + [c for c in columns if c not in ends]
    return gpd.GeoDataFrame(frame[order], geometry=list(frame["geometry"]), crs=crs)


def run_info_table(project, ctx) -> pd.DataFrame:
    """Provenance as key/value rows: version, time, inputs with SHA-256, CRS, every effective parameter."""
    rows = [("routesag_version", __version__),
            ("run_utc", datetime.now(timezone.utc).isoformat(timespec="seconds")),
            ("project_file", str(project.path)),
            ("output_file", str(project.output_path)),
            ("caution", CAUTION)]
    for role, path in project.input_paths().items():
        rows.append((f"input.{role}", str(path)))
        rows.append((f"input.{role}.sha256", sha256_file(path)))
    for key, value in sorted(ctx.notes.items()):
        rows.append((f"note.{key}", value if isinstance(value, str) else json.dumps(value)))
    for table, values in project.settings.items():
        rows.append((f"param.{table}", json.dumps(values, sort_keys=True, default=str)))
    for i, message in enumerate(ctx.warnings):
        rows.append((f"warning.{i + 1}", message))
    return pd.DataFrame(rows, columns=["key", "value"])
