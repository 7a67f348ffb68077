"""Stage: loads of every wire on every structure, uplift, and the swing of suspension strings.

One pass: weight spans, loads and swing angles come from the spans hung
between the wires' rest attachments (strings hanging plumb). The swung
attachment points this stage gives are then used to draw the wires; the
loads are not recomputed from the swung geometry (the swing moves a clamp by
a few decimetres on spans of hundreds of metres).
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from routesag.physics.conductor3d import span_geometry
from routesag.physics.supports import (insulator_swing_rad, line_tension_load_n, swing_displacement_m,
                                       weight_span_m, wind_span_m)
from routesag.pipeline import Stage

KEYS = ["line_id", "structure_id", "wire", "load_case"]
SIDES = ("back", "ahead")
COLUMNS = ["structure_id", "line_id", "wire", "load_case", "kind", "weight_span_m", "wind_span_m", "vertical_n",
           "transverse_n", "longitudinal_n", "uplift", "deviation_deg", "insulator_m", "swing_deg", "x", "y", "z"]


class ComputeStructureLoads(Stage):
    name = "compute_structure_loads"
    requires = ("project", "attachments", "wire_spans", "tensions")
    provides = ("structure_loads",)
    description = ("weight/wind spans, vertical, transverse and longitudinal loads, uplift and suspension "
                   "string swing per structure, wire and load case")

    def run(self, data, ctx):
        project = data["project"]
        ctx.notes["structure_loads"] = ("one pass: spans, loads and string swing from the rest geometry "
                                        "(strings plumb); the wires are then drawn from the swung clamps")
        loads = structure_loads(data["attachments"], data["wire_spans"], data["tensions"],
                                project.insulator_weight_n, project.insulator_wind_area_m2)
        return {"structure_loads": loads}


def span_ends(wire_spans: pd.DataFrame, tensions: pd.DataFrame) -> pd.DataFrame:
    """Per span, wire and load case: low point, vertical reactions, tension and plan direction.

    Vertical reactions are world-z support forces on the wire from the exact
    catenary hung in the plane swung by the blowout angle.
    """
    solved = tensions[["section_id", "wire", "load_case", "horizontal_tension_n", "resultant_n_m",
                       "blowout_rad"]]
    rows = wire_spans.merge(solved, on=["section_id", "wire"])
    geometry = span_geometry(rows["span_m"].to_numpy(), rows["dz_m"].to_numpy(),
                             rows["horizontal_tension_n"].to_numpy(), rows["resultant_n_m"].to_numpy(),
                             rows["blowout_rad"].to_numpy())
    return rows.assign(
        low_point_m=np.atleast_1d(geometry.low_point_m),
        reaction_from_n=np.atleast_1d(geometry.vertical_reaction_a_n),
        reaction_to_n=np.atleast_1d(geometry.vertical_reaction_b_n),
        dir_x=(rows["x1"] - rows["x0"]) / rows["span_m"], dir_y=(rows["y1"] - rows["y0"]) / rows["span_m"])


def _side(ends: pd.DataFrame, side: str) -> pd.DataFrame:
    """What each span gives the structure at one end: ``back`` (its to-end) or ``ahead`` (its from-end)."""
    structure, reaction = ("to_id", "reaction_to_n") if side == "back" else ("from_id", "reaction_from_n")
    values = ["span_m", "low_point_m", "vertical_n", "horizontal_tension_n", "dir_x", "dir_y"]
    renamed = ends.rename(columns={structure: "structure_id", reaction: "vertical_n"})
    return renamed[KEYS + values].rename(columns={v: f"{side}_{v}" for v in values})


def structure_loads(attachments, wire_spans, tensions, string_weight_n=0.0,
                    string_wind_area_m2=0.0) -> pd.DataFrame:
    """Loads of each wire on each structure in each load case, with uplift and the swung clamp.

    Parameters
    ----------
    attachments : DataFrame
        Rest attachments per structure and wire (see
        :func:`routesag.stages.spans.wire_attachments`).
    wire_spans : DataFrame
        Spans per wire between rest attachments.
    tensions : DataFrame
        Solved tensions and loads per section, wire and load case.
    string_weight_n : float
        Weight of one suspension string [N].
    string_wind_area_m2 : float
        Area of one string facing the wind [m2]; its wind load is the load
        case's wind pressure times this area (drag coefficient 1).

    Returns
    -------
    DataFrame
        Columns :data:`COLUMNS`: weight_span_m, wind_span_m, vertical_n
        (downward, wire plus string weight), transverse_n (to the right:
        wind on the wind span plus the line-angle component),
        longitudinal_n (along increasing seq: the difference of the
        horizontal tensions), uplift (net vertical load up at a suspension
        structure), swing_deg (string swing, positive to the right) and
        x, y, z (the wire clamp, swung) [m].
    """
    case_loads = tensions[["wire", "load_case", "vertical_n_m", "wind_n_m", "wind_pa", "side"]].drop_duplicates(
        ["wire", "load_case"])
    frame = attachments.merge(case_loads, on="wire")
    ends = span_ends(wire_spans, tensions)
    for side in SIDES:
        frame = frame.merge(_side(ends, side), on=KEYS, how="left")
    side_columns = [c for c in frame.columns if c.startswith(SIDES)]
    frame[side_columns] = frame[side_columns].fillna(0.0)
    return _loads(frame, string_weight_n, string_wind_area_m2)


def _loads(f: pd.DataFrame, string_weight_n: float, string_wind_area_m2: float) -> pd.DataFrame:
    has_string = f["insulator_m"].to_numpy() > 0
    weight_span = weight_span_m(f["back_span_m"], f["back_low_point_m"], f["ahead_low_point_m"])
    wind_span = wind_span_m(f["back_span_m"], f["ahead_span_m"])
    axes = {k: f[[f"{k}_x", f"{k}_y"]].to_numpy() for k in ("along", "across")}
    longitudinal, angle_load = line_tension_load_n(
        f["back_horizontal_tension_n"].to_numpy(), f[["back_dir_x", "back_dir_y"]].to_numpy(),
        f["ahead_horizontal_tension_n"].to_numpy(), f[["ahead_dir_x", "ahead_dir_y"]].to_numpy(),
        axes["along"], axes["across"])
    side = f["side"].to_numpy(dtype=float)
    transverse = angle_load + side * f["wind_n_m"].to_numpy() * wind_span
    string_wind_n = side * f["wind_pa"].to_numpy() * string_wind_area_m2
    swing = np.where(has_string, insulator_swing_rad(transverse, f["vertical_n_m"].to_numpy() * weight_span,
                                                     string_wind_n, string_weight_n), 0.0)
    sideways, up = swing_displacement_m(f["insulator_m"].to_numpy(), swing)
    vertical = (f["back_vertical_n"] + f["ahead_vertical_n"]).to_numpy() + np.where(has_string,
                                                                                   string_weight_n, 0.0)
    out = f.assign(
        weight_span_m=weight_span, wind_span_m=wind_span, vertical_n=vertical, transverse_n=transverse,
        longitudinal_n=longitudinal, uplift=(f["kind"].to_numpy() == "suspension") & (vertical < 0),
        swing_deg=np.degrees(swing), x=f["x"] + sideways * axes["across"][:, 0],
        y=f["y"] + sideways * axes["across"][:, 1], z=f["z"] + up)
    return out[COLUMNS].reset_index(drop=True)
