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

[conductor]
diameter_mm = 28.14
area_mm2 = 468.6
mass_kg_m = 1.628
rated_strength_kn = 140.1
modulus_gpa = 70.0
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
diameter_mm = 16.31
area_mm2 = 157.2
mass_kg_m = 0.5459
rated_strength_kn = 50.0
modulus_gpa = 75.0
expansion_per_c = 18.9e-6

[wires.stringing]
temperature_c = 15.0
tension_percent_rts = 18.0

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
    from rasterio import Affine

    x_m, y_m = structure_xy()
    snap = 10.0
    west = np.floor((x_m.min() - TERRAIN_MARGIN_M) / snap) * snap
    east = np.ceil((x_m.max() + TERRAIN_MARGIN_M) / snap) * snap
    south = np.floor((y_m.min() - TERRAIN_MARGIN_M) / snap) * snap
    north = np.ceil((y_m.max() + TERRAIN_MARGIN_M) / snap) * snap
    cols, rows = int(round((east - west) / PIXEL_M)), int(round((north - south) / PIXEL_M))
    centre_x = west + PIXEL_M * (np.arange(cols) + 0.5)
    centre_y = north - PIXEL_M * (np.arange(rows) + 0.5)
    grid_x, grid_y = np.meshgrid(centre_x, centre_y)
    heights = np.round(terrain_z(grid_x, grid_y) / HEIGHT_STEP_M) * HEIGHT_STEP_M
    hole_x, hole_y = NODATA_HOLE_XY
    half = NODATA_HOLE_SIZE_M / 2.0
    in_hole = (np.abs(grid_x - hole_x) < half) & (np.abs(grid_y - hole_y) < half)
    heights[in_hole] = NODATA
    return heights.astype(np.float32), Affine(PIXEL_M, 0.0, west, 0.0, -PIXEL_M, north)


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
    import rasterio

    heights, transform = terrain_grid()
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
    Path(path).write_text(PROJECT_TOML, encoding="utf-8")


def write_sample_survey(folder):
    """Write structures.gpkg, terrain.tif and project.toml into ``folder``.

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
    write_project(folder / PROJECT_FILE)
    return folder / PROJECT_FILE
