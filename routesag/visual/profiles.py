"""Span profile drawings: terrain, surface objects, each load case's wire and the required line."""
from __future__ import annotations

import json

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from routesag.visual import palette  # noqa: E402
from routesag.visual.results import (Results, sample_raster, span_violations, stations_along,  # noqa: E402
                                     wire_coords)

FIGSIZE_IN = (11.0, 5.0)


def profile_wire(results: Results, span_id: str) -> str:
    """The wire drawn for a span: the one with the worst violation, else the first."""
    found = span_violations(results, span_id)
    if len(found) and "wire" in found:
        return str(found.sort_values("deficit_m", ascending=False)["wire"].iloc[0])
    conductors = results["conductors"]
    return str(conductors[conductors["span_id"].astype(str) == span_id]["wire"].iloc[0])


def draw_profile(results: Results, span_id: str):
    """The profile figure of one span (matplotlib Figure); the caller saves and closes it."""
    span = results["spans"][results["spans"]["span_id"].astype(str) == span_id].iloc[0]
    wire = profile_wire(results, span_id)
    conductors = results["conductors"]
    rows = conductors[(conductors["span_id"].astype(str) == span_id) & (conductors["wire"].astype(str) == wire)]
    fig, ax = plt.subplots(figsize=FIGSIZE_IN, layout="constrained")
    ground = _draw_ground(ax, results, span, rows)
    cases = results.case_order()
    for _, row in rows.iterrows():
        xyz = wire_coords(row.geometry)
        i = cases.index(str(row["load_case"]))
        ax.plot(stations_along(span, xyz), xyz[:, 2], color=palette.case_colour(i), linestyle=palette.case_dash(i),
                linewidth=1.8, label=f"wire {wire}, {row['load_case']}", gid=f"wire:{row['load_case']}")
    if ground is not None:
        _draw_required(ax, results, span_id, wire, *ground)
    _draw_unknown(ax, results, span_id, wire)
    _draw_violations(ax, results, span_id, wire)
    _draw_cloud_objects(ax, results, span, wire)
    _draw_hotspots(ax, results, span_id, wire)
    _draw_structures(ax, results, span)
    _finish_axes(ax, span, wire)
    return fig


def _draw_ground(ax, results, span, rows):
    """Terrain (and surface objects) under the wire's first load case, from the rasters if still present."""
    xyz = wire_coords(rows.iloc[0].geometry)
    notes = [n for n in (results.raster_note("terrain"), results.raster_note("surface")) if n]
    if notes:
        ax.text(0.01, 0.02, "\n".join(notes), transform=ax.transAxes, fontsize=9, color=palette.VIOLATION,
                gid="raster_note")
    terrain = sample_raster(results, "terrain", xyz[:, :2])
    if terrain is None:
        return None
    station = stations_along(span, xyz)
    surface = sample_raster(results, "surface", xyz[:, :2])
    if surface is not None:
        top = terrain + surface if results.input_settings().get("surface_values") == "height" else surface
        # The run's own threshold for what counts as an object above the terrain.
        min_height_m = json.loads(results.run_info.get("param.clearance", "{}")).get("surface_min_height_m", 0.5)
        raised = np.where(top > terrain + min_height_m, top, np.nan)
        if np.isfinite(raised).any():
            ax.fill_between(station, terrain, raised, where=np.isfinite(raised), color=palette.SURFACE,
                            alpha=0.8, label="surface objects", gid="surface")
    base = np.nanmin(terrain) - 5.0 if np.isfinite(terrain).any() else 0.0
    ax.fill_between(station, base, terrain, color=palette.TERRAIN, alpha=0.35, linewidth=0)
    ax.plot(station, terrain, color=palette.TERRAIN, linewidth=1.2, label="terrain", gid="terrain")
    return station, terrain, xyz[:, :2]


def _required_by_station(results, span_id, wire, station, xy):
    """Required clearance [m] per station and whether it is known by category all along the span.

    With the run's crossing areas (unchanged inputs) every station gets its category's value, as the run
    classified it; without them, the ground rule, and each violation's own category inside that violation.
    """
    from routesag.stages.crossings import classify_points

    # run_info records the required values after the voltage adder: add nothing here.
    rules = json.loads(results.run_info.get("note.clearance_required_m", "{}"))
    ground_m = rules.get("ground", np.nan)
    areas = results.crossing_areas
    if areas is not None and not isinstance(areas, str):
        return classify_points(xy, areas, ground_m)[0], True
    required = np.full(len(station), ground_m)
    if isinstance(areas, str):  # the run had no crossings: the ground rule holds everywhere
        return required, True
    found = span_violations(results, span_id)
    for _, v in found[(found["wire"].astype(str) == wire) & (found["category"] != "surface")].iterrows():
        inside = (station >= v["start_m"]) & (station <= v["end_m"])
        required[inside] = v["required_m"]
    return required, False


def _draw_required(ax, results, span_id, wire, station, terrain, xy):
    required, complete = _required_by_station(results, span_id, wire, station, xy)
    label = "terrain + required clearance" if complete else \
        "terrain + required clearance\n(crossings file changed or gone: categories only where violated)"
    ax.plot(station, terrain + required, color=palette.REQUIRED, linestyle=(0, (6, 3)), linewidth=1.2,
            label=label, gid="required")


def _draw_unknown(ax, results, span_id, wire):
    stretches = results["unknown_stretches"]
    mine = stretches[(stretches["span_id"].astype(str) == span_id) & (stretches["wire"].astype(str) == wire)]
    for k, (_, s) in enumerate(mine.drop_duplicates(["start_m", "end_m"]).iterrows()):
        ax.axvspan(s["start_m"], s["end_m"], color=palette.UNKNOWN, alpha=0.45, hatch="//", linewidth=0,
                   label="clearance unknown (no data)" if k == 0 else None, gid="unknown")


