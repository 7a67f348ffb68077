"""Invented demo survey: structures, a terrain raster and a project file.

The scenario is made up from start to finish. Line ``L1`` (we call it the
"Vornholt - Quillmere 132 kV" line; both names are invented) runs 15
structures over rolling ground in a projected CRS (EPSG:32633, UTM 33N). It
crosses a stream valley, climbs over a ridge where it turns right by
26 degrees, and passes over a small knoll in the middle of span T11-T12. It
carries three phases side by side on 4.5 m cross-arms, hanging from 1.8 m
suspension strings, and an earth wire 5 m above the cross-arms with its own
smaller conductor. The knoll is sized so that the hot load case breaks a
7.5 m ground clearance there while the cold case does not;
``tests/test_sample.py`` checks that with an independent parabolic sag
estimate.

Everything is deterministic: the terrain is a smooth analytic function
(no random noise), so the same files come out on every run.
"""

from dataclasses import dataclass
from pathlib import Path

import numpy as np

LINE_ID = "L1"  # the invented "Vornholt - Quillmere 132 kV" line
CRS = "EPSG:32633"
STRUCTURES_FILE = "structures.gpkg"
STRUCTURES_LAYER = "structures"
TERRAIN_FILE = "terrain.tif"
PROJECT_FILE = "project.toml"

PIXEL_M = 2.0
TERRAIN_MARGIN_M = 200.0
NODATA = -9999.0
# Heights are rounded to multiples of 1/128 m (under 1 cm): the zeroed low
# mantissa bits let DEFLATE with the floating-point predictor shrink the file
# several times over.
HEIGHT_STEP_M = 1.0 / 128.0
# A 40 m x 40 m nodata hole, south-east of the line and far from it, so the
# raster shows nodata without touching any span.
NODATA_HOLE_XY = (504100.0, 5600400.0)
NODATA_HOLE_SIZE_M = 40.0

START_XY = (500350.0, 5600450.0)
# Grid bearings (clockwise from grid north) of the two straight legs; the line
# turns right by 26 degrees at the angle structure.
BEARINGS_DEG = (72.0, 98.0)
ANGLE_STRUCTURE = "T09"


@dataclass(frozen=True)
class StructureDesign:
    """One row of the invented structure schedule.

    Parameters
    ----------
    structure_id : str
        Structure label.
    kind : str
        ``"strain"`` or ``"suspension"``.
    ahead_span_m : float or None
        Horizontal span to the next structure [m]; None on the last one.
    attach_height_m : float or None
        Attachment height above ground [m] (the top of the suspension string
        on suspension structures); None leaves it to the project default.
    surveyed_ground : bool
        Whether the row carries a surveyed ``ground_z_m``.
    """

    structure_id: str
    kind: str
    ahead_span_m: float | None
    attach_height_m: float | None
    surveyed_ground: bool = False


# Three tension sections: T01-T05, T05-T09 (angle), T09-T15. Suspension
# heights are the tops of their strings: the phases hang SUSPENSION_STRING_M
# lower.
SCHEDULE = (
    StructureDesign("T01", "strain", 262.0, 22.0),
    StructureDesign("T02", "suspension", 318.0, 25.5),
    StructureDesign("T03", "suspension", 236.0, 24.0),
    StructureDesign("T04", "suspension", 296.0, 21.5),
    StructureDesign("T05", "strain", 374.0, 24.0, surveyed_ground=True),
    StructureDesign("T06", "suspension", 228.0, None),
    StructureDesign("T07", "suspension", 305.0, 23.5),
    StructureDesign("T08", "suspension", 284.0, None),
    StructureDesign("T09", "strain", 247.0, 18.0),
    StructureDesign("T10", "suspension", 336.0, 24.5),
    StructureDesign("T11", "suspension", 352.0, 26.5),
    StructureDesign("T12", "suspension", 291.0, 28.0, surveyed_ground=True),
    StructureDesign("T13", "suspension", 214.0, None),
    StructureDesign("T14", "suspension", 279.0, 21.0),
    StructureDesign("T15", "strain", None, None),
)
# Length of every suspension string, top to wire clamp [m].
SUSPENSION_STRING_M = 1.8

