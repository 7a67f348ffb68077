"""Stage: exact 3D catenary of every span, wire and load case."""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from routesag.errors import DataError
from routesag.physics.bilinear import exact_minimum_stations, exact_minimum_stations_many
from routesag.physics.conductor3d import conductor_points, conductor_stations, span_geometry
from routesag.pipeline import Stage
from routesag.profiles import ConductorProfile, Profiles

#: Metres per degree of latitude (mean), to size a lat/lon raster's cells.
METRES_PER_DEGREE = 111_320.0


class BuildConductors(Stage):
    name = "build_conductors"
    requires = ("project", "wire_spans", "tensions", "structure_loads", "terrain", "work_crs")
    provides = ("conductors",)
    per_section = True
    description = ("exact inclined catenary per span, wire and load case between the (swung) clamps, "
                   "swung by the blowout angle, as 3D stations")

    def run(self, data, ctx):
        station_m, note = effective_station_m(data["project"].station_m, data["terrain"])
        if note:
            ctx.warn(note)
        ctx.notes["station_m"] = station_m
        rows = span_cases(data["wire_spans"], data["tensions"], data["structure_loads"])
        terrain = TerrainView(data["terrain"], data["work_crs"])
        return {"conductors": Profiles(span_profiles(rows.to_dict("records"), station_m, terrain))}


@dataclass(frozen=True)
class TerrainView:
    """The terrain seen from the working CRS: what :func:`span_profile` needs to place exact-minimum stations."""

    sampler: object
    crs: object

    def exact_stations(self, stations_m, wire_at):
        """Stations plus the grid-line crossings and quadratic vertices of :mod:`routesag.physics.bilinear`.

        ``wire_at(stations) -> (n, 3)`` gives the wire's points in the working CRS.
        """
        def grid_uv(s):
            xyz = wire_at(s)
            return self.sampler.grid_coords(xyz[:, 0], xyz[:, 1], crs=self.crs)

        def clearance(s):
            xyz = wire_at(s)
            return xyz[:, 2] - self.sampler.sample(xyz[:, 0], xyz[:, 1], crs=self.crs)

        return exact_minimum_stations(stations_m, grid_uv, clearance)

    def exact_stations_many(self, stations_m, wires_at):
        """:meth:`exact_stations` for several wires (a span's wires and load cases): one terrain query per step.

        ``stations_m`` and ``wires_at`` are lists, one entry per wire; the samples are those of
        :meth:`exact_stations` (bilinear interpolation is per point, whatever the batch).
        """
        def stacked(many):
            parts = [wire_at(s) for wire_at, s in zip(wires_at, many, strict=True)]
            return np.concatenate(parts), np.cumsum([len(p) for p in parts])[:-1]

        def grid_uv(many):
            xyz, cuts = stacked(many)
            u, v = self.sampler.grid_coords(xyz[:, 0], xyz[:, 1], crs=self.crs)
            return list(zip(np.split(u, cuts), np.split(v, cuts)))

        def clearance(many):
            xyz, cuts = stacked(many)
            return np.split(xyz[:, 2] - self.sampler.sample(xyz[:, 0], xyz[:, 1], crs=self.crs), cuts)

        return exact_minimum_stations_many(stations_m, grid_uv, clearance)


def effective_station_m(station_m: float, terrain) -> tuple[float, str | None]:
    """Station interval actually used [m]: ``station_m``, but never coarser than a terrain cell.

    Clearance is only known at stations; stations further apart than a cell
    would skip terrain cells, so a bump or a nodata hole between two
    stations could pass as clear. Returns the interval and, when it was
    reduced, a note saying so.
    """
    cell_m = terrain_cell_m(terrain)
    if station_m <= cell_m:
        return station_m, None
    return cell_m, (f"[clearance] station_m = {station_m:g} m is coarser than the terrain cells ({cell_m:.3g} m): "
                    f"stations are placed every {cell_m:.3g} m so no terrain cell under the wire is skipped")


def terrain_cell_m(terrain) -> float:
    """Smaller side of a terrain cell [m]; on a lat/lon raster, converted at the raster's mid latitude."""
    try:
        return float(min(terrain.cell_size_m))
    except DataError:  # geographic raster: degrees
        (res_x, res_y), bounds = terrain.res, terrain.bounds
        mid_lat = math.radians((bounds[1] + bounds[3]) / 2.0)
        return float(min(res_x * math.cos(mid_lat), res_y) * METRES_PER_DEGREE)


