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
from routesag.physics.catenary import mean_tension, support_tensions
from routesag.physics.conductor3d import swung_span
from routesag.physics.loads import LoadPerLength, bare_weight_n_m, conductor_load
from routesag.physics.section_solver import section_change_of_state_by_law, section_knee_point_temperature_c
from routesag.physics.state_change import change_of_state_by_law
from routesag.physics.two_material import creep_strain_for_final_tension, knee_point_temperature_c
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
        solved = SharedSolutions(section_tensions)
        ctx.notes["stringing_method"] = {w.name: w.stringing.method for _, s in data["sections"].iterrows()
                                         for w in project.line_wires(s["line_id"])}
        ctx.notes["conductor_model"] = {w.name: w.conductor.model for _, s in data["sections"].iterrows()
                                        for w in project.line_wires(s["line_id"])}
        ctx.notes["ruling_span_m"] = {str(s["section_id"]): round(float(s["ruling_span_m"]), 3)
                                      for _, s in data["sections"].iterrows()}
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
                             for row in solved(own, project, wire.conductor, stringing, spans)]
                except SolveError as exc:  # report every section, wire and case that fails, together
                    problems.extend(exc.problems)
        if problems:
            raise SolveError(problems)
        return {"tensions": pd.DataFrame(rows)}


class SharedSolutions:
    """Calls ``solve(section, project, conductor, stringing, spans)`` once per distinct set of inputs.

    The wires of a line often share conductor, stringing and span geometry exactly; they then get the
    same rows (copies) or the same error. Inputs are matched by exact value: the section's id and
    ruling span, the conductor and stringing (frozen dataclasses, compared field by field) and the
    bytes of the spans' ``span_m`` and ``dz_m`` (a NaN field never matches, so it is solved again).
    Inputs that cannot be hashed are solved every time.
    """

    def __init__(self, solve):
        self._solve = solve
        self._done = {}

    def __call__(self, section, project, conductor, stringing, spans):
        key = self._key(section, conductor, stringing, spans)
        if key is None:
            return self._solve(section, project, conductor, stringing, spans)
        if key not in self._done:
            try:
                self._done[key] = (self._solve(section, project, conductor, stringing, spans), None)
            except SolveError as exc:
                self._done[key] = (None, exc)
        rows, error = self._done[key]
        if error is not None:
            raise SolveError(list(error.problems))
        return [dict(row) for row in rows]

    @staticmethod
    def _key(section, conductor, stringing, spans):
        ruling_m = float(section["ruling_span_m"])
        spans_m, dz_m = _span_geometry(ruling_m, spans)
        key = (section["section_id"], ruling_m, conductor, stringing, spans_m.tobytes(), dz_m.tobytes())
        try:
            hash(key)
        except TypeError:
            return None
        return key


@dataclass(frozen=True)
class CaseState:
    """One load case solved on one tension section."""

    name: str
    load: LoadPerLength
    condition: str
    temperature_c: float            # conductor temperature of the case: given, or from its current [degC]
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
    carry = StateCarrier(stringing.method, ruling_m, spans_m, dz_m, float(bare_weight_n_m(conductor.mass_kg_m)),
                         stringing.temperature_c)

    def solve(h0_n, names=None):
        states, problems = {}, []
        laws = condition_laws(where, carry, h0_n, conductor, stringing)
        for case in cases:
            if names is not None and case.name not in names:
                continue
            try:
                states[case.name] = solve_case(where, case, h0_n, carry, conductor, stringing,
                                               project.ice_density_kg_m3, laws)
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
    knees = knee_points(carry, h0_n, condition_laws(where, carry, h0_n, conductor, stringing))
    return [dict(_row(section, case, state, h0_n, conductor, design), stringing_method=stringing.method,
                 conductor_model=conductor.model, **knees)
            for case, state in zip(cases, solve(h0_n).values())]


def _span_geometry(ruling_m, spans):
    if spans is None or len(spans) == 0:
        return np.array([ruling_m]), np.array([0.0])
    return spans["span_m"].to_numpy(dtype=float), spans["dz_m"].to_numpy(dtype=float)


@dataclass(frozen=True)
class StateCarrier:
    """Carries the stringing state (bare, at its temperature) of one section to another state by its method."""

    method: str
    ruling_m: float
    spans_m: np.ndarray
    dz_m: np.ndarray
    bare_n_m: float
    stringing_c: float

    def tension_n(self, h0_n, weight_n_m, temperature_c, law1, law2, blowout_rad=0.0) -> float:
        """Horizontal tension [N] in the state (load ``weight_n_m``, ``temperature_c``, law ``law2``)."""
        first = (h0_n, self.bare_n_m, self.stringing_c, weight_n_m, temperature_c, law1, law2)
        if self.method == "section":  # state 2 hangs in the plane swung by the wind, as the 3D wire does
            return section_change_of_state_by_law(self.spans_m, self.dz_m, *first,
                                                  loaded_spans=swung_span(self.spans_m, self.dz_m, blowout_rad))
        return change_of_state_by_law(self.ruling_m, *first)

    def bare_mean_tension_n(self, h0_n, temperature_c, law1, law2) -> float:
        """Mean tension of the bare wire at ``temperature_c`` [N]: the ruling span's, or span-weighted (section)."""
        h_n = self.tension_n(h0_n, self.bare_n_m, temperature_c, law1, law2)
        if self.method == "section":
            return float(np.average(mean_tension(self.spans_m, self.dz_m, h_n, self.bare_n_m), weights=self.spans_m))
        return float(mean_tension(self.ruling_m, 0.0, h_n, self.bare_n_m))


