"""Stage: read and check the structures and open the terrain."""
from __future__ import annotations

import os

import numpy as np

from routesag.errors import DataError
from routesag.io.extents import extent_message
from routesag.io.hashing import fingerprint
from routesag.io.structures import check_structures, read_structures_file, to_working_crs
from routesag.io.terrain import TerrainSampler
from routesag.pipeline import Stage
from routesag.stages.terrain import warn_implausible


#: Terrain windows held by the sampler: more than a section's spans, so the terrain stage finds every span's
#: cells still in memory after the conductors were placed on them (one read per span; at most ~2 MB each).
HELD_TERRAIN_WINDOWS = 16
#: Threads reading the ground under structures: each decodes whole raster blocks, one per structure of a long
#: line, and GDAL lets go of the GIL meanwhile.
GROUND_READ_THREADS = min(2, os.cpu_count() or 1)


class ReadInputs(Stage):
    name = "read_inputs"
    requires = ("project",)
    provides = ("structures", "terrain", "work_crs")
    description = "read structures (checked, in a metre CRS) and open the terrain raster"

    def run(self, data, ctx):
        project = data["project"]
        source = project.structures_path
        digests = record_inputs(project, ctx)
        try:
            structures, terrain = read_and_check(project, ctx)
        finally:
            for role, digest in digests.items():  # the small inputs now; the terrain after the ground is read
                if role != "terrain":
                    digest.start()
        try:
            original = structures.copy()
            structures, crs, note = to_working_crs(structures, source)
            try:
                structures = locate_attachments(structures, terrain, source, original)
                check_surveyed_ground(structures, terrain, source, project.settings.get("inputs", {}), ctx.warn)
            finally:
                warn_implausible(ctx, terrain)
        except BaseException:
            terrain.close()
            raise
        finally:
            if "terrain" in digests:
                digests["terrain"].start()
        ctx.notes["crs"] = crs.to_string()
        ctx.notes["crs_note"] = note
        ctx.notes["terrain_crs"] = terrain.crs.to_string()
        ctx.notes["terrain_z_note"] = terrain.z_unit_note
        if terrain.crs_note:
            ctx.notes["terrain_crs_note"] = terrain.crs_note
        return {"structures": structures, "terrain": terrain, "work_crs": crs}


def record_inputs(project, ctx) -> None:
    """Take every input's signature as the run starts reading them; run_info reports their hashes.

    The hashes are taken in background threads, started by the caller (:class:`BackgroundDigest`): the
    terrain's is hundreds of MB, so it starts once the ground under the structures is read and runs on a
    spare core while the line is solved. The output stage waits for them and refuses the run if a
    signature changed meanwhile, so a hash is always of the file the run read.

    Returns
    -------
    dict
        Input role -> its :class:`BackgroundDigest`, not yet started.
    """
    digests = {}
    for role, path in project.input_paths().items():
        if path.exists():
            digest, before = fingerprint(path, start=False)
            ctx.inputs[role] = (path, digest, before)
            digests[role] = digest
    return digests


def read_and_check(project, ctx=None):
    """Checked structures and the open terrain; problems of both are reported together.

    Raises
    ------
    DataError
        Every problem found in the structures and in the terrain, so a bad
        field and a missing raster are fixed in one round.
    """
    problems, structures, terrain = [], None, None
    inputs = project.settings.get("inputs", {})
    warn = ctx.warn if ctx is not None else None
    try:
        raw = read_structures_file(project.structures_path, project.structures_layer, project.structures_crs,
                                   inputs.get("x_column"), inputs.get("y_column"), inputs.get("fields") or {})
        if ctx is not None and raw.attrs.get("note"):
            ctx.notes["structures_columns"] = raw.attrs["note"]
        structures = check_structures(raw, project.structures_path, project.attach_height_m,
                                      fields=inputs.get("fields"), height_units=inputs.get("height_units"),
                                      warn=warn)
        if ctx is not None:
            ctx.notes["height_units"] = inputs.get("height_units") or "m (default)"
    except DataError as exc:
        problems.extend(exc.problems)
    try:
        terrain = TerrainSampler(project.terrain_path, z_units=project.terrain_z_units,
                                 crs=inputs.get("terrain_crs"), nodata=inputs.get("terrain_nodata"),
                                 hold_windows=HELD_TERRAIN_WINDOWS)
    except DataError as exc:
        problems.extend(exc.problems)
    if problems:
        if terrain is not None:
            terrain.close()
        raise DataError(problems)
    return structures, terrain


