"""Stages: assemble the output layers, and write them atomically to one GeoPackage."""
from __future__ import annotations

import copy
import json
from collections import OrderedDict
from dataclasses import dataclass
from functools import partial
from datetime import datetime, timezone

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely

from routesag import __version__
from routesag.io.gpkg import GeoPackageWriter, crs_label, linestrings_z_wkb, write_layers
from routesag.io.gpkg_version import DEFAULT_VERSION
from routesag.io.hashing import input_sha256
from routesag.io.layer_styles import write_layer_styles
from routesag.pipeline import Stage
from routesag.profiles import Profiles
from routesag.stages.tidy import only_wire, tidy_layers

CAUTION = ("Screening aid only: loads and required clearances come from the governing code (NESC, EN 50341 "
           "national annex, local rules); results must be confirmed by a licensed engineer.")

VIOLATION_COLUMNS = ["span_id", "from_id", "to_id", "section_id", "wire", "load_case", "station_m", "start_m",
                     "end_m", "conductor_z_m", "ground_z_m", "clearance_m", "required_m", "deficit_m", "category",
                     "surface_x", "surface_y", "surface_z"]
TEXT_COLUMNS = ("load_case", "category", "reason", "load_cases", "categories", "span_ids", "wire", "wires")
INTEGER_COLUMNS = ("rank", "n_violations")
#: Conductor stations buffered before a batch of sections is written to the GeoPackage (one transaction).
STREAM_BATCH_STATIONS = 200_000


#: Key of a section's results that holds its conductor rows, ready for the file (made where the section ran).
ROWS = "conductor_rows"


class OpenOutput(Stage):
    name = "open_output"
    requires = ("project", "structures", "spans", "sections", "tensions", "work_crs")
    provides = ("output_stream",)
    description = ("open the temporary GeoPackage; the line-level layers go in as the first section arrives, "
                   "each section's conductors as it finishes (batches of sections, one transaction each)")

    def run(self, data, ctx):
        project = data["project"]
        stream = LayerStream(project.output_path, data, protect=tuple(project.input_paths().values()),
                             version=gpkg_version(project))
        ctx.section_shapers.append(stream.rows_maker)
        ctx.section_sinks.append(stream.take_section)
        return {"output_stream": stream}


@dataclass
class SectionRows:
    """One section's conductor rows as they travel: attributes, each row's LineString Z as WKB, station count."""

    attributes: pd.DataFrame
    wkb: np.ndarray
    stations: int


@dataclass
class ConductorRowMaker:
    """Turns one section's profiles into its conductor rows, in the process that ran the section (picklable).

    What then travels is the rows (geometry as WKB bytes) and the profiles' summaries, not their stations.
    """

    ends: pd.DataFrame        # span_id, from_id, to_id of the spans
    case_info: pd.DataFrame   # the section's load cases (see case_columns)
    wire: str

    def __call__(self, outputs: dict) -> dict:
        if "conductors" not in outputs or "clearance" not in outputs:
            return outputs
        profiles = outputs["conductors"]
        attributes, wkb = conductor_rows(profiles, outputs["clearance"], self.case_info, self.ends)
        attributes = tidy_layers({"conductors": (attributes, None)}, self.wire)["conductors"][0]
        rows = SectionRows(attributes, wkb, sum(len(p.xyz) for p in profiles))
        return {**outputs, "conductors": summaries(profiles), ROWS: rows}