PROJECT_TOML = """\
[inputs]
structures = "structures.gpkg"
structures_layer = "structures"
terrain = "terrain.tif"

[line]
attach_height_m = 22.0

[conductor]                        # the catalog's Drake (routesag conductors drake), written out
diameter_mm = 28.14
area_mm2 = 468.6
mass_kg_m = 1.628
rated_strength_kn = 140.1
modulus_gpa = 74.0
expansion_per_c = 18.9e-6

[stringing]
temperature_c = 15.0
horizontal_tension_kn = 28.0
creep_allowance_c = 10.0

[[wires]]
name = "phase_a"
offset_m = -4.5

[[wires]]
name = "phase_b"
offset_m = 0.0

[[wires]]
name = "phase_c"
offset_m = 4.5

[[wires]]
name = "earth"
offset_m = 0.0
dz_m = 5.0
insulated = false

[wires.conductor]
name = "Partridge"                 # from the conductor catalog: ACSR 266.8 kcmil 26/7

[wires.stringing]
temperature_c = 15.0
tension_percent_rts = 18.0
creep_allowance_c = 5.0            # invented demo value: a smaller, steel-rich wire creeps less

[insulators]
weight_n = 600.0
wind_area_m2 = 0.35

[[load_cases]]
name = "hot"
temperature_c = 90.0

[[load_cases]]
name = "cold"
temperature_c = -20.0

[[load_cases]]
name = "ice"
temperature_c = 0.0
ice_mm = 12.5

[[load_cases]]
name = "wind"
temperature_c = 15.0
wind_pa = 430.0

[[limits]]
load_case = "ice"
max_percent_rts = 50.0
applies_to = "support"

[[limits]]
load_case = "cold"
max_percent_rts = 25.0

[clearance]
ground_m = 7.5
station_m = 1.0

[output]
path = "results.gpkg"
"""


def structure_xy():
    """Plan positions of the structures, walking the spans from T01.

    Returns
    -------
    x_m, y_m : numpy.ndarray
        Easting and northing of each structure in EPSG:32633 [m].
    """
    angle_index = _index(ANGLE_STRUCTURE)
    x_m, y_m = [START_XY[0]], [START_XY[1]]
    for index, design in enumerate(SCHEDULE[:-1]):
        bearing = np.radians(BEARINGS_DEG[0 if index < angle_index else 1])
        x_m.append(x_m[-1] + design.ahead_span_m * np.sin(bearing))
        y_m.append(y_m[-1] + design.ahead_span_m * np.cos(bearing))
    # Millimetre coordinates, as a survey would report them.
    return np.round(x_m, 3), np.round(y_m, 3)


def _index(structure_id):
    return [s.structure_id for s in SCHEDULE].index(structure_id)


def _position(structure_id):
    """Plan position of one structure [m]."""
    x_m, y_m = structure_xy()
    i = _index(structure_id)
    return x_m[i], y_m[i]


def _span_midpoint(back_id):
    """Plan midpoint of the span that starts at structure ``back_id`` [m]."""
    x_m, y_m = structure_xy()
    i = _index(back_id)
    return (x_m[i] + x_m[i + 1]) / 2.0, (y_m[i] + y_m[i + 1]) / 2.0


def _distance_to_axis(x_m, y_m, through_xy, bearing_deg):
    """Perpendicular distance from points to a straight axis [m]."""
    bearing = np.radians(bearing_deg)
    dx, dy = x_m - through_xy[0], y_m - through_xy[1]
    return dx * np.cos(bearing) - dy * np.sin(bearing)


def _gaussian(distance_m, width_m):
    return np.exp(-((distance_m / width_m) ** 2))


