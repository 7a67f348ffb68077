"""Stage: loads of every wire on every structure, uplift, and the swing of suspension strings.

One pass: weight spans, loads and swing angles come from the spans hung
between the wires' rest attachments (strings hanging plumb). The swung
attachment points this stage gives are then used to draw the wires; the
loads are not recomputed from the swung geometry. A swing can move a clamp
by most of the string length (at a line angle even without wind), which
changes spans of hundreds of metres little but is not fed back.

Loads on the structure are physical: the wire and ice weight and the wind on
the iced wire. The design constant K (NESC Rule 250B) is part of the resultant
that sets tension and sag, so it reaches the structure only through the
tensions (longitudinal and line-angle loads), never as weight.

A suspension string whose net vertical load at the clamp is zero or points up
(uplift) has no hanging position: its clamp stays plumb at rest (the lowest
position, conservative for ground clearance), swing_deg is NaN, uplift is set
and the run warns.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from routesag.physics.conductor3d import span_geometry
from routesag.physics.supports import (insulator_swing_rad, line_tension_load_n, swing_displacement_m,
                                       weight_span_m, wind_span_m)
from routesag.pipeline import Stage

KEYS = ["line_id", "structure_id", "wire", "load_case"]
# A transverse load below this fraction of the wire's tensions is rounding (a straight line's angle load).
ROUNDING_FRACTION = 1e-9
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
        for message in lifted_string_warnings(loads) + wide_swing_warnings(loads, project.insulator_max_swing_deg):
            ctx.warn(message)
        return {"structure_loads": loads}


def lifted_string_warnings(loads: pd.DataFrame) -> list[str]:
    """One warning per structure and wire whose suspension string is in uplift, naming the load cases."""
    lifted = loads[(loads["insulator_m"] > 0) & loads["swing_deg"].isna()]
    messages = []
    for (structure, wire), rows in lifted.groupby(["structure_id", "wire"], sort=False):
        cases = ", ".join(rows["load_case"].astype(str))
        messages.append(f"structure {structure} wire {wire}: suspension string in uplift (the wire pulls its clamp "
                        f"up) in load case(s) {cases}; the clamp is kept plumb at rest, its lowest position, and "
                        "swing_deg is empty")
    return messages


def wide_swing_warnings(loads: pd.DataFrame, limit_deg: float) -> list[str]:
    """One warning per structure, wire and load case whose suspension string swings beyond ``limit_deg``.

    A wide swing (a large line angle on a suspension structure, strong wind on a short weight span) brings
    the wire towards the structure and makes the one-pass swing estimate coarse.
    """
    wide = loads[loads["swing_deg"].abs() > limit_deg]
    return [f"structure {row.structure_id} wire {row.wire}, load case {row.load_case}: suspension string swings "
            f"{abs(row.swing_deg):.1f} deg from plumb, more than [insulators] max_swing_deg = {limit_deg:g} deg"
            for row in wide.itertuples()]


def span_ends(wire_spans: pd.DataFrame, tensions: pd.DataFrame) -> pd.DataFrame:
    """Per span, wire and load case: low point, vertical reactions, tension and plan direction.

    Vertical reactions are world-z support forces on the wire from the exact
    catenary hung in the plane swung by the blowout angle: the shape from the
    resultant with K, the load carried from the physical one (wire, ice, wind).
    """
    solved = tensions[["section_id", "wire", "load_case", "horizontal_tension_n", "resultant_n_m",
                       "blowout_rad", "vertical_n_m", "wind_n_m"]]
    rows = wire_spans.merge(solved, on=["section_id", "wire"])
    geometry = span_geometry(rows["span_m"].to_numpy(), rows["dz_m"].to_numpy(),
                             rows["horizontal_tension_n"].to_numpy(), rows["resultant_n_m"].to_numpy(),
                             rows["blowout_rad"].to_numpy(),
                             physical_load_n_m=np.hypot(rows["vertical_n_m"], rows["wind_n_m"]).to_numpy())
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
        (downward, wire and ice plus string weight, no K), transverse_n (to
        the right: wind on the iced wire over the wind span plus the
        line-angle component), longitudinal_n (along increasing seq: the
        difference of the horizontal tensions), uplift (net vertical load up
        at a suspension structure, or its string lifted), swing_deg (string
        swing, positive to the right; NaN for a string in uplift) and x, y, z
        (the wire clamp, swung; plumb for a string in uplift) [m].

    References
    ----------
    .. [1] ASCE Manual of Practice No. 74 (weight and wind spans, structure
       loads); NESC Rule 250B (K added to the resultant for tension only).
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
    rounding_n = ROUNDING_FRACTION * (f["back_horizontal_tension_n"] + f["ahead_horizontal_tension_n"]).to_numpy()
    swing = np.where(has_string, insulator_swing_rad(transverse, f["vertical_n_m"].to_numpy() * weight_span,
                                                     string_wind_n, string_weight_n, rounding_n), 0.0)
    lifted = np.isnan(swing)
    sideways, up = swing_displacement_m(f["insulator_m"].to_numpy(), np.where(lifted, 0.0, swing))
    vertical = (f["back_vertical_n"] + f["ahead_vertical_n"]).to_numpy() + np.where(has_string,
                                                                                   string_weight_n, 0.0)
    out = f.assign(
        weight_span_m=weight_span, wind_span_m=wind_span, vertical_n=vertical, transverse_n=transverse,
        longitudinal_n=longitudinal, uplift=(f["kind"].to_numpy() == "suspension") & ((vertical < 0) | lifted),
        swing_deg=np.degrees(swing), x=f["x"] + sideways * axes["across"][:, 0],
        y=f["y"] + sideways * axes["across"][:, 1], z=f["z"] + up)
    return out[COLUMNS].reset_index(drop=True)
