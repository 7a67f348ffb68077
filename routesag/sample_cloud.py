"""Invented LiDAR point cloud of the demo line (``sample_survey/survey.laz``).

The story it adds to :mod:`routesag.sample`: the helicopter survey flew on a
mild, overcast day with the conductors at 20 degC. Every wire is surveyed
along every span from its known catenary, with what real wire returns look
like:

- 3 cm of noise, and 5 % outliers (birds, stray returns) up to 3 m off;
- a gap of about 15 m in every span longer than 250 m (scan shadows);
- span T10-T11 of ``phase_c``: points on its first half only (a one-sided, weak fit);
- jumper loops around every strain structure (inside the structure gap, ignored by the fit).

The middle tension section (T05-T09) was re-strung after a repair: its phase
conductors hold 24 kN at the survey temperature where the design stringing
gives about 27 kN; every other section and the earth wire hang as designed
(the design stringing carried to 20 degC, initial). The trees and the barn of
the surface model are surveyed too, as vegetation (LAS class 5) and building
(class 6) points; the row beside T14-T15 comes within the 4 m clearance. A
sparse grid of ground points (class 2) completes it. Phases are class 14, the
earth wire class 13 (ASPRS LAS 1.4 R15, Table 17).

Deterministic: one seeded generator, so the same points come out every time.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np

from routesag import sample

POINT_CLOUD_FILE = "survey.laz"
SURVEY_TEMPERATURE_C = 20.0
RETENSIONED_SECTION = "L1:T05-T09"
AS_BUILT_PHASE_N = 24_000.0          # its phases' tension at the survey temperature [N]
POINTS_PER_M = 1.5                   # wire returns per metre of span
NOISE_M, OUTLIER_SHARE, OUTLIER_M = 0.03, 0.05, 3.0
GAP_M, GAP_FROM_SPAN_M = 15.0, 250.0
ONE_SIDED = ("L1:T10-T11", "phase_c")
JUMPER_POINTS, JUMPER_REACH_M, JUMPER_DROP_M = 15, 3.0, 1.5
GROUND_STEP_M, GROUND_HALF_WIDTH_M = 10.0, 20.0
CROWN_POINTS_PER_M2, ROOF_STEP_M = 3.0, 1.0
PHASE_CLASS, EARTH_CLASS, VEGETATION_CLASS, BUILDING_CLASS, GROUND_CLASS = 14, 13, 5, 6, 2
SEED = 20261202

CLOUD_INPUTS_TOML = f'point_cloud = "{POINT_CLOUD_FILE}"\n'
CLOUD_TABLES_TOML = f"""\
[point_cloud]                      # the LiDAR survey: wires fitted, trees and buildings measured in 3D
wire_classes = [{PHASE_CLASS}, {EARTH_CLASS}]             # conductor and shield wire returns
surface_classes = [3, 4, 5, 6]     # vegetation and buildings
write_points = true                # the assigned wire points as a layer, for review

[survey]
conductor_temperature_c = {SURVEY_TEMPERATURE_C}     # during the flight

