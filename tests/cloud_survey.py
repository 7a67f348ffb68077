"""A small survey with a synthetic LiDAR point cloud of known truth, built in code.

The conftest line (spans 300, 250, 350 m; sections A:P1-P3 and A:P3-P4) with one wire, Drake, designed at
30 kN at 15 degC. The truth: section S1 was strung tighter, 33 kN at the survey temperature of 25 degC; S2 holds
whatever the design stringing gives at 25 degC. The points of each span lie on the exact catenary of the true
tension (3 cm noise, 5 % outliers, jumper points at the structures), written as LAS/LAZ with laspy.
"""
from __future__ import annotations

import dataclasses
import textwrap

import laspy
import numpy as np
from pyproj import CRS as PyprojCRS

from routesag.api import compute
from routesag.physics.catenary import catenary_z
from routesag.physics.loads import bare_weight_n_m
from routesag.project import load_project
from routesag.project.model import LoadCase
from routesag.stages.tensions import section_tensions
from tests.conftest import CRS, X0, Y0, write_plane_raster, write_project, write_structures

XS = [0.0, 300.0, 550.0, 900.0]
KINDS = ["strain", "suspension", "strain", "strain"]
SURVEY_C = 25.0
TRUE_S1_N = 33_000.0
RETENSIONED = "A:P1-P3"
DRAKE_W_N_M = float(bare_weight_n_m(1.628))  # Drake 1.628 kg/m (FIELD.md §5)


def write_las(path, x, y, z, cls, crs=CRS):
    header = laspy.LasHeader(point_format=6, version="1.4")
    header.scales = np.array([0.001, 0.001, 0.001])
    header.offsets = np.array([np.floor(np.min(x)), np.floor(np.min(y)), 0.0])
    if crs:
        header.add_crs(PyprojCRS.from_user_input(crs))
    las = laspy.LasData(header)
    las.x, las.y, las.z = x, y, z
    las.classification = np.asarray(cls, dtype=np.uint8)
    las.write(str(path))
    return path


def cloud_project(tmp, source="design", cloud="survey.laz", extra=""):
    """The survey files and a project reading the point cloud; returns the project path."""
    write_plane_raster(tmp / "terrain.tif", a=100.0, bx=0.01, cy=0.02)
    write_structures(tmp / "structures.gpkg", [(X0 + x, Y0 + 200.0) for x in XS], kinds=KINDS)
    project = write_project(tmp, cases=[("hot", 90.0, 0.0, 0.0), ("cold", -20.0, 0.0, 0.0)])
    text = project.read_text().replace('terrain = "terrain.tif"',
                                       f'terrain = "terrain.tif"\npoint_cloud = "{cloud}"')
    text = text.replace("horizontal_tension_kn = 30.0", f'horizontal_tension_kn = 30.0\nsource = "{source}"')
    text += textwrap.dedent(f"""
        [survey]
        conductor_temperature_c = {SURVEY_C}
        """) + extra
    project.write_text(text)
    return project


def true_tensions(project_path) -> dict:
    """True horizontal tension of each section at the survey temperature [N]."""
    project = load_project(project_path)
    data = compute(project_path, ["wire_spans", "sections"])
    out = {}
    for _, section in data["sections"].iterrows():
        if section["section_id"] == RETENSIONED:
            out[section["section_id"]] = TRUE_S1_N
            continue
        survey = dataclasses.replace(project, load_cases=[LoadCase("survey", SURVEY_C)])
        spans = data["wire_spans"][data["wire_spans"]["section_id"] == section["section_id"]]
        out[section["section_id"]] = section_tensions(section, survey, spans=spans)[0]["horizontal_tension_n"]
    return out


def wire_points(project_path, seed=5, per_m=1.0, noise_m=0.03, outliers=0.05):
    """(x, y, z, class) of points on each span's true catenary, plus jumper points at the structures."""
    rng = np.random.default_rng(seed)
    data = compute(project_path, ["wire_spans"])
    truth = true_tensions(project_path)
    xs, ys, zs = [], [], []
    for _, r in data["wire_spans"].iterrows():
        n = int(per_m * r["span_m"])
        along = rng.uniform(0.5, r["span_m"] - 0.5, n)
        t = along / r["span_m"]
        z = r["z0"] + catenary_z(along, r["span_m"], r["dz_m"], truth[r["section_id"]] / DRAKE_W_N_M)
        z += rng.normal(0.0, noise_m, n)
        bad = rng.random(n) < outliers
        z[bad] += rng.uniform(-2.0, 2.0, bad.sum())
        xs.append(r["x0"] + t * (r["x1"] - r["x0"]) + rng.normal(0, 0.05, n))
        ys.append(r["y0"] + t * (r["y1"] - r["y0"]) + rng.normal(0, 0.05, n))
        zs.append(z)
        # a jumper loop hanging 2 m under the clamp, within the gap at the from-structure
        xs.append(np.full(20, r["x0"]) + rng.uniform(0.5, 3.0, 20))
        ys.append(np.full(20, r["y0"]))
        zs.append(np.full(20, r["z0"] - 2.0))
    x, y, z = np.concatenate(xs), np.concatenate(ys), np.concatenate(zs)
    return x, y, z, np.full(x.size, 14)