class LayerStream:
    """The run's GeoPackage while it is being written: line-level layers first, then conductors by batches.

    Each section's conductor rows are made where the section ran (:meth:`rows_maker`), so its 3D stations
    reach this process only as WKB bytes, go to the temporary file and leave memory; what the finish keeps
    of each profile is its summary (tensions, sag), with empty station arrays. Nothing reaches the
    destination before :meth:`commit`; :meth:`close` without a commit removes the temporary file.
    """

    def __init__(self, path, data, protect=(), version=DEFAULT_VERSION):
        self.writer = GeoPackageWriter(path, protect=protect, version=version)
        self.crs, self.spans, self.tensions = data["work_crs"], data["spans"], data["tensions"]
        self.wire = only_wire(self.tensions)
        self.ends = self.spans[["span_id", "from_id", "to_id"]]
        self.case_info = case_columns(self.tensions)
        self._cases = {k: g for k, g in self.case_info.groupby("section_id", sort=False)}
        self._crs_label = crs_label(self.crs)
        self._data = data  # the run's datasets: the line-level ones are complete once the sections run
        self._early: OrderedDict | None = None
        self._line_level_written = False
        self._pending: list[SectionRows] = []
        self._pending_stations = 0
        self.streamed: set[str] = set()
        #: Load cases in the order of their first conductor row (the layer styles' legend), as written.
        self.load_cases: dict[str, None] = {}

    @property
    def early(self) -> OrderedDict:
        """The line-level layers (structures, spans, sections), built once when first needed."""
        if self._early is None:
            self._early = tidy_layers(line_level_layers(self._data), self.wire)
        return self._early

    def write_line_level(self) -> None:
        """Write the line-level layers and tables, once. Called as the first section's results arrive, while
        the workers go on with the next ones, so none of it delays the first section being sent; and by
        :meth:`finish` when no section ran."""
        if self._line_level_written:
            return
        self._line_level_written = True
        try:
            for name, (frame, geometry) in {**self.early, **line_level_tables(self._data, self.wire)}.items():
                self.writer.write(name, frame, geometry)
        except BaseException:
            self.close()
            raise

    def rows_maker(self, section_id: str) -> ConductorRowMaker:
        """What turns section ``section_id``'s results into its conductor rows, wherever the section runs."""
        return ConductorRowMaker(self.ends, self._cases.get(section_id, self.case_info.iloc[:0]), self.wire)

    def take_section(self, result: dict) -> dict:
        """Sink of one section's results, in section order: its conductor rows are queued (and written by
        batch); the results go on without them (the profiles already without stations)."""
        if ROWS not in result and "conductors" in result and "clearance" in result:  # made in no worker
            result = ConductorRowMaker(self.ends, self.case_info, self.wire)(result)
        if ROWS not in result:
            return result
        self.write_line_level()
        rows = result[ROWS]
        self._pending.append(rows)
        self._pending_stations += rows.stations
        self.streamed.add("conductors")
        if self._pending_stations >= STREAM_BATCH_STATIONS:
            self.flush()
        return {k: v for k, v in result.items() if k != ROWS}

    def flush(self) -> None:
        """Write the queued sections' conductor rows in one transaction."""
        filled = [r for r in self._pending if len(r.attributes)] or self._pending[:1]
        if filled:
            attributes = (pd.concat([r.attributes for r in filled], ignore_index=True) if len(filled) > 1
                          else filled[0].attributes)
            wkb = np.concatenate([r.wkb for r in filled]) if len(filled) > 1 else filled[0].wkb
            self.writer.write("conductors", attributes, "LineString Z", wkb=wkb, crs=self._crs_label)
            self._note_load_cases(attributes)
        self._pending, self._pending_stations = [], 0

    def _note_load_cases(self, attributes) -> None:
        if "load_case" in attributes:
            self.load_cases.update(dict.fromkeys(pd.unique(attributes["load_case"])))

    def finish(self, layers) -> None:
        """Write the remaining layers in order after the streamed ones, then move the file into place."""
        self.write_line_level()
        self.flush()
        for name, (frame, geometry) in layers.items():
            if name not in self.writer.layers:
                self.writer.write(name, frame, geometry)
                if name == "conductors":
                    self._note_load_cases(frame)
        cases = list(self.load_cases) if "conductors" in self.writer.layers else None
        self.writer.commit(finalize=partial(write_layer_styles, load_cases=cases))

    def close(self) -> None:
        self.writer.discard()


def summaries(profiles) -> Profiles:
    """The profiles without their station arrays (what the line-level finish needs of them)."""
    stations, points = np.empty(0), np.empty((0, 3))
    return Profiles(_without_stations(p, stations, points) for p in profiles)