def _draw_violations(ax, results, span_id, wire):
    found = span_violations(results, span_id)
    found = found[found["wire"].astype(str) == wire]
    for k, (_, v) in enumerate(found.iterrows()):
        ax.axvspan(v["start_m"], v["end_m"], color=palette.VIOLATION, alpha=0.15, linewidth=0)
        ax.plot([v["station_m"]], [v["conductor_z_m"]], marker="v", markersize=9, linestyle="none",
                color=palette.VIOLATION, markeredgecolor="black",
                label="violation, worst point" if k == 0 else None, gid="violation")
    if len(found):
        worst = found.sort_values("deficit_m", ascending=False).iloc[0]
        ax.annotate(f"{worst['load_case']}: {worst['clearance_m']:.2f} m < {worst['required_m']:.2f} m "
                    f"({worst['category']})\ndeficit {worst['deficit_m']:.2f} m",
                    (worst["station_m"], worst["conductor_z_m"]), xytext=(12, 24), textcoords="offset points",
                    fontsize=9, color="black", arrowprops={"arrowstyle": "-", "color": "black"},
                    bbox={"boxstyle": "round", "fc": "white", "ec": palette.VIOLATION})


#: Point-cloud categories whose violations carry the offending point, and the marker of each.
CLOUD_MARKERS = {"vegetation": "o", "building": "s"}


def _draw_cloud_objects(ax, results, span, wire):
    """Each point-cloud violation's offending point, and a dashed link from the wire point it was measured from.

    The check is a 3D distance, so the point may lie off the chord: it is drawn at its projection onto the chord.
    """
    found = span_violations(results, span["span_id"])
    if "surface_x" not in found:
        return
    found = found[(found["wire"].astype(str) == wire) & found["category"].isin(list(CLOUD_MARKERS))
                  & found["surface_x"].notna()]
    if not len(found):
        return
    station = stations_along(span, found[["surface_x", "surface_y"]].to_numpy(dtype=float))
    labelled = set()
    for at, (_, v) in zip(station, found.iterrows(), strict=True):
        ax.plot([v["station_m"], at], [v["conductor_z_m"], v["surface_z"]], color=palette.CLOUD_OBJECT,
                linestyle=(0, (3, 2)), linewidth=1.0, gid="cloud_link",
                label=None if "link" in labelled else "wire point to point-cloud object (3D distance)")
        labelled.add("link")
        ax.plot([at], [v["surface_z"]], marker=CLOUD_MARKERS[v["category"]], markersize=7, linestyle="none",
                color=palette.CLOUD_OBJECT, markeredgecolor="black", gid="cloud_object",
                label=None if v["category"] in labelled else f"point-cloud {v['category']}")
        labelled.add(v["category"])


def _draw_hotspots(ax, results, span_id, wire):
    """The rank of each hotspot governed on this wire, as on the plan overview and in the report's table."""
    hotspots = results["hotspots"]
    mine = hotspots[hotspots["span_id"].astype(str) == span_id]
    if "wire" in mine:
        mine = mine[mine["wire"].astype(str) == wire]
    for _, h in mine.iterrows():
        ax.annotate(f"hotspot #{int(h['rank'])}", (h["station_m"], h.geometry.z), xytext=(0, -28),
                    textcoords="offset points", ha="center", fontsize=9, fontweight="bold", color="black",
                    bbox={"boxstyle": "round", "fc": "white", "ec": palette.deficit_colour(h["deficit_m"]), "lw": 2},
                    gid=f"hotspot:{int(h['rank'])}")


def _draw_structures(ax, results, span):
    structures = results["structures"]
    line = structures[structures["line_id"].astype(str) == str(span["line_id"])]
    for end, sid in ((0.0, span["from_id"]), (float(span["span_m"]), span["to_id"])):
        s = line[line["structure_id"].astype(str) == str(sid)].iloc[0]
        ax.plot([end, end], [s["ground_z_m"], s["attach_z_m"]], color=palette.STRUCTURE, linewidth=3,
                solid_capstyle="butt", gid=f"structure:{sid}")
        ax.annotate(f"{sid}\n{s['attach_height_m']:.1f} m", (end, s["attach_z_m"]), xytext=(0, 6),
                    textcoords="offset points", ha="center", va="bottom", fontsize=9)


def _finish_axes(ax, span, wire):
    ax.set_xlabel("distance along span from the first structure [m]")
    ax.set_ylabel("elevation [m]")
    ax.margins(x=0.03, y=0.2)  # room above the structures for their labels
    ax.grid(True, color="#dddddd", linewidth=0.6)
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.14), ncol=4, fontsize=9, frameon=False)
    ax.figure.canvas.draw()
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    box = ax.get_window_extent()
    exaggeration = ((box.height / (y1 - y0)) / (box.width / (x1 - x0)))
    ax.set_title(f"span {span['span_id']} ({span['from_id']} to {span['to_id']}, {span['span_m']:.0f} m), "
                 f"wire {wire}; vertical exaggeration {exaggeration:.1f}x", fontsize=11)


def write_profiles(results: Results, span_ids, folder) -> dict:
    """Draw and save one PNG and one SVG per span; returns {span_id: png file name}."""
    written = {}
    for span_id in span_ids:
        fig = draw_profile(results, span_id)
        stem = f"profile_{_safe(span_id)}"
        fig.savefig(folder / f"{stem}.png", dpi=100)
        fig.savefig(folder / f"{stem}.svg")
        plt.close(fig)
        written[span_id] = f"{stem}.png"
    return written


def _safe(text) -> str:
    return "".join(c if c.isalnum() or c in "-_" else "_" for c in str(text))