def terrain_z(x_m, y_m):
    """Invented ground surface: tilted plane, rolling hills, valley, ridge, knoll.

    Parameters
    ----------
    x_m, y_m : float or array
        Easting and northing in EPSG:32633 [m].

    Returns
    -------
    numpy.ndarray
        Ground height [m], unrounded.
    """
    x_m, y_m = np.asarray(x_m, dtype=float), np.asarray(y_m, dtype=float)
    u, v = x_m - 500000.0, y_m - 5600000.0
    plane = 285.0 + 0.004 * u + 0.006 * v
    hills = (6.0 * np.sin(2 * np.pi * u / 1400.0 + 0.6) * np.cos(2 * np.pi * v / 1100.0 - 0.4)
             + 3.0 * np.sin(2 * np.pi * (0.6 * u + 0.8 * v) / 900.0 + 1.9))
    # A stream valley running roughly north-south under span T05-T06.
    valley = -26.0 * _gaussian(_distance_to_axis(x_m, y_m, _span_midpoint("T05"), 170.0), 130.0)
    # A broad ridge with its crest at the angle structure.
    ridge = 16.0 * _gaussian(_distance_to_axis(x_m, y_m, _position(ANGLE_STRUCTURE), 5.0), 260.0)
    # The knoll under mid-span T11-T12 that the hot case fails to clear.
    kx, ky = _span_midpoint("T11")
    knoll = 7.0 * _gaussian(np.hypot(x_m - kx, y_m - ky), 55.0)
    return plane + hills + valley + ridge + knoll


def terrain_grid():
    """Terrain raster covering the line with a margin, with its nodata hole.

    Returns
    -------
    heights_m : numpy.ndarray
        float32 array, row 0 to the north [m]; ``NODATA`` in the hole.
    transform : affine.Affine
        Pixel-to-map transform (pixel size ``PIXEL_M``).
    """
    grid_x, grid_y, transform = _raster_grid(TERRAIN_MARGIN_M, PIXEL_M)
    heights = np.round(terrain_z(grid_x, grid_y) / HEIGHT_STEP_M) * HEIGHT_STEP_M
    hole_x, hole_y = NODATA_HOLE_XY
    half = NODATA_HOLE_SIZE_M / 2.0
    in_hole = (np.abs(grid_x - hole_x) < half) & (np.abs(grid_y - hole_y) < half)
    heights[in_hole] = NODATA
    return heights.astype(np.float32), transform


def _raster_grid(margin_m, pixel_m):
    """Pixel-centre coordinates and transform of a grid covering the structures with a margin.

    The edges are snapped outward to 10 m; row 0 is to the north.
    """
    from rasterio import Affine

    x_m, y_m = structure_xy()
    snap = 10.0
    west = np.floor((x_m.min() - margin_m) / snap) * snap
    east = np.ceil((x_m.max() + margin_m) / snap) * snap
    south = np.floor((y_m.min() - margin_m) / snap) * snap
    north = np.ceil((y_m.max() + margin_m) / snap) * snap
    cols, rows = int(round((east - west) / pixel_m)), int(round((north - south) / pixel_m))
    centre_x = west + pixel_m * (np.arange(cols) + 0.5)
    centre_y = north - pixel_m * (np.arange(rows) + 0.5)
    grid_x, grid_y = np.meshgrid(centre_x, centre_y)
    return grid_x, grid_y, Affine(pixel_m, 0.0, west, 0.0, -pixel_m, north)