def _without_stations(profile, stations, points):
    """``dataclasses.replace(profile, stations_m=stations, xyz=points)`` without its per-call cost (it runs
    ``__init__`` again; a line has thousands of profiles)."""
    light = copy.copy(profile)
    light.stations_m, light.xyz = stations, points
    return light


def line_level_layers(data) -> OrderedDict:
    """The layers known before any section runs: structures, spans, sections."""
    crs, spans = data["work_crs"], data["spans"]
    layers = OrderedDict()
    layers["structures"] = (structures_layer(data["structures"], spans, crs), "Point Z")
    layers["spans"] = (spans_layer(spans, crs), "LineString Z")
    layers["sections"] = (sections_layer(data["sections"], data["tensions"]), None)
    return layers


#: Line-level attribute tables, usually made before the sections run, written while they run (dataset -> its
#: layer). Only tables: a GeoPackage reader lists them after every spatial layer, in the order they were made,
#: so writing them early leaves the file's list of layers as it was.
LINE_LEVEL_TABLES = {
    "tension_exceedances": lambda data: data["tension_exceedances"].copy(),
    "sag_table": lambda data: data["sag_table"].copy(),
}


def line_level_tables(data, wire: str) -> OrderedDict:
    """The layers of :data:`LINE_LEVEL_TABLES` whose datasets are already made, as :class:`AssembleLayers` makes
    them (same functions on the same datasets)."""
    layers = OrderedDict((name, (make(data), None)) for name, make in LINE_LEVEL_TABLES.items()
                         if data.get(name) is not None)
    return tidy_layers(layers, wire)


def gpkg_version(project) -> str:
    """The GeoPackage version the output declares (``[output] gpkg_version``)."""
    return project.settings.get("output", {}).get("gpkg_version", DEFAULT_VERSION)


#: Stands in a layers entry for a layer whose rows went to the GeoPackage as the sections finished.
STREAMED = None


class AssembleLayers(Stage):
    name = "assemble_layers"
    requires = ("project", "structures", "spans", "sections", "tensions", "conductors", "clearance",
                "violations", "structure_loads", "tension_exceedances", "sag_table", "hotspots",
                "unknown_stretches", "work_crs", "output_stream")
    provides = ("layers",)
    description = ("turn results into GeoDataFrames: structures, spans, sections, conductors, violations, "
                   "structure loads, tension exceedances, sag table, hotspots, unknown stretches, run_info")

    def run(self, data, ctx):
        crs = data["work_crs"]
        spans = data["spans"]
        stream = data.get("output_stream")
        layers = OrderedDict(stream.early if stream is not None else line_level_layers(data))
        if stream is not None and "conductors" in stream.streamed:
            layers["conductors"] = (STREAMED, "LineString Z")
        else:
            layers["conductors"] = (conductors_layer(data["conductors"], data["clearance"], data["tensions"],
                                                     spans, crs), "LineString Z")
        layers["clearance_violations"] = (violations_layer(data["violations"], spans, crs), "Point Z")
        layers["structure_loads"] = (structure_loads_layer(data["structure_loads"], crs), "Point Z")
        layers["tension_exceedances"] = (data["tension_exceedances"].copy(), None)
        layers["sag_table"] = (data["sag_table"].copy(), None)
        layers["hotspots"] = (hotspots_layer(data["hotspots"], crs), "Point Z")
        layers["unknown_stretches"] = (unknown_stretches_layer(data["unknown_stretches"], spans, crs),
                                       "LineString Z")
        for name, geometry in ctx.output_layers.items():  # layers contributed by other stages
            if data.get(name) is not None:
                layers[name] = (data[name], geometry)
        layers["run_info"] = (run_info_table(data["project"], ctx), None)
        return {"layers": tidy_layers(layers, only_wire(data["tensions"]))}


