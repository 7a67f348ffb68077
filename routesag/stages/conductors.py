"""Stage: exact 3D catenary of every span, wire and load case."""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from routesag.errors import DataError
from routesag.physics.bilinear import exact_minimum_stations_stacked
from routesag.physics.conductor3d import conductor_points, conductor_stations_stacked, span_geometry
from routesag.physics.stacked import StackedStations
from routesag.pipeline import Stage
from routesag.profiles import ConductorProfile, Profiles
from routesag.stages.terrain import hand_over_ground

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
        cases = span_cases(data["wire_spans"], data["tensions"], data["structure_loads"])
        terrain = TerrainView(data["terrain"], data["work_crs"])
        built, ground = profiles_and_ground(cases, station_m, terrain)
        profiles = Profiles(built)
        hand_over_ground(profiles, ground, terrain.sampler, terrain.crs)
        return {"conductors": profiles}


@dataclass(frozen=True)
class TerrainView:
    """The terrain seen from the working CRS: what :func:`span_profiles` needs to place exact-minimum stations."""

    sampler: object
    crs: object

    def exact_stations(self, stations: StackedStations, wires: "HangingWires"):
        """Stations plus the grid-line crossings and quadratic vertices of :mod:`routesag.physics.bilinear`,
        the wires' points there (working CRS) and the terrain under them [m] (NaN over nodata).

        The wires of one span (its wires and load cases, consecutive) are sampled together, from one window.
        """
        asked = {}

        def grid_uv(s, wire):
            xy = wires.at(s, wire, plan_only=True)
            return self.sampler.grid_coords(xy[:, 0], xy[:, 1], crs=self.crs)

        def clearance(s, wire):
            asked["xyz"] = xyz = wires.at(s, wire)
            asked["ground"] = ground = self.sample_in_groups(xyz, wires.span_group[wire])
            return xyz[:, 2] - ground

        found, source = exact_minimum_stations_stacked(stations, grid_uv, clearance, with_source=True)
        xyz = np.empty((len(found.values), 3))
        known, vertex = np.maximum(source, 0), np.flatnonzero(source < 0)
        for axis in range(3):
            xyz[:, axis] = asked["xyz"][:, axis][known]
        xyz[vertex] = wires.at(found.values[vertex], found.wire[vertex])
        # the terrain is a pointwise function of plan position: the ends' values stand, vertices are new points
        ground = asked["ground"][known]
        ground[vertex] = self.sample_in_groups(xyz[vertex], wires.span_group[found.wire[vertex]])
        return found, xyz, ground

    def sample_in_groups(self, xyz, group):
        """Terrain under points [m], one sampler call per run of equal ``group`` (its window is read once)."""
        ground = np.empty(len(group))
        if not len(group):
            return ground
        cuts = np.concatenate([[0], np.flatnonzero(group[1:] != group[:-1]) + 1, [len(group)]])
        for a, b in zip(cuts[:-1], cuts[1:]):
            ground[a:b] = self.sampler.sample(xyz[a:b, 0], xyz[a:b, 1], crs=self.crs)
        return ground


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


def span_cases(wire_spans, tensions, structure_loads) -> dict[str, np.ndarray]:
    """One entry per span, wire and load case: the solved tension and both clamps in that case, as columns.

    The entries follow ``wire_spans``, and for each wire span its section's and wire's ``tensions`` rows in
    their order. Clamps (start x0, y0, z0; end x1, y1, z1) come from ``structure_loads``, where a suspension
    string has swung them out under the load case; a clamp missing there is NaN.
    """
    def keys(frame, *names):  # plain Python values: zipping Series is several times slower
        return list(zip(*(frame[name].to_numpy().tolist() for name in names)))

    cases_of = {}
    for j, key in enumerate(keys(tensions, "section_id", "wire")):
        cases_of.setdefault(key, []).append(j)
    pairs = [(i, j) for i, key in enumerate(keys(wire_spans, "section_id", "wire")) for j in cases_of.get(key, ())]
    span_rows, case_rows = (np.array(rows, dtype=np.int64) for rows in zip(*pairs)) if pairs else ([], [])
    columns = {name: wire_spans[name].to_numpy()[span_rows]
               for name in ("span_id", "section_id", "wire", "line_id", "from_id", "to_id")}
    columns.update({name: tensions[name].to_numpy()[case_rows] for name in
                    ("load_case", "horizontal_tension_n", "resultant_n_m", "blowout_rad", "blowout_deg", "side")})
    clamp_keys = keys(structure_loads, "line_id", "structure_id", "wire", "load_case")
    clamp_row = {key: k for k, key in enumerate(clamp_keys)}
    if len(clamp_row) != len(clamp_keys):
        raise ValueError("structure_loads holds two rows for one structure, wire and load case")
    clamps = np.column_stack([structure_loads[name].to_numpy(dtype=float) for name in ("x", "y", "z")])
    clamps = np.vstack([clamps, np.full((1, 3), np.nan)])   # the last row: a clamp missing
    for end, structure in (("0", "from_id"), ("1", "to_id")):
        rows = [clamp_row.get(key, -1) for key in zip(*(columns[name].tolist() for name in
                                                         ("line_id", structure, "wire", "load_case")))]
        xyz = clamps[np.array(rows, dtype=np.int64)]
        columns.update({f"x{end}": xyz[:, 0], f"y{end}": xyz[:, 1], f"z{end}": xyz[:, 2]})
    return columns


