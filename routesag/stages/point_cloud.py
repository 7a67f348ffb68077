"""Stages: read the LiDAR point cloud along the line, and fit the surveyed wires span by span.

``read_point_cloud`` keeps, chunk by chunk, only the points in a corridor
around the wires' chords, and splits them into wire points (``[point_cloud]
wire_classes``) and surface points (``surface_classes``, tagged with every
tension section whose corridor holds them, so the per-section stages get
their share). ``fit_wires`` assigns the wire points to span and wire, fits
each span's exact catenary, and estimates every section's as-found
horizontal tension at the survey temperature (see :mod:`routesag.stages.wire_fits`).
"""
from __future__ import annotations

import math

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely

from routesag.errors import ProjectError
from routesag.io.pointcloud import chord_corridor, read_points
from routesag.io.terrain import Z_UNIT_FACTORS
from routesag.physics.loads import bare_weight_n_m, conductor_load
from routesag.physics.wire_fit import FitSettings
from routesag.pipeline import Stage
from routesag.stages.as_found import bare_state
from routesag.stages.wire_fits import assign_section, fit_section, section_estimates

POINT_COLUMNS = ["x", "y", "z", "classification"]
#: Plan margin added to the default corridor, for the wire's plan path bending under wind and survey offsets [m].
CORRIDOR_MARGIN_M = 5.0
#: Sag bound of the default corridor as a share of the longest span: a sag over 5 % is already warned of.
SAG_BOUND_PER_SPAN = 0.10
#: Vertex spacing of the fitted curve drawn in the wire_fits layer [m].
FIT_VERTEX_M = 1.0


class ReadPointCloud(Stage):
    name = "read_point_cloud"
    requires = ("project", "wire_spans", "attachments", "work_crs")
    provides = ("cloud_wire_points", "surface_points", "point_corridor_m")
    description = ("read the point cloud in chunks, keep the corridor of the wires; wire points, and surface "
                   "points per tension section")

    def run(self, data, ctx):
        project = data["project"]
        settings = project.point_cloud
        if settings is None:
            return {"cloud_wire_points": empty_points(), "surface_points": empty_points(["section_id"]),
                    "point_corridor_m": math.nan}
        wire_spans = data["wire_spans"]
        half_width_m = settings.corridor_m or default_corridor_m(project, wire_spans, data["attachments"])
        corridor = chord_corridor(wire_spans["x0"], wire_spans["y0"], wire_spans["x1"], wire_spans["y1"],
                                  half_width_m)
        cloud = read_points(settings.path, data["work_crs"], corridor, settings.crs, settings.layer)
        z = cloud.z * Z_UNIT_FACTORS[project.terrain_z_units]  # vertical unit as for the terrain
        points = pd.DataFrame({"x": cloud.x, "y": cloud.y, "z": z, "classification": cloud.classification})
        wire = points[points["classification"].isin(settings.wire_classes)].reset_index(drop=True)
        surface = points_by_section(points[points["classification"].isin(settings.surface_classes)],
                                    wire_spans, half_width_m)
        ctx.notes.update({"point_cloud_points_read": cloud.n_read, "point_cloud_points_kept": cloud.n_kept,
                          "point_cloud_points_per_class": {str(k): v for k, v in cloud.per_class.items()},
                          "point_cloud_corridor_m": round(half_width_m, 3),
                          "point_cloud_wire_points": len(wire),
                          "point_cloud_surface_points": int(surface[["x", "y", "z"]].drop_duplicates().shape[0])})
        if cloud.n_kept == 0:
            ctx.warn(f"point cloud {settings.path}: no point lies within {half_width_m:.1f} m of the wires; "
                     "check its CRS ([inputs] point_cloud_crs)")
        return {"cloud_wire_points": wire, "surface_points": surface, "point_corridor_m": half_width_m}


def empty_points(extra=()) -> pd.DataFrame:
    return pd.DataFrame({c: pd.Series(dtype=float) for c in POINT_COLUMNS + list(extra)})