def structure_frame():
    """The structure schedule as a GeoDataFrame of 2D points.

    Returns
    -------
    geopandas.GeoDataFrame
        Columns structure_id, seq, line_id, kind, attach_height_m [m],
        ground_z_m [m] and insulator_m [m] (suspension structures only);
        missing values are NaN (written as NULL).
    """
    import geopandas as gpd

    x_m, y_m = structure_xy()
    surveyed = np.array([s.surveyed_ground for s in SCHEDULE])
    # A surveyed ground height agrees with the terrain to the centimetre.
    ground_z = np.where(surveyed, np.round(terrain_z(x_m, y_m), 2), np.nan)
    return gpd.GeoDataFrame(
        {
            "structure_id": [s.structure_id for s in SCHEDULE],
            "seq": np.arange(1, len(SCHEDULE) + 1, dtype=np.int32),
            "line_id": LINE_ID,
            "kind": [s.kind for s in SCHEDULE],
            "attach_height_m": [np.nan if s.attach_height_m is None else s.attach_height_m
                                for s in SCHEDULE],
            "ground_z_m": ground_z,
            "insulator_m": [SUSPENSION_STRING_M if s.kind == "suspension" else np.nan for s in SCHEDULE],
        },
        geometry=gpd.points_from_xy(x_m, y_m),
        crs=CRS,
    )


def write_structures(path):
    """Write the structures layer to a GeoPackage at ``path``."""
    structure_frame().to_file(path, layer=STRUCTURES_LAYER, driver="GPKG", engine="pyogrio")


def write_terrain(path):
    """Write the terrain as a tiled, DEFLATE-compressed float32 GeoTIFF at ``path``."""
    _write_float_raster(path, *terrain_grid())


def _write_float_raster(path, heights, transform):
    """Tiled float32 GeoTIFF, DEFLATE with the floating-point predictor, nodata ``NODATA``."""
    import rasterio

    profile = {
        "driver": "GTiff", "dtype": "float32", "count": 1, "crs": CRS,
        "width": heights.shape[1], "height": heights.shape[0], "transform": transform,
        "nodata": NODATA, "tiled": True, "blockxsize": 256, "blockysize": 256,
        "compress": "deflate", "predictor": 3,
    }
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(heights, 1)


def write_project(path):
    """Write the demo project file (paths relative to its folder) at ``path``."""
    Path(path).write_text(project_text(), encoding="utf-8")


def write_sample_survey(folder):
    """Write structures.gpkg, terrain.tif, crossings.gpkg, surface.tif, project.toml and survey.laz
    (:mod:`routesag.sample_cloud`) into ``folder``.

    Existing files of those names are replaced; other files are left alone.

    Parameters
    ----------
    folder : str or path-like
        Target folder; created if missing.

    Returns
    -------
    pathlib.Path
        Path of the written project.toml.
    """
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    structures = folder / STRUCTURES_FILE
    if structures.exists():
        structures.unlink()  # the GPKG driver would otherwise add to the old file
    write_structures(structures)
    write_terrain(folder / TERRAIN_FILE)
    write_clearance_inputs(folder)
    write_project(folder / PROJECT_FILE)
    from routesag.sample_cloud import write_point_cloud  # it builds on this module

    write_point_cloud(folder)
    return folder / PROJECT_FILE


# ---------------------------------------------------------------- clearance inputs: crossings and surface model
# Kept apart from the structures and terrain above. The story they add:
# - a minor road crosses span T11-T12 on the knoll's eastern flank, where the
#   hot wire clears the ground rule (7.5 m) but not the road rule (8.5 m);
# - the stream under span T05-T06 is a water crossing, and the surface model
#   has no data over it (open water returns no laser echo), so that stretch
#   is unknown rather than clear;
# - a railway crosses span T12-T13 with room to spare;
# - a row of trees grown up beside span T14-T15 comes within 4 m of the hot
#   wire; other tree stands and a barn stand well away from the line.

CROSSINGS_FILE = "crossings.gpkg"
CROSSINGS_LAYER = "crossings"
SURFACE_FILE = "surface.tif"
SURFACE_PIXEL_M = 1.0
SURFACE_MARGIN_M = 60.0  # around the structures; more than any search radius of the demo
STREAM_WIDTH_M = 6.0