def span_profile(row, station_m: float, terrain: TerrainView | None = None) -> ConductorProfile:
    """Build the :class:`ConductorProfile` of one span, wire and solved load case.

    ``row`` holds the clamps x0, y0, z0, x1, y1, z1 [m], horizontal_tension_n,
    resultant_n_m, blowout_rad, blowout_deg, side, span_id, section_id,
    load_case and (optionally) wire. With ``terrain``, the stations also hold every point where
    the minimum clearance to the bilinear terrain can lie (grid-line crossings, quadratic vertices).
    """
    return span_profiles({name: [value] for name, value in row.items()}, station_m, terrain)[0]


def span_profiles(cases, station_m: float, terrain: TerrainView | None = None) -> list[ConductorProfile]:
    """:func:`span_profile` of every entry of ``cases`` (columns, as :func:`span_cases` gives them), in order.

    All entries are computed at once on stacked stations; the entries of one span (its wires and load cases,
    consecutive) read the terrain together, so each span costs one window read.
    """
    return profiles_and_ground(cases, station_m, terrain)[0]


def profiles_and_ground(cases, station_m: float, terrain: TerrainView | None = None):
    """:func:`span_profiles`, and with ``terrain`` the terrain under all their stations, stacked in profile
    order (what the exact-minimum search sampled) [m]; None without ``terrain``."""
    wires = HangingWires(cases, station_m)
    if terrain is None:
        stations = wires.stations
        return wires.profiles(stations, wires.at(stations.values, stations.wire)), None
    found, xyz, ground = terrain.exact_stations(wires.stations, wires)
    return wires.profiles(found, xyz), ground


class HangingWires:
    """Spans, wires and load cases between their clamps: the exact catenaries, their regular stations, points."""

    def __init__(self, cases, station_m: float):
        self.cases = cases
        column = {name: np.asarray(cases[name], dtype=float) for name in
                  ("x0", "y0", "z0", "x1", "y1", "z1", "horizontal_tension_n", "resultant_n_m", "blowout_rad",
                   "side")}
        self.start = np.column_stack([column["x0"], column["y0"], column["z0"]])
        self.end = np.column_stack([column["x1"], column["y1"], column["z1"]])
        chord = self.end - self.start
        self.span_m = np.hypot(chord[:, 0], chord[:, 1])
        self.h, self.w = column["horizontal_tension_n"], column["resultant_n_m"]
        self.phi, self.side = column["blowout_rad"], column["side"]
        self.geometry = span_geometry(self.span_m, chord[:, 2], self.h, self.w, self.phi)
        # the wire's lowest point, also under wind on an inclined span
        self.low_m = np.asarray(self.geometry.low_point_m, dtype=float)
        self.stations = conductor_stations_stacked(self.span_m, station_m, self.low_m)
        span_id = list(cases["span_id"])
        self.span_group = np.cumsum([k > 0 and span_id[k] != span_id[k - 1] for k in range(len(span_id))])

    def at(self, stations_m, wire, plan_only=False):
        return conductor_points(self.start, self.end, self.h, self.w, self.phi, stations_m, side=self.side,
                                wire=wire, plan_only=plan_only)

    def profiles(self, stations: StackedStations, xyz) -> list[ConductorProfile]:
        """One profile per entry, with the wires' points ``xyz`` at ``stations``; its arrays are slices of these."""
        blowout = self.blowout_m(xyz, stations)
        cases, geometry = self.cases, self.geometry
        wires = cases["wire"] if "wire" in cases else [""] * len(self.span_m)
        numbers = zip(self.h.tolist(), *(np.asarray(a, dtype=float).tolist() for a in (
            geometry.max_tension_n, geometry.sag_m, self.low_m, geometry.catenary_m, cases["blowout_deg"],
            geometry.swung_sag_m, blowout)))
        bounds = stations.bounds.tolist()
        return [ConductorProfile(
            span_id=span_id, section_id=section_id, load_case=load_case,
            stations_m=stations.values[a:b], xyz=xyz[a:b], horizontal_tension_n=h, max_tension_n=max_tension,
            sag_m=sag, low_point_m=low, catenary_m=catenary, blowout_deg=blowout_deg, wire=str(wire),
            swung_sag_m=swung_sag, blowout_m=reach)
            for span_id, section_id, load_case, wire, a, b, (h, max_tension, sag, low, catenary, blowout_deg,
                                                             swung_sag, reach)
            in zip(cases["span_id"], cases["section_id"], cases["load_case"], wires, bounds[:-1], bounds[1:],
                   numbers, strict=True)]

    def blowout_m(self, xyz, stations: StackedStations) -> np.ndarray:
        """Largest horizontal distance of each wire from its clamps' vertical plane [m]; exactly 0 without blowout.

        Without blowout the wire hangs in that plane, and the sum would leave rounding (1e-10 m).
        """
        def per_station(values):
            return np.repeat(values, stations.counts)

        across = np.column_stack([self.end[:, 1] - self.start[:, 1], self.start[:, 0] - self.end[:, 0]])
        across /= self.span_m[:, None]                 # horizontal unit normal of the chord
        offset = np.abs((xyz[:, 0] - per_station(self.start[:, 0])) * per_station(across[:, 0])
                        + (xyz[:, 1] - per_station(self.start[:, 1])) * per_station(across[:, 1]))
        reach = np.maximum.reduceat(offset, stations.bounds[:-1]) if len(offset) else np.zeros(0)
        return np.where(self.phi == 0.0, 0.0, reach)