def default_corridor_m(project, wire_spans, attachments) -> float:
    """Half width of the corridor kept around the wires' chords [m].

    What a point outside it could still matter for: the wire's blowout (a
    sag bound of 10 % of the longest span, swung by the largest blowout angle
    of any load case), a suspension string's swing (its length), the largest
    required clearance, the wire search distance, and a margin.
    """
    largest_angle = 0.0
    for wire in {w.name: w for line in wire_spans["line_id"].unique() for w in project.line_wires(line)}.values():
        c = wire.conductor
        for case in project.load_cases:
            load = conductor_load(c.mass_kg_m, c.diameter_m, case.ice_m, case.wind_pa, case.constant_n_m,
                                  project.ice_density_kg_m3)
            largest_angle = max(largest_angle, float(load.blowout_rad))
    blowout_m = SAG_BOUND_PER_SPAN * float(wire_spans["span_m"].max()) * math.sin(largest_angle)
    string_m = float(attachments["insulator_m"].max()) if len(attachments) else 0.0
    reach_m = max(project.clearance.required_m.values())
    return blowout_m + string_m + reach_m + project.point_cloud.wire_search_m + CORRIDOR_MARGIN_M


def points_by_section(points: pd.DataFrame, wire_spans: pd.DataFrame, half_width_m: float) -> pd.DataFrame:
    """Surface points with the tension section whose corridor holds them; a point near two sections (at a
    strain structure) appears once for each."""
    frames = []
    for section_id, rows in wire_spans.groupby("section_id", sort=False):
        inside = chord_corridor(rows["x0"], rows["y0"], rows["x1"], rows["y1"], half_width_m)
        mask = inside(points["x"].to_numpy(), points["y"].to_numpy()) if len(points) else np.zeros(0, bool)
        frames.append(points[mask].assign(section_id=section_id))
    if not frames:
        return empty_points(["section_id"])
    return pd.concat(frames, ignore_index=True)


class FitWires(Stage):
    name = "fit_wires"
    requires = ("project", "sections", "wire_spans", "attachments", "cloud_wire_points", "work_crs")
    provides = ("wire_fits", "as_found_states", "wire_points")
    output_layers = {"wire_fits": "LineString Z", "wire_points": "Point Z"}
    description = ("assign wire points to span and wire, fit each span's exact catenary, estimate each "
                   "section's as-found tension at the survey temperature")

    def run(self, data, ctx):
        project = data["project"]
        settings = project.point_cloud
        if settings is None:
            return {"wire_fits": None, "as_found_states": empty_states(), "wire_points": None}
        points, crs = data["cloud_wire_points"], data["work_crs"]
        x, y, z = (points[c].to_numpy(dtype=float) for c in ("x", "y", "z"))
        fit_settings = FitSettings(attachments=settings.fit_attachments)
        wire_spans = data["wire_spans"]
        search = search_distances(wire_spans, data["attachments"], settings.wire_search_m)
        sections = data["sections"].set_index("section_id", drop=False)
        fits, states, point_rows, ordered = [], [], [], []
        check_span_temperatures(settings, wire_spans)
        for section_id, rows in wire_spans.groupby("section_id", sort=False):
            line_wires = {w.name: w for w in project.line_wires(rows["line_id"].iloc[0])}
            weights = {name: float(bare_weight_n_m(w.conductor.mass_kg_m)) for name, w in line_wires.items()}
            rows = with_prior(project, sections.loc[section_id], rows.reset_index(drop=True))
            ordered.append(rows)
            row_search = search[section_id]
            near = near_rows(rows, x, y, float(np.max(row_search)))  # one pass over the line's points
            frame, curves, _ = fit_section(rows, x[near], y[near], z[near], weights, row_search,
                                           settings.structure_gap_m, fit_settings)
            frame["survey_temperature_c"] = [settings.temperature_of(w, line_wires[w].conductor, span_id)
                                             for w, span_id in zip(frame["wire"], frame["span_id"])]
            frame["geometry"] = [fitted_line(row, curve) for (_, row), curve in zip(rows.iterrows(), curves)]
            fits.append(frame)
            found = section_estimates(frame, curves, weights)
            states.append(found.assign(survey_temperature_c=section_temperatures(frame, rows, found)))
            if settings.write_points:
                point_rows.append(assigned_points(rows, curves, x[near], y[near], z[near], row_search,
                                                  settings.structure_gap_m))
        ordered = pd.concat(ordered, ignore_index=True)
        fits_frame = pd.concat(fits, ignore_index=True)
        record_fit_notes(ctx, fits_frame, ordered, x, y, z, search, settings.structure_gap_m)
        record_temperature_notes(ctx, settings, pd.concat(states, ignore_index=True))
        layer = gpd.GeoDataFrame(fits_frame.drop(columns="geometry"), geometry=list(fits_frame["geometry"]),
                                 crs=crs)
        wire_points = None
        if settings.write_points:
            frame = pd.concat(point_rows, ignore_index=True) if point_rows else pd.DataFrame()
            wire_points = gpd.GeoDataFrame(frame.drop(columns=["x", "y", "z"]),
                                           geometry=shapely.points(frame["x"], frame["y"], frame["z"]), crs=crs)
        return {"wire_fits": layer, "as_found_states": pd.concat(states, ignore_index=True),
                "wire_points": wire_points}