"""


def project_text(text: str) -> str:
    """The demo project with the point cloud: input, settings, and load cases from the as-found state."""
    for anchor, added in (('terrain = "terrain.tif"\n', CLOUD_INPUTS_TOML),
                          ("creep_allowance_c = 10.0\n", 'source = "as_found"               # each section\'s '
                                                         "fitted survey state; design where no good fit\n"),
                          ("creep_allowance_c = 5.0            # invented demo value: a smaller, steel-rich wire "
                           "creeps less\n", 'source = "as_found"\n')):
        assert anchor in text, f"project text has no {anchor!r} to extend"
        text = text.replace(anchor, anchor + added, 1)
    return text.replace("[output]", CLOUD_TABLES_TOML + "[output]", 1)


def write_point_cloud(folder) -> Path:
    """Write ``survey.laz`` into ``folder``, which already holds the rest of the sample survey."""
    folder = Path(folder)
    x, y, z, cls = cloud_points(folder / sample.PROJECT_FILE)
    return write_laz(folder / POINT_CLOUD_FILE, x, y, z, cls)


def write_laz(path, x, y, z, cls) -> Path:
    """LAS 1.4, point format 6, millimetre scale, with the CRS as a WKT record."""
    import laspy
    from pyproj import CRS

    header = laspy.LasHeader(point_format=6, version="1.4")
    header.scales = np.array([0.001, 0.001, 0.001])
    header.offsets = np.array([np.floor(x.min()), np.floor(y.min()), 0.0])
    header.add_crs(CRS.from_user_input(sample.CRS))
    header.creation_date = None
    las = laspy.LasData(header)
    las.x, las.y, las.z = x, y, z
    las.classification = cls.astype(np.uint8)
    las.write(str(path))
    return Path(path)


def cloud_points(project_path):
    """(x, y, z, class) of every point of the invented survey."""
    rng = np.random.default_rng(SEED)
    wires = wire_truth(project_path)
    parts = [span_points(rng, row) for _, row in wires.iterrows()]
    parts += [jumper_points(rng, wires)]
    parts += [vegetation_points(rng), building_points(), ground_points(wires)]
    return tuple(np.concatenate([p[i] for p in parts]) for i in range(4))


def wire_truth(project_path):
    """The wire spans with the true horizontal tension and bare weight of each wire at the survey."""
    from routesag.api import compute
    from routesag.physics.loads import bare_weight_n_m
    from routesag.project import load_project
    from routesag.stages.as_found import bare_state

    project = load_project(project_path)
    data = compute(project_path, ["wire_spans", "sections"])
    wire_spans = data["wire_spans"].copy()
    truth = {}
    for _, section in data["sections"].iterrows():
        for wire in project.line_wires(section["line_id"]):
            spans = wire_spans[(wire_spans["section_id"] == section["section_id"]) & (wire_spans["wire"] == wire.name)]
            h_n = bare_state(project, section, wire, spans, SURVEY_TEMPERATURE_C)["horizontal_tension_n"]
            if section["section_id"] == RETENSIONED_SECTION and wire.name.startswith("phase"):
                h_n = AS_BUILT_PHASE_N
            truth[(section["section_id"], wire.name)] = (h_n, float(bare_weight_n_m(wire.conductor.mass_kg_m)))
    keys = list(zip(wire_spans["section_id"], wire_spans["wire"]))
    wire_spans["true_tension_n"] = [truth[k][0] for k in keys]
    wire_spans["weight_n_m"] = [truth[k][1] for k in keys]
    return wire_spans


def span_points(rng, row):
    """Returns along one wire of one span: noise, outliers, a scan gap, maybe one half only."""
    from routesag.physics.catenary import catenary_z

    span_m = float(row["span_m"])
    along = rng.uniform(0.3, span_m - 0.3, int(POINTS_PER_M * span_m))
    if span_m > GAP_FROM_SPAN_M:
        start = rng.uniform(0.2 * span_m, 0.8 * span_m - GAP_M)
        along = along[(along < start) | (along > start + GAP_M)]
    if (row["span_id"], row["wire"]) == ONE_SIDED:
        along = along[along < 0.45 * span_m]
    c = row["true_tension_n"] / row["weight_n_m"]
    z = row["z0"] + catenary_z(along, span_m, row["dz_m"], c) + rng.normal(0.0, NOISE_M, along.size)
    wild = rng.random(along.size) < OUTLIER_SHARE
    z[wild] += rng.uniform(-OUTLIER_M, OUTLIER_M, wild.sum())
    t = along / span_m
    x = row["x0"] + t * (row["x1"] - row["x0"]) + rng.normal(0.0, NOISE_M, along.size)
    y = row["y0"] + t * (row["y1"] - row["y0"]) + rng.normal(0.0, NOISE_M, along.size)
    return x, y, z, np.full(along.size, EARTH_CLASS if row["wire"] == "earth" else PHASE_CLASS)


def jumper_points(rng, wires):
    """Jumper loops hanging under the clamps on both sides of every strain structure."""
    ends = (sample.SCHEDULE[0].structure_id, sample.SCHEDULE[-1].structure_id)
    strain_ids = {s.structure_id for s in sample.SCHEDULE if s.kind == "strain"} | set(ends)
    xs, ys, zs, cls = [], [], [], []
    for _, row in wires.iterrows():
        for end, sign in (("0", 1.0), ("1", -1.0)):
            if row["from_id" if end == "0" else "to_id"] not in strain_ids:
                continue
            d = np.array([row["x1"] - row["x0"], row["y1"] - row["y0"]]) / row["span_m"]
            along = sign * rng.uniform(0.3, JUMPER_REACH_M, JUMPER_POINTS)
            xs.append(row[f"x{end}"] + along * d[0])
            ys.append(row[f"y{end}"] + along * d[1])
            zs.append(row[f"z{end}"] - JUMPER_DROP_M * np.sin(np.pi * np.abs(along) / (2 * JUMPER_REACH_M)))
            cls.append(np.full(JUMPER_POINTS, EARTH_CLASS if row["wire"] == "earth" else PHASE_CLASS))
    return tuple(np.concatenate(v) for v in (xs, ys, zs, cls))


def vegetation_points(rng):
    """Returns on the crowns of the surface model's trees (paraboloids on the terrain)."""
    xs, ys, zs = [], [], []
    for back, station, left, crown_m, radius_m in sample.TREES:
        cx, cy = sample._beside_span(back, station, left)
        n = int(CROWN_POINTS_PER_M2 * np.pi * radius_m ** 2)
        rho = radius_m * np.sqrt(rng.random(n))
        theta = rng.uniform(0.0, 2 * np.pi, n)
        x, y = cx + rho * np.cos(theta), cy + rho * np.sin(theta)
        xs.append(x)
        ys.append(y)
        zs.append(sample.terrain_z(x, y) + crown_m * (1.0 - (rho / radius_m) ** 2))
    x, y, z = (np.concatenate(v) for v in (xs, ys, zs))
    return x, y, z, np.full(x.size, VEGETATION_CLASS)