class WriteGeoPackage(Stage):
    name = "write_geopackage"
    requires = ("project", "layers", "output_stream")
    provides = ("geopackage",)
    description = "write the remaining layers to the temporary GeoPackage, then move it into place (atomic rename)"

    def run(self, data, ctx):
        project = data["project"]
        layers = data["layers"]
        if "run_info" in layers:  # rebuilt now, so the notes and warnings of every stage before the writer are in it
            layers["run_info"] = (run_info_table(project, ctx), None)
        stream = data.get("output_stream")
        if stream is None:
            write_layers(project.output_path, layers, protect=tuple(project.input_paths().values()),
                         version=gpkg_version(project), finalize=write_layer_styles)
        else:
            stream.finish(layers)
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
    """Tension sections with the stringing tension used and, in limits mode, the limit that set it.

    Also the stringing method (change of state of the section or on its ruling span, ``ruling_span_m``),
    the conductor's stretch model (``conductor_model``: linear or two_material) and, for a two-material
    conductor, the knee-point temperature of each condition (bare wire).
    """
    keys = ["section_id"] + (["wire"] if "wire" in tensions.columns else [])
    design = tensions.groupby(keys, sort=False).first().reset_index()
    design["stringing_percent_rts"] = 100.0 * design["stringing_tension_n"] / design["rated_strength_n"]
    columns = ["stringing_tension_n", "stringing_percent_rts", "design_tension_n", "governing_case",
               "governing_limit", "stringing_method", "conductor_model", "knee_point_initial_c",
               "knee_point_final_c"]
    columns += [c for c in ("as_found_tension_n", "as_found_spread_percent", "tension_source") if c in design]
    return sections.merge(design[keys + columns], on="section_id", how="left")


def conductors_layer(profiles, clearance, tensions, spans, crs) -> gpd.GeoDataFrame:
    """One LineString Z per span and load case with tensions, sag and clearance summary."""
    attributes, wkb = conductor_rows(profiles, clearance, case_columns(tensions), spans[["span_id", "from_id",
                                                                                            "to_id"]])
    return gpd.GeoDataFrame(attributes, geometry=shapely.from_wkb(wkb), crs=crs)


#: Profile attributes of a conductor row, in column order (length_m follows blowout_deg).
PROFILE_COLUMNS = ("span_id", "section_id", "wire", "load_case", "horizontal_tension_n", "max_tension_n",
                   "catenary_m", "sag_m", "low_point_m", "blowout_deg")


def case_columns(tensions) -> pd.DataFrame:
    """What a conductor row tells of its load case, by (section_id, wire, load_case)."""
    return tensions[["section_id", "wire", "load_case", "temperature_c", "current_a", "ice_mm", "wind_pa",
                     "condition", "rated_strength_n"] + [c for c in ("tension_source",) if c in tensions]]


#: The tables a conductor row takes columns from, by the key it looks them up on.
ENDS_KEY, CASE_KEY, CLEARANCE_KEY = ["span_id"], ["section_id", "wire", "load_case"], ["span_id", "wire", "load_case"]


def conductor_rows(profiles, clearance, case_info, ends) -> tuple[pd.DataFrame, np.ndarray]:
    """Attributes of one conductor row per profile (tensions, sag, 3D length, load case, clearance summary) and
    each row's LineString Z as WKB."""
    profiles = list(profiles)
    columns = {c: [getattr(p, c) for p in profiles] for c in PROFILE_COLUMNS}
    columns["length_m"] = wire_lengths_m([p.xyz for p in profiles])
    columns["swung_sag_m"] = [p.swung_sag_m for p in profiles]
    columns["blowout_m"] = [p.blowout_m for p in profiles]
    if profiles:
        added = joined(columns, ((ends, ENDS_KEY), (case_info, CASE_KEY), (clearance, CLEARANCE_KEY)))
        frame = pd.DataFrame(with_percent_rts(added))   # built once, in its final column order
    else:
        frame = pd.DataFrame()
    return frame, linestrings_z_wkb([p.xyz for p in profiles])


#: The columns a conductor row starts with; the others follow in the order they were added.
LEADING_COLUMNS = ("span_id", "from_id", "to_id", "section_id", "wire", "load_case")


