"""Stage: read and check the structures and open the terrain."""
from __future__ import annotations

import numpy as np

from routesag.errors import DataError
from routesag.io.structures import check_structures, read_structures_file, to_working_crs
from routesag.io.terrain import TerrainSampler
from routesag.pipeline import Stage


class ReadInputs(Stage):
    name = "read_inputs"
    requires = ("project",)
    provides = ("structures", "terrain", "work_crs")
    description = "read structures (checked, in a metre CRS) and open the terrain raster"

    def run(self, data, ctx):
        project = data["project"]
        source = project.structures_path
        raw = read_structures_file(source, project.structures_layer, project.structures_crs)
        structures = check_structures(raw, source, project.attach_height_m)
        structures, crs, note = to_working_crs(structures)
        ctx.notes["crs"] = crs.to_string()
        ctx.notes["crs_note"] = note
        terrain = TerrainSampler(project.terrain_path, z_units=project.terrain_z_units)
        try:
            structures = locate_attachments(structures, terrain, source)
        except Exception:
            terrain.close()
            raise
        ctx.notes["terrain_crs"] = terrain.crs.to_string()
        ctx.notes["terrain_z_note"] = terrain.z_unit_note
        return {"structures": structures, "terrain": terrain, "work_crs": crs}


def locate_attachments(structures, terrain, source):
    """Add x, y, ground_z_m (sampled where not surveyed) and attach_z_m; sort by line and seq."""
    s = structures.sort_values(["line_id", "seq"], kind="stable").reset_index(drop=True)
    s["x"] = s.geometry.x.to_numpy()
    s["y"] = s.geometry.y.to_numpy()
    need = np.isnan(s["ground_z_m"].to_numpy(dtype=float))
    ground = s["ground_z_m"].to_numpy(dtype=float).copy()
    if need.any():
        ground[need] = terrain.sample(s["x"].to_numpy()[need], s["y"].to_numpy()[need], crs=s.crs)
    missing = np.isnan(ground)
    if missing.any():
        raise DataError([f"structures file {source}: structure {sid}: no ground_z_m and the terrain "
                         f"{terrain.path} has no elevation there (outside the raster or over nodata)"
                         for sid in s.loc[missing, "structure_id"]])
    s["ground_z_m"] = ground
    s["attach_z_m"] = ground + s["attach_height_m"].to_numpy(dtype=float)
    return s