def locate_attachments(structures, terrain, source, original=None):
    """Add x, y, ground_z_m (sampled where not surveyed) and attach_z_m; sort by line and seq.

    ``original`` (the structures in their own CRS, before any reprojection)
    lets the message for a line that mostly misses the raster compare the
    extents and guess the cause (see :mod:`routesag.io.extents`).
    """
    s = structures.sort_values(["line_id", "seq"], kind="stable").reset_index(drop=True)
    s["x"] = s.geometry.x.to_numpy()
    s["y"] = s.geometry.y.to_numpy()
    need = np.isnan(s["ground_z_m"].to_numpy(dtype=float))
    ground = s["ground_z_m"].to_numpy(dtype=float).copy()
    if need.any():
        ground[need] = terrain.sample_scattered(s["x"].to_numpy()[need], s["y"].to_numpy()[need], crs=s.crs,
                                                threads=GROUND_READ_THREADS)
    missing = np.isnan(ground)
    if missing.any():
        own = s if original is None else original
        message = extent_message(own.geometry.x.to_numpy(), own.geometry.y.to_numpy(), own.crs, terrain,
                                 f"structures file {source}")
        if message:
            raise DataError(message)
        inside = terrain.contains(s["x"].to_numpy()[missing], s["y"].to_numpy()[missing], crs=s.crs)
        raise DataError([f"structures file {source}: structure {sid}: no ground_z_m and the terrain "
                         f"{terrain.path} has no elevation there "
                         f"({'over nodata' if is_inside else 'outside the raster'}); survey its ground_z_m "
                         "or extend the terrain"
                         for sid, is_inside in zip(s.loc[missing, "structure_id"], inside)])
    s["ground_z_m"] = ground
    s["ground_z_surveyed"] = ~need
    s["attach_z_m"] = ground + s["attach_height_m"].to_numpy(dtype=float)
    return s


def check_surveyed_ground(structures, terrain, source, inputs, warn) -> None:
    """Compare each surveyed ground_z_m with the terrain at the structure; refuse (or warn) beyond the tolerance.

    A ground elevation in feet typed as metres, or a slip of a digit, lifts or drops the whole span and can
    hide a real violation. Where the terrain has no value the surveyed one stands unchecked.

    Parameters
    ----------
    inputs : mapping
        ``[inputs]``: ``ground_z_tolerance_m`` (default 5 m) and ``ground_z_mismatch`` ("refuse" or "warn").
    """
    surveyed = structures["ground_z_surveyed"].to_numpy(dtype=bool)
    if not surveyed.any():
        return
    tolerance_m = float(inputs.get("ground_z_tolerance_m", 5.0))
    given = structures["ground_z_m"].to_numpy(dtype=float)[surveyed]
    terrain_z = terrain.sample_scattered(structures["x"].to_numpy()[surveyed],
                                         structures["y"].to_numpy()[surveyed], crs=structures.crs,
                                         threads=GROUND_READ_THREADS)
    with np.errstate(invalid="ignore"):
        far = np.abs(given - terrain_z) > tolerance_m
    ids = structures.loc[surveyed, "structure_id"].to_numpy()
    refuse = inputs.get("ground_z_mismatch", "refuse") == "refuse"
    messages = [f"structures file {source}: structure {sid}: field 'ground_z_m' = {z:.2f} m but the terrain "
                f"{terrain.path} is at {t:.2f} m there ({abs(z - t):.2f} m apart, more than [inputs] "
                f"ground_z_tolerance_m = {tolerance_m:g} m); check the value and its unit (feet read as metres?)"
                + ("; set [inputs] ground_z_mismatch = \"warn\" to use it anyway" if refuse
                   else "; the surveyed value is used ([inputs] ground_z_mismatch = \"warn\")")
                for sid, z, t in zip(ids[far], given[far], terrain_z[far])]
    if messages and refuse:
        raise DataError(messages)
    for message in messages:
        warn(message)
