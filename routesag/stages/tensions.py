"""Stage: horizontal tension of every tension section in every load case.

The stringing state (initial condition, bare wire) is carried to each load
case by the change-of-state equation on the section's ruling span; all spans
of a section share it. A load case in the final condition is the initial
state at its temperature plus the creep allowance (creep as an equivalent
temperature increase). With ``[stringing] from_limits = true`` the stringing
tension of each section is the largest that meets every tension limit.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from routesag.errors import ProjectError, SolveError
from routesag.physics.catenary import support_tensions
from routesag.physics.conductor3d import swung_span
from routesag.physics.loads import LoadPerLength, bare_weight_n_m, conductor_load
from routesag.physics.section_solver import section_change_of_state
from routesag.physics.state_change import change_of_state
from routesag.pipeline import Stage
from routesag.stages.as_found import as_found_columns, reference_stringing
from routesag.stages.limits import design_stringing_tension

#: Slackest stringing tried by the design search: catenary constant = ruling span (sag about 13 % of span).
DESIGN_LOWEST_CATENARY_PER_SPAN = 1.0


class SolveTensions(Stage):
    name = "solve_tensions"
    requires = ("project", "sections", "wire_spans", "as_found_states")
    provides = ("tensions",)
    description = ("change of state from the stringing state to every load case (initial or final), per "
                   "tension section and wire; stringing tension from the tension limits on request")

    def run(self, data, ctx):
        project = data["project"]
        by_wire = dict(tuple(data["wire_spans"].groupby(["section_id", "wire"], sort=False)))
        for wire in {w.name: w for _, s in data["sections"].iterrows()
                     for w in project.line_wires(s["line_id"])}.values():
            if not wire.stringing.from_limits:
                # a bad stringing tension is one problem, not one per section
                stringing_tension_n(project, wire.conductor, wire.stringing)
        rows, problems = [], []
        ctx.notes["stringing_method"] = {w.name: w.stringing.method for _, s in data["sections"].iterrows()
                                         for w in project.line_wires(s["line_id"])}
        for _, section in data["sections"].iterrows():
            for wire in project.line_wires(section["line_id"]):
                spans = by_wire[(section["section_id"], wire.name)]
                own = section.copy()
                own["ruling_span_m"] = spans["ruling_span_m"].iloc[0]  # the wire's own spans
                # the state the load cases start from: the design stringing or the section's as-found state
                stringing, source, state = reference_stringing(wire.stringing, data["as_found_states"],
                                                               section["section_id"], wire.name)
                if source != wire.stringing.source:
                    ctx.warn(f"tension section {section['section_id']}, wire {wire.name}: no good wire fit; "
                             "load cases start from the design stringing")
                try:
                    rows += [dict(row, wire=wire.name, stringing_temperature_c=stringing.temperature_c,
                                  **as_found_columns(source, state))
                             for row in section_tensions(own, project, wire.conductor, stringing, spans)]
                except SolveError as exc:  # report every section, wire and case that fails, together
                    problems.extend(exc.problems)
        if problems:
            raise SolveError(problems)
        return {"tensions": pd.DataFrame(rows)}


@dataclass(frozen=True)
class CaseState:
    """One load case solved on one tension section."""

    name: str
    load: LoadPerLength
    condition: str
    state_temperature_c: float      # temperature the initial-state equation is solved at [degC]
    horizontal_tension_n: float
    max_support_tension_n: float    # largest support tension over the section's spans [N]

    @property
    def catenary_m(self) -> float:
        return self.horizontal_tension_n / self.load.resultant_n_m


def stringing_tension_n(project, conductor=None, stringing=None) -> float:
    """Horizontal tension of the stringing state [N], checked against the rated strength."""
    conductor = conductor or project.conductor
    stringing = stringing or project.stringing
    tension_n = stringing.horizontal_tension_n(conductor, bare_weight_n_m(conductor.mass_kg_m))
    if tension_n >= conductor.rated_strength_n:
        raise ProjectError(f"project file {project.path}: [stringing] tension {tension_n / 1e3:.1f} kN is not "
                         f"below the rated strength {conductor.rated_strength_n / 1e3:.1f} kN")
    return tension_n


def section_tensions(section, project, conductor=None, stringing=None, spans=None) -> list[dict]:
    """Rows of (section, load case) with the solved horizontal tension and loads.

    Parameters
    ----------
    section : pandas.Series
        One row of the sections table (section_id, ruling_span_m).
    project : routesag.project.Project
    conductor, stringing : optional
        The wire's own conductor and stringing; default the project's.
    spans : pandas.DataFrame, optional
        The section's spans (span_m, dz_m) for support tensions; without them
        the ruling span, level, stands in.
    """
    conductor = conductor or project.conductor
    stringing = stringing or project.stringing
    ruling_m = float(section["ruling_span_m"])
    spans_m, dz_m = _span_geometry(ruling_m, spans)
    where = f"tension section {section['section_id']}"
    cases = project.load_cases

    def solve(h0_n, names=None):
        states, problems = {}, []
        for case in cases:
            if names is not None and case.name not in names:
                continue
            try:
                states[case.name] = solve_case(where, case, h0_n, ruling_m, spans_m, dz_m, conductor, stringing,
                                               project.ice_density_kg_m3)
            except SolveError as exc:  # every failing case of the section, together
                problems.extend(exc.problems)
        if problems:
            raise SolveError(problems)
        return states

    design = None
    if stringing.from_limits:
        lowest_n = DESIGN_LOWEST_CATENARY_PER_SPAN * ruling_m * float(bare_weight_n_m(conductor.mass_kg_m))
        design = design_stringing_tension(solve, project.limits, conductor.rated_strength_n, lowest_n,
                                          conductor.rated_strength_n, where)
        h0_n = design.tension_n
    else:
        h0_n = stringing_tension_n(project, conductor, stringing)
    return [_row(section, case, state, h0_n, conductor, design)
            for case, state in zip(cases, solve(h0_n).values())]


def _span_geometry(ruling_m, spans):
    if spans is None or len(spans) == 0:
        return np.array([ruling_m]), np.array([0.0])
    return spans["span_m"].to_numpy(dtype=float), spans["dz_m"].to_numpy(dtype=float)


def solve_case(where, case, h0_n, ruling_m, spans_m, dz_m, conductor, stringing, ice_density_kg_m3) -> CaseState:
    """Carry the stringing state (``h0_n`` at the stringing temperature, bare) to one load case."""
    c = conductor
    load = conductor_load(c.mass_kg_m, c.diameter_m, case.ice_m, case.wind_pa, case.constant_n_m,
                          ice_density_kg_m3)
    state_t = stringing.state_temperature_c(case.temperature_c, case.condition)
    try:
        states = (h0_n, float(bare_weight_n_m(c.mass_kg_m)), stringing.temperature_c, load.resultant_n_m, state_t,
                  c.modulus_pa, c.area_m2, c.expansion_per_c)
        if stringing.method == "section":  # state 2 hangs in the plane swung by the wind, as the 3D wire does
            h = section_change_of_state(spans_m, dz_m, *states,
                                        loaded_spans=swung_span(spans_m, dz_m, load.blowout_rad))
        else:
            h = change_of_state(ruling_m, *states)
    except SolveError as exc:
        raise SolveError(f"{where}, load case {case.name!r}: change of state cannot be solved ({exc})") from None
    plane_span, plane_dz = swung_span(spans_m, dz_m, load.blowout_rad)
    at_a, at_b = support_tensions(plane_span, plane_dz, h, load.resultant_n_m)
    return CaseState(case.name, load, case.condition, state_t, h, float(np.max(np.maximum(at_a, at_b))))


def _row(section, case, state: CaseState, h0_n, conductor, design) -> dict:
    load, rts = state.load, conductor.rated_strength_n
    return {
        "section_id": section["section_id"], "load_case": case.name,
        "temperature_c": case.temperature_c, "ice_mm": case.ice_m * 1e3, "wind_pa": case.wind_pa,
        "condition": state.condition, "state_temperature_c": state.state_temperature_c,
        "vertical_n_m": load.vertical_n_m, "wind_n_m": load.wind_n_m,
        "resultant_n_m": load.resultant_n_m, "blowout_deg": math.degrees(load.blowout_rad),
        "blowout_rad": load.blowout_rad, "side": case.side_sign,
        "horizontal_tension_n": state.horizontal_tension_n, "catenary_m": state.catenary_m,
        "max_support_tension_n": state.max_support_tension_n, "rated_strength_n": rts,
        "tension_percent_rts": 100.0 * state.horizontal_tension_n / rts,
        "stringing_tension_n": h0_n,
        "design_tension_n": design.tension_n if design else math.nan,
        "governing_case": design.governing_case if design else None,
        "governing_limit": design.governing_limit if design else None,
    }