# The invented operator's clearance table [m], before any voltage adder.
CLEARANCE_TABLES_TOML = """\
[clearance.required_m]             # the operator's rule table; ground comes from ground_m above
road = 8.5
railway = 9.5
water = 7.0
surface = 4.0                      # 3D distance to trees and buildings in the surface model

[clearance.adder]                  # used only when voltage_kv is set
per_kv_m = 0.01
above_kv = 22.0

"""
CLEARANCE_INPUTS_TOML = """\
crossings = "crossings.gpkg"
crossings_layer = "crossings"
surface = "surface.tif"
"""
CLEARANCE_KEYS_TOML = """\
hotspot_merge_m = 10.0
surface_min_height_m = 0.5
# voltage_kv = 132.0               # nominal; would add 10 mm per kV above 22 kV to ground to every value
# max_voltage_kv = 145.0
"""

# Trees: (span's back structure, station [m], offset to the left of the line [m], crown height [m],
# crown radius [m]). Crowns are paraboloids on the terrain.
TREES = (
    # The row beside T14-T15 that has grown into the hot wire's clearance.
    *(("T14", station, 3.5, height, 3.0)
      for station, height in zip((119.0, 127.0, 135.0, 143.0, 151.0), (10.2, 10.6, 10.9, 10.4, 10.0))),
    # A copse well to the right of T03-T04.
    *(("T03", station, -26.0 - 3.0 * (i % 2), 15.0 + (i % 3), 4.0)
      for i, station in enumerate((110.0, 120.0, 130.0, 140.0, 150.0, 160.0))),
    # An orchard to the left of T09-T10.
    *(("T09", station, 35.0 + offset, 7.0, 2.5) for station in (80.0, 90.0, 100.0) for offset in (0.0, 8.0)),
)
# Barn: (back structure, station [m], left offset [m], length along the line, width [m], roof height [m]).
BUILDING = ("T06", 100.0, -30.0, 24.0, 14.0, 9.0)
# Road: axis through (back structure, station) at this grid bearing, width, length [m].
ROAD = ("T11", 212.0, 10.0, 12.0, 160.0)
# Railway: axis through (back structure, station) at this grid bearing, length [m]; width from the project.
RAILWAY = ("T12", 100.0, 20.0, 400.0)
STREAM_BEARING_DEG, STREAM_LENGTH_M = 170.0, 500.0


def _beside_span(back_id, station_m, left_m=0.0):
    """Plan point at a station of the span starting at ``back_id``, offset to the left of it [m]."""
    x_m, y_m = structure_xy()
    i = _index(back_id)
    dx, dy = x_m[i + 1] - x_m[i], y_m[i + 1] - y_m[i]
    length = np.hypot(dx, dy)
    ux, uy = dx / length, dy / length
    return x_m[i] + station_m * ux - left_m * uy, y_m[i] + station_m * uy + left_m * ux


def _axis(through_xy, bearing_deg, length_m):
    """Straight line of a given length centred on a point, at a grid bearing."""
    import shapely

    b = np.radians(bearing_deg)
    half = length_m / 2.0 * np.array([np.sin(b), np.cos(b)])
    centre = np.asarray(through_xy, dtype=float)
    return shapely.LineString([centre - half, centre + half])


def crossings_frame():
    """Road (polygon), stream (line, 6 m wide) and railway (line, default width) crossings.

    Returns
    -------
    geopandas.GeoDataFrame
        Columns category, required_m (NULL: the project's table applies) and
        width_m [m] (lines only).
    """
    import geopandas as gpd

    back, station, bearing, width, length = ROAD
    road = _axis(_beside_span(back, station), bearing, length).buffer(width / 2.0, cap_style="flat")
    stream = _axis(_span_midpoint("T05"), STREAM_BEARING_DEG, STREAM_LENGTH_M)
    back, station, bearing, length = RAILWAY
    railway = _axis(_beside_span(back, station), bearing, length)
    return gpd.GeoDataFrame(
        {"category": ["road", "water", "railway"], "required_m": [np.nan] * 3,
         "width_m": [np.nan, STREAM_WIDTH_M, np.nan]},
        geometry=[road, stream, railway], crs=CRS)