def condition_laws(where, carry: StateCarrier, h0_n, conductor, stringing) -> dict:
    """Stretch law of each condition for a two-material conductor (final only with its creep given); else {}.

    The aluminium's final creep strain is given, converted from the creep
    allowance (:meth:`TwoMaterialConductor.creep_strain_from_allowance`), or
    found from the known final tension at the stringing temperature.
    """
    members = conductor.two_material
    if members is None:
        return {}
    initial = conductor.law(stringing.temperature_c)
    strain = stringing.creep_strain
    if stringing.creep_allowance_c is not None:
        strain = members.creep_strain_from_allowance(stringing.creep_allowance_c)
    elif stringing.final_horizontal_tension_kn is not None:
        try:
            strain = creep_strain_for_final_tension(
                lambda eps: carry.tension_n(h0_n, carry.bare_n_m, carry.stringing_c, initial,
                                            conductor.law(stringing.temperature_c, eps, final=True)),
                stringing.final_horizontal_tension_kn * 1e3, h0_n)
        except SolveError as exc:
            raise SolveError(f"{where}: [stringing] final_horizontal_tension_kn: {exc}") from None
    laws = {"initial": initial}
    if strain is not None:
        laws["final"] = conductor.law(stringing.temperature_c, strain, final=True)
    return laws


def knee_points(carry: StateCarrier, h0_n, laws) -> dict:
    """Knee-point temperature of each condition [degC], bare wire (NaN for a linear conductor or outside the search)."""
    knees = {f"knee_point_{condition}_c": math.nan for condition in ("initial", "final")}
    for condition, law in laws.items():
        knees[f"knee_point_{condition}_c"] = _knee_point_c(carry, h0_n, laws["initial"], law)
    return knees


def _knee_point_c(carry: StateCarrier, h0_n, initial_law, law) -> float:
    """One root over the tension; where that form finds no sign change, the root over temperature of
    whole changes of state (slower, same knee)."""
    spans_m, dz_m = (carry.spans_m, carry.dz_m) if carry.method == "section" else ([carry.ruling_m], [0.0])
    try:
        return section_knee_point_temperature_c(spans_m, dz_m, h0_n, carry.bare_n_m, carry.stringing_c,
                                                carry.bare_n_m, initial_law, law)
    except SolveError:
        return knee_point_temperature_c(lambda t: carry.bare_mean_tension_n(h0_n, t, initial_law, law), law)


def solve_case(where, case, h0_n, carry: StateCarrier, conductor, stringing, ice_density_kg_m3,
               laws=None) -> CaseState:
    """Carry the stringing state (``h0_n`` at the stringing temperature, bare) to one load case.

    ``laws``: the two-material stretch law of each condition (:func:`condition_laws`); without them the
    linear composite, the final condition as the initial one at the temperature plus the creep allowance.
    """
    c = conductor
    load = conductor_load(c.mass_kg_m, c.diameter_m, case.ice_m, case.wind_pa, case.constant_n_m,
                          ice_density_kg_m3)
    try:
        temperature_c = case.conductor_temperature_c(c)
    except SolveError as exc:
        raise SolveError(f"{where}, load case {case.name!r}: conductor temperature from current_a = "
                         f"{case.current_a:g} A cannot be found ({exc})") from None
    if laws:
        if case.condition not in laws:
            raise SolveError(f"{where}, load case {case.name!r}: the final condition needs the aluminium's creep "
                             f"([stringing] creep_strain, creep_allowance_c or final_horizontal_tension_kn)")
        state_t, law1, law2 = temperature_c, laws["initial"], laws[case.condition]
    else:
        state_t = stringing.state_temperature_c(temperature_c, case.condition)
        law1 = law2 = c.law(stringing.temperature_c)
    try:
        h = carry.tension_n(h0_n, load.resultant_n_m, state_t, law1, law2, load.blowout_rad)
    except SolveError as exc:
        raise SolveError(f"{where}, load case {case.name!r}: change of state cannot be solved ({exc})") from None
    plane_span, plane_dz = swung_span(carry.spans_m, carry.dz_m, load.blowout_rad)
    at_a, at_b = support_tensions(plane_span, plane_dz, h, load.resultant_n_m)
    return CaseState(case.name, load, case.condition, temperature_c, state_t, h,
                     float(np.max(np.maximum(at_a, at_b))))


def _row(section, case, state: CaseState, h0_n, conductor, design) -> dict:
    load, rts = state.load, conductor.rated_strength_n
    return {
        "section_id": section["section_id"], "load_case": case.name,
        "temperature_c": state.temperature_c, "current_a": math.nan if case.current_a is None else case.current_a,
        "ice_mm": case.ice_m * 1e3, "wind_pa": case.wind_pa,
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