def empty_states() -> pd.DataFrame:
    return pd.DataFrame({"section_id": pd.Series(dtype=str), "wire": pd.Series(dtype=str),
                         "as_found_tension_n": pd.Series(dtype=float),
                         "as_found_spread_percent": pd.Series(dtype=float),
                         "n_good_fits": pd.Series(dtype="int64"), "survey_temperature_c": pd.Series(dtype=float)})


def with_prior(project, section, rows) -> pd.DataFrame:
    """The section's rows with ``prior_catenary_m``: each wire's design stringing carried to the survey
    temperature (or left at its own where none is given), bare and initial; it tells stacked wires apart."""
    priors = {}
    for wire in project.line_wires(section["line_id"]):
        temperature_c = project.point_cloud.temperature_of(wire.name, wire.conductor)
        temperature_c = wire.stringing.temperature_c if temperature_c is None else temperature_c
        priors[wire.name] = bare_state(project, section, wire, rows[rows["wire"] == wire.name],
                                       temperature_c)["catenary_m"]
    return rows.assign(prior_catenary_m=rows["wire"].map(priors))


def check_span_temperatures(settings, wire_spans) -> None:
    """Every span id of [survey.span_temperature_c] must name a span of the line."""
    unknown = sorted(set(settings.span_temperature_c) - set(wire_spans["span_id"].astype(str)))
    if unknown:
        raise ProjectError(f"[survey.span_temperature_c]: span id(s) {', '.join(map(repr, unknown))} are not "
                           f"in the spans layer")


def section_temperatures(fits, rows, found) -> list[float]:
    """Survey temperature of each section state (wire) [degC]: its spans' temperatures weighted by span length
    over the good fits (all spans without one), as a ruling span weighs them; one value unless a span has its
    own in [survey.span_temperature_c]."""
    values = []
    for wire in found["wire"]:
        mine = (fits["wire"] == wire).to_numpy()
        good = mine & (fits["quality"] == "good").to_numpy()
        use = good if good.any() else mine
        temperatures = fits["survey_temperature_c"].to_numpy(dtype=float)[use]
        lengths = rows["span_m"].to_numpy(dtype=float)[use]
        values.append(float(np.average(temperatures, weights=lengths)) if temperatures.size else math.nan)
    return values


def record_temperature_notes(ctx, settings, states) -> None:
    """run_info: where the survey temperature came from and the value each section state used."""
    origin = ("[survey] current_a by the IEEE Std 738 heat balance" if settings.survey_current is not None
              else "[survey] conductor_temperature_c / wire_temperature_c")
    ctx.notes["survey_temperature_source"] = origin + (" with [survey.span_temperature_c] per span"
                                                       if settings.span_temperature_c else "")
    ctx.notes["survey_temperature_c"] = {f"{r.section_id}/{r.wire}": (None if not np.isfinite(r.survey_temperature_c)
                                                                       else round(float(r.survey_temperature_c), 3))
                                         for r in states.itertuples()}