def building_points():
    """A 1 m grid of returns on the barn's flat roof."""
    back, station, left, length_m, width_m, roof_m = sample.BUILDING
    cx, cy = sample._beside_span(back, station, left)
    u, v = np.meshgrid(np.arange(-length_m / 2, length_m / 2 + 1e-9, ROOF_STEP_M),
                       np.arange(-width_m / 2, width_m / 2 + 1e-9, ROOF_STEP_M))
    along = np.radians(sample.BEARINGS_DEG[0])
    x = cx + u.ravel() * np.sin(along) + v.ravel() * np.cos(along)
    y = cy + u.ravel() * np.cos(along) - v.ravel() * np.sin(along)
    return x, y, sample.terrain_z(x, y) + roof_m, np.full(x.size, BUILDING_CLASS)


def ground_points(wires):
    """A sparse grid of ground returns along the line's centre."""
    centre = wires[wires["wire"] == "phase_b"]
    xs, ys = [], []
    for _, row in centre.iterrows():
        d = np.array([row["x1"] - row["x0"], row["y1"] - row["y0"]]) / row["span_m"]
        along, across = np.meshgrid(np.arange(0.0, row["span_m"], GROUND_STEP_M),
                                    np.arange(-GROUND_HALF_WIDTH_M, GROUND_HALF_WIDTH_M + 1e-9, GROUND_STEP_M))
        xs.append(row["x0"] + along.ravel() * d[0] - across.ravel() * d[1])
        ys.append(row["y0"] + along.ravel() * d[1] + across.ravel() * d[0])
    x, y = np.concatenate(xs), np.concatenate(ys)
    return x, y, sample.terrain_z(x, y), np.full(x.size, GROUND_CLASS)