def span_cases(wire_spans, tensions, structure_loads) -> pd.DataFrame:
    """One row per span, wire and load case: the solved tension and both clamps in that case.

    Clamps (start x0, y0, z0; end x1, y1, z1) come from ``structure_loads``,
    where a suspension string has swung them out under the load case.
    """
    clamps = structure_loads[["line_id", "structure_id", "wire", "load_case", "x", "y", "z"]]
    rows = wire_spans.drop(columns=["x0", "y0", "z0", "x1", "y1", "z1"]).merge(
        tensions, on=["section_id", "wire"], sort=False)
    for end, structure in (("0", "from_id"), ("1", "to_id")):
        rows = rows.merge(clamps.rename(columns={"structure_id": structure, "x": f"x{end}", "y": f"y{end}",
                                                 "z": f"z{end}"}),
                          on=["line_id", structure, "wire", "load_case"], how="left", sort=False)
    return rows


def span_profile(row, station_m: float, terrain: TerrainView | None = None) -> ConductorProfile:
    """Build the :class:`ConductorProfile` of one span, wire and solved load case.

    ``row`` holds the clamps x0, y0, z0, x1, y1, z1 [m], horizontal_tension_n,
    resultant_n_m, blowout_rad, blowout_deg, side, span_id, section_id,
    load_case and (optionally) wire. With ``terrain``, the stations also hold every point where
    the minimum clearance to the bilinear terrain can lie (grid-line crossings, quadratic vertices).
    """
    wire = HangingWire(row, station_m)
    stations = wire.stations
    if terrain is not None:
        stations = terrain.exact_stations(stations, wire.at)
    return wire.profile(stations)


def span_profiles(rows, station_m: float, terrain: TerrainView | None = None) -> list[ConductorProfile]:
    """:func:`span_profile` of every row, in order; the rows of one span (its wires and load cases) ask the
    terrain together, so each step of the exact-minimum search is one terrain query per span."""
    wires = [HangingWire(row, station_m) for row in rows]
    if terrain is None:
        return [w.profile(w.stations) for w in wires]
    profiles = []
    for group in _consecutive_spans(wires):
        stations = terrain.exact_stations_many([w.stations for w in group], [w.at for w in group])
        profiles.extend(w.profile(s) for w, s in zip(group, stations, strict=True))
    return profiles


def _consecutive_spans(wires):
    group = []
    for wire in wires:
        if group and wire.row["span_id"] != group[0].row["span_id"]:
            yield group
            group = []
        group.append(wire)
    if group:
        yield group


class HangingWire:
    """One span, wire and load case between its clamps: the exact catenary, its regular stations and its points."""

    def __init__(self, row, station_m: float):
        self.row = row
        self.start = np.array([row["x0"], row["y0"], row["z0"]], dtype=float)
        self.end = np.array([row["x1"], row["y1"], row["z1"]], dtype=float)
        s, dz = float(np.hypot(*(self.end - self.start)[:2])), float(self.end[2] - self.start[2])
        self.span_m = s
        self.h = float(row["horizontal_tension_n"])
        self.w, self.phi = float(row["resultant_n_m"]), float(row["blowout_rad"])
        self.side = float(row["side"])
        self.geometry = span_geometry(s, dz, self.h, self.w, self.phi)
        self.low_m = float(self.geometry.low_point_m)  # the wire's lowest point, also under wind on an inclined span
        self.stations = conductor_stations(s, station_m, self.low_m)

    def at(self, stations_m):
        return conductor_points(self.start, self.end, self.h, self.w, self.phi, stations_m, side=self.side)

    def profile(self, stations) -> ConductorProfile:
        row, start, end, geometry = self.row, self.start, self.end, self.geometry
        xyz = self.at(stations)
        across = np.array([end[1] - start[1], start[0] - end[0]]) / self.span_m  # horizontal unit normal of the chord
        return ConductorProfile(
            span_id=row["span_id"], section_id=row["section_id"], load_case=row["load_case"],
            stations_m=stations, xyz=xyz, horizontal_tension_n=self.h,
            max_tension_n=float(geometry.max_tension_n), sag_m=float(geometry.sag_m),
            low_point_m=self.low_m, catenary_m=float(geometry.catenary_m), blowout_deg=float(row["blowout_deg"]),
            wire=str(row.get("wire", "")), swung_sag_m=float(geometry.swung_sag_m),
            blowout_m=_blowout_m(xyz, start, across, self.phi))


def _blowout_m(xyz, start, across, blowout_rad) -> float:
    """Largest horizontal distance of the wire from its clamps' vertical plane [m]; exactly 0 without blowout."""
    if blowout_rad == 0.0:
        return 0.0  # the wire hangs in that plane: the sum would leave rounding (1e-10 m)
    return float(np.max(np.abs((xyz[:, :2] - start[:2]) @ across)))