def with_percent_rts(columns: dict) -> dict:
    """``columns`` (arrays or lists by name) with the tensions as a percentage of the rated strength in place of
    the rated strength, the leading columns first."""
    rated = columns.pop("rated_strength_n")
    if isinstance(rated, pd.api.extensions.ExtensionArray) and not isinstance(rated.dtype, np.dtype):
        rated = pd.Series(rated)   # a nullable column: pandas' own arithmetic, as a frame's would be
    else:
        rated = np.asarray(rated)
    for name, tension in (("tension_percent_rts", "horizontal_tension_n"),
                          ("max_tension_percent_rts", "max_tension_n")):
        percent = 100.0 * np.asarray(columns[tension], dtype=float) / rated
        columns[name] = percent.array if isinstance(percent, pd.Series) else percent
    order = [c for c in LEADING_COLUMNS if c in columns] + [c for c in columns if c not in LEADING_COLUMNS]
    return {c: columns[c] for c in order}


def wire_lengths_m(parts) -> list[float]:
    """3D length of each polyline (n, 3) [m]: the sum of its segments' lengths, each sqrt(dx^2 + dy^2 + dz^2).

    Summed in the order ``np.linalg.norm(np.diff(p, axis=0), axis=1).sum()`` sums (the same value to the
    bit: each polyline's segment lengths are one contiguous run, summed alone), without its per-call overhead:
    one profile is a few hundred points, a line thousands of profiles.
    """
    parts = list(parts)
    if not parts:
        return []
    points = np.concatenate(parts)
    d = points[1:] - points[:-1]
    d *= d
    squared = d[:, 0] + d[:, 1]
    squared += d[:, 2]
    segment = np.sqrt(squared)   # segment i joins points i and i + 1; those across two polylines are skipped
    bounds = np.cumsum([0] + [len(p) for p in parts]).tolist()
    return [float(segment[a:max(b - 1, a)].sum()) for a, b in zip(bounds[:-1], bounds[1:])]


def joined(columns: dict, joins) -> dict:
    """``columns`` (lists or arrays by name) left-merged with each ``(table, key)`` of ``joins`` in turn, as
    columns by name: by looking each row's key up when that gives the merge's rows (a merge costs
    milliseconds per call, and a line has three per section), else by the merges themselves."""
    added = dict(columns)
    for right, on in joins:
        found = looked_up(added, right, on)
        if found is None:
            frame = pd.DataFrame(columns)
            for table, key in joins:
                frame = frame.merge(table, on=key, how="left")
            return {c: frame[c].array for c in frame.columns}
        added.update(found)
    return added


def looked_up(columns: dict, right: pd.DataFrame, on) -> dict | None:
    """``right``'s other columns for each row of ``columns`` (lists or arrays by name), found by the ``on`` key,
    as a left merge would add them; None when a key of ``right`` repeats, a row finds none or a name clashes
    (then the merge itself decides)."""
    others = [c for c in right.columns if c not in on]
    if set(others) & set(columns):
        return None
    position = {k: i for i, k in enumerate(zip(*(_plain(right[c]) for c in on)))}
    if len(position) < len(right):
        return None
    wanted = [position.get(k, -1) for k in zip(*(_plain(columns[c]) for c in on))]
    if -1 in wanted:
        return None
    wanted = np.array(wanted, dtype=np.int64)
    return {c: array.take(wanted) for c, array in ((c, right[c].array) for c in others)}


def _plain(values) -> list:
    """A column's values as a list of Python objects: iterating a pandas column item by item costs
    microseconds each."""
    if isinstance(values, list):
        return values
    return np.asarray(values, dtype=object).tolist()


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
        rows.append((f"input.{role}.sha256", input_sha256(role, path, ctx)))
    for key, value in sorted(ctx.notes.items()):
        rows.append((f"note.{key}", value if isinstance(value, str) else json.dumps(value)))
    for table, values in project.settings.items():
        rows.append((f"param.{table}", json.dumps(values, sort_keys=True, default=str)))
    for i, message in enumerate(ctx.warnings):
        rows.append((f"warning.{i + 1}", message))
    return pd.DataFrame(rows, columns=["key", "value"])