def near_rows(rows, x, y, reach_m) -> np.ndarray:
    """Points inside the plan bounding box of the rows' chords grown by ``reach_m``: the only ones that can
    match them, so each section's assignment looks at its own points only."""
    xs, ys = np.r_[rows["x0"], rows["x1"]], np.r_[rows["y0"], rows["y1"]]
    return ((x >= xs.min() - reach_m) & (x <= xs.max() + reach_m)
            & (y >= ys.min() - reach_m) & (y <= ys.max() + reach_m))


def search_distances(wire_spans, attachments, wire_search_m) -> dict:
    """Plan search distance of every (span, wire) row by section [m]: ``wire_search_m`` plus the longer
    suspension string at its ends (a string swings sideways at an angle structure even without wind)."""
    strings = attachments.set_index(["line_id", "structure_id", "wire"])["insulator_m"]
    out = {}
    for section_id, rows in wire_spans.groupby("section_id", sort=False):
        ends = [strings.reindex(pd.MultiIndex.from_arrays([rows["line_id"], rows[c], rows["wire"]])).fillna(0.0)
                .to_numpy() for c in ("from_id", "to_id")]
        out[section_id] = wire_search_m + np.maximum(*ends)
    return out


def fitted_line(row, curve):
    """LineString Z of a fitted curve along its span's chord; None for a failed fit."""
    if curve.quality == "failed":
        return None
    along = np.linspace(0.0, curve.span_m, max(int(math.ceil(curve.span_m / FIT_VERTEX_M)), 1) + 1)
    t = along / curve.span_m
    x = row["x0"] + t * (row["x1"] - row["x0"])
    y = row["y0"] + t * (row["y1"] - row["y0"])
    return shapely.linestrings(np.column_stack([x, y, curve.z(along)]))


def assigned_points(rows, curves, x, y, z, search, gap_m) -> pd.DataFrame:
    """The section's assigned wire points with span, wire, residual to the fitted curve and outlier flag."""
    chord, along = assign_section(rows, x, y, search, gap_m, z)
    frames = []
    for i, curve in enumerate(curves):
        mine = np.flatnonzero(chord == i)
        frames.append(pd.DataFrame({
            "span_id": rows.at[i, "span_id"], "section_id": rows.at[i, "section_id"], "wire": rows.at[i, "wire"],
            "along_m": along[mine], "residual_m": curve.residual_m, "outlier": ~curve.used,
            "x": x[mine], "y": y[mine], "z": z[mine]}))
    return pd.concat(frames, ignore_index=True)


def record_fit_notes(ctx, fits, ordered, x, y, z, search, gap_m) -> None:
    """Fit counts by quality, and the wire points that match no wire anywhere on the line (a point unmatched
    in one section may belong to the next), for run_info; one warning for the fits that are not good."""
    all_search = np.concatenate([search[s] for s in ordered["section_id"].unique()])
    chord, _ = assign_section(ordered, x, y, all_search, gap_m, z)
    ctx.notes["wire_fits_by_quality"] = {q: int(n) for q, n in fits["quality"].value_counts().items()}
    ctx.notes["wire_points_unmatched"] = int((chord == -1).sum())
    ctx.notes["wire_points_ambiguous"] = int((chord == -2).sum())
    ctx.notes["wire_points_total"] = int(x.size)
    poor = fits[fits["quality"] != "good"]
    if len(poor) and x.size:  # a cloud without wire points is for vegetation only: nothing to warn of
        listed = "; ".join(f"{r.span_id} {r.wire}: {r.quality} ({r.reason})" for r in poor.head(5).itertuples())
        more = f"; and {len(poor) - 5} more (wire_fits layer)" if len(poor) > 5 else ""
        ctx.warn(f"{len(poor)} of {len(fits)} wire fits are not good and do not count for the as-found "
                 f"tension: {listed}{more}")