def surface_objects_m(x_m, y_m):
    """Height of trees and the barn above the terrain at points [m] (0 where there is none)."""
    height = np.zeros(np.shape(x_m))
    for back, station, left, crown_m, radius_m in TREES:
        cx, cy = _beside_span(back, station, left)
        rho2 = ((x_m - cx) ** 2 + (y_m - cy) ** 2) / radius_m**2
        height = np.maximum(height, crown_m * np.clip(1.0 - rho2, 0.0, None))
    back, station, left, length_m, width_m, roof_m = BUILDING
    cx, cy = _beside_span(back, station, left)
    along = np.radians(BEARINGS_DEG[0])  # the barn is aligned with the first leg
    u = (x_m - cx) * np.sin(along) + (y_m - cy) * np.cos(along)
    v = (x_m - cx) * np.cos(along) - (y_m - cy) * np.sin(along)
    inside = (np.abs(u) <= length_m / 2.0) & (np.abs(v) <= width_m / 2.0)
    return np.where(inside, np.maximum(height, roof_m), height)


def surface_grid():
    """Surface model (terrain + trees + barn) around the line, nodata over the stream.

    Returns
    -------
    heights_m : numpy.ndarray
        float32 elevations of the top surface, row 0 to the north [m];
        ``NODATA`` over the stream.
    transform : affine.Affine
        Pixel-to-map transform (pixel size ``SURFACE_PIXEL_M``).
    """
    grid_x, grid_y, transform = _raster_grid(SURFACE_MARGIN_M, SURFACE_PIXEL_M)
    top = terrain_z(grid_x, grid_y) + surface_objects_m(grid_x, grid_y)
    heights = np.round(top / HEIGHT_STEP_M) * HEIGHT_STEP_M
    mid = _span_midpoint("T05")
    along = _distance_to_axis(grid_x, grid_y, mid, STREAM_BEARING_DEG + 90.0)
    across = _distance_to_axis(grid_x, grid_y, mid, STREAM_BEARING_DEG)
    heights[(np.abs(across) < STREAM_WIDTH_M / 2.0) & (np.abs(along) < STREAM_LENGTH_M / 2.0)] = NODATA
    return heights.astype(np.float32), transform


def write_crossings(path):
    """Write the crossings layer to a GeoPackage at ``path``."""
    crossings_frame().to_file(path, layer=CROSSINGS_LAYER, driver="GPKG", engine="pyogrio")


def write_surface(path):
    """Write the surface model as a tiled, DEFLATE-compressed float32 GeoTIFF at ``path``."""
    _write_float_raster(path, *surface_grid())


def project_text():
    """The demo project: the base project plus the crossings, surface model and clearance tables."""
    text = PROJECT_TOML
    for anchor, added in (('terrain = "terrain.tif"\n', CLEARANCE_INPUTS_TOML),
                          ("station_m = 1.0\n", CLEARANCE_KEYS_TOML)):
        assert anchor in text, f"project text has no {anchor!r} to extend"
        text = text.replace(anchor, anchor + added, 1)
    assert "[output]" in text
    from routesag.sample_cloud import project_text as with_point_cloud  # it builds on this module

    return with_point_cloud(text.replace("[output]", CLEARANCE_TABLES_TOML + "[output]", 1))


def write_clearance_inputs(folder):
    """Write crossings.gpkg and surface.tif into ``folder`` (replacing earlier ones)."""
    folder = Path(folder)
    crossings = folder / CROSSINGS_FILE
    if crossings.exists():
        crossings.unlink()  # the GPKG driver would otherwise add to the old file
    write_crossings(crossings)
    write_surface(folder / SURFACE_FILE)
