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
from routesag.physics.section_solver import (
    section_change_of_state_by_law, section_changes_of_state_by_law, section_knee_point_temperature_c,
    section_knee_points_c,
)
from routesag.physics.state_change import change_of_state_by_law, changes_of_state_by_law
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
        ctx.notes["stringing_method"] = {w.name: w.stringing.method for _, s in data["sections"].iterrows()
                                         for w in project.line_wires(s["line_id"])}
        ctx.notes["conductor_model"] = {w.name: w.conductor.model for _, s in data["sections"].iterrows()
                                        for w in project.line_wires(s["line_id"])}
        ctx.notes["ruling_span_m"] = {str(s["section_id"]): round(float(s["ruling_span_m"]), 3)
                                      for _, s in data["sections"].iterrows()}
        planned = []  # (plan or its error, wire name, stringing, tension source, as-found state), in row order
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
                    plan = SectionPlan.make(own, project, wire.conductor, stringing, spans)
                except SolveError as exc:
                    plan = exc
                planned.append((plan, wire.name, stringing, source, state))
        solve_plans([entry[0] for entry in planned if isinstance(entry[0], SectionPlan)])
        rows, problems = [], []
        for plan, name, stringing, source, state in planned:
            try:
                if isinstance(plan, SolveError):
                    raise plan
                rows += [dict(row, wire=name, stringing_temperature_c=stringing.temperature_c,
                              **as_found_columns(source, state)) for row in plan.rows()]
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
    plan = SectionPlan.make(section, project, conductor, stringing, spans)
    solve_plans([plan])
    return plan.rows()


class SectionPlan:
    """One wire's tension section made ready to solve: stringing tension, stretch laws and load cases.

    :func:`solve_plans` solves the changes of state and knee points of many plans together (one
    vectorised solve per kind of problem); :meth:`rows` then gives the section's rows, or raises the
    problems of its failing load cases together.
    """

    def __init__(self, section, project, conductor, stringing, carry, h0_n, design, laws, cases):
        self.section, self.project, self.conductor, self.stringing = section, project, conductor, stringing
        self.carry, self.h0_n, self.design, self.laws, self.cases = carry, h0_n, design, laws, cases
        self.where = f"tension section {section['section_id']}"
        self.knees: dict | SolveError | None = None
        self.states: list | None = None  # tension [N] or SolveError of each case's change of state

    @classmethod
    def make(cls, section, project, conductor=None, stringing=None, spans=None) -> "SectionPlan":
        """The plan; the design stringing tension searched now when ``from_limits``.

        Raises
        ------
        SolveError
            No stringing tension meets the limits, or the final condition's creep cannot be found.
        ProjectError
            A stringing tension not below the rated strength.
        """
        conductor = conductor or project.conductor
        stringing = stringing or project.stringing
        ruling_m = float(section["ruling_span_m"])
        spans_m, dz_m = _span_geometry(ruling_m, spans)
        where = f"tension section {section['section_id']}"
        carry = StateCarrier(stringing.method, ruling_m, spans_m, dz_m,
                             float(bare_weight_n_m(conductor.mass_kg_m)), stringing.temperature_c)

        def prepare(h0_n, names=None):
            laws = condition_laws(where, carry, h0_n, conductor, stringing)
            return laws, [prepare_case(where, case, h0_n, carry, conductor, stringing, project.ice_density_kg_m3,
                                       laws)
                          for case in project.load_cases if names is None or case.name in names]

        def solve(h0_n, names=None):  # the design search: one tension tried at a time
            _, cases = prepare(h0_n, names)
            return finish_cases(where, cases, carry_states([c.request for c in cases if isinstance(c, CasePlan)]))

        design = None
        if stringing.from_limits:
            lowest_n = DESIGN_LOWEST_CATENARY_PER_SPAN * ruling_m * float(bare_weight_n_m(conductor.mass_kg_m))
            design = design_stringing_tension(solve, project.limits, conductor.rated_strength_n, lowest_n,
                                              conductor.rated_strength_n, where)
            h0_n = design.tension_n
        else:
            h0_n = stringing_tension_n(project, conductor, stringing)
        laws, cases = prepare(h0_n)
        return cls(section, project, conductor, stringing, carry, h0_n, design, laws, cases)

    def rows(self) -> list[dict]:
        """The rows of every load case (after :func:`solve_plans`).

        Raises
        ------
        SolveError
            A knee point that cannot be found, or every failing load case together.
        """
        if isinstance(self.knees, SolveError):
            raise self.knees
        states = finish_cases(self.where, self.cases, self.states)
        return [dict(_row(self.section, case, state, self.h0_n, self.conductor, self.design),
                     stringing_method=self.stringing.method, conductor_model=self.conductor.model, **self.knees)
                for case, state in zip(self.project.load_cases, states.values())]


def solve_plans(plans) -> None:
    """Solve the load cases and knee points of every plan, together."""
    requests = [c.request for plan in plans for c in plan.cases if isinstance(c, CasePlan)]
    results = iter(carry_states(requests))
    for plan in plans:
        plan.states = [next(results) for c in plan.cases if isinstance(c, CasePlan)]
    knees = iter(knee_points_of([(plan.carry, plan.h0_n, plan.laws) for plan in plans]))
    for plan in plans:
        plan.knees = next(knees)


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
    return knee_points_of([(carry, h0_n, laws)])[0]


def knee_points_of(sections) -> list:
    """:func:`knee_points` of many ``(carry, h0_n, laws)`` at once: a dict each, or the SolveError that stopped it.

    Sections of equally many spans and equal laws share one vectorised solve
    (:func:`~routesag.physics.section_solver.section_knee_points_c`); the rest, and any row it
    cannot bracket, take :func:`_knee_point_c`.
    """
    knees = [{f"knee_point_{condition}_c": math.nan for condition in ("initial", "final")} for _ in sections]
    groups = {}
    for i, (carry, h0_n, laws) in enumerate(sections):
        for condition, law in laws.items():
            spans_m, dz_m = _knee_spans(carry)
            key = (len(spans_m), laws["initial"], law)
            try:
                groups.setdefault(key if hasattr(law, "knee_temperature_c") else (i, condition), []).append(
                    (i, condition))
            except TypeError:  # laws that cannot be compared by value: on their own
                groups[(i, condition)] = [(i, condition)]
    for members in groups.values():
        carries = [sections[i][0] for i, _ in members]
        initial = sections[members[0][0]][2]["initial"]
        law = sections[members[0][0]][2][members[0][1]]
        found, solved = np.full(len(members), np.nan), np.zeros(len(members), dtype=bool)
        if hasattr(law, "knee_temperature_c"):
            geometry = [_knee_spans(carry) for carry in carries]
            found, solved = section_knee_points_c(
                np.array([g[0] for g in geometry]), np.array([g[1] for g in geometry]),
                [sections[i][1] for i, _ in members], [carry.bare_n_m for carry in carries],
                [carry.stringing_c for carry in carries], [carry.bare_n_m for carry in carries], initial, law)
        for (i, condition), knee_c, ok in zip(members, found, solved):
            if isinstance(knees[i], SolveError):
                continue
            carry, h0_n, laws = sections[i]
            try:
                knees[i][f"knee_point_{condition}_c"] = float(knee_c) if ok else _knee_point_c(
                    carry, h0_n, laws["initial"], laws[condition])
            except SolveError as exc:
                knees[i] = exc
    return knees


def _knee_spans(carry: StateCarrier):
    """Spans the knee is found on: the section's, or its ruling span, level."""
    if carry.method == "section":
        return carry.spans_m, carry.dz_m
    return np.array([carry.ruling_m]), np.array([0.0])


def _knee_point_c(carry: StateCarrier, h0_n, initial_law, law) -> float:
    """One root over the tension; where that form finds no sign change, the root over temperature of
    whole changes of state (slower, same knee)."""
    spans_m, dz_m = _knee_spans(carry)
    try:
        return section_knee_point_temperature_c(spans_m, dz_m, h0_n, carry.bare_n_m, carry.stringing_c,
                                                carry.bare_n_m, initial_law, law)
    except SolveError:
        return knee_point_temperature_c(lambda t: carry.bare_mean_tension_n(h0_n, t, initial_law, law), law)


@dataclass(frozen=True)
class StateRequest:
    """One change of state asked of a carrier: from its stringing state (``h0_n``) to a load and temperature."""

    carry: StateCarrier
    h0_n: float
    weight_n_m: float
    temperature_c: float
    law1: object
    law2: object
    blowout_rad: float


@dataclass(frozen=True)
class CasePlan:
    """One load case of a section made ready: its load, conductor temperature and change of state."""

    case: object
    load: LoadPerLength
    temperature_c: float
    request: StateRequest


def prepare_case(where, case, h0_n, carry: StateCarrier, conductor, stringing, ice_density_kg_m3, laws=None):
    """The :class:`CasePlan` of one load case, or the SolveError that stops it.

    ``laws``: the two-material stretch law of each condition (:func:`condition_laws`); without them the
    linear composite, the final condition as the initial one at the temperature plus the creep allowance.
    """
    c = conductor
    load = conductor_load(c.mass_kg_m, c.diameter_m, case.ice_m, case.wind_pa, case.constant_n_m,
                          ice_density_kg_m3)
    try:
        temperature_c = case.conductor_temperature_c(c)
    except SolveError as exc:
        return SolveError(f"{where}, load case {case.name!r}: conductor temperature from current_a = "
                          f"{case.current_a:g} A cannot be found ({exc})")
    if laws:
        if case.condition not in laws:
            return SolveError(f"{where}, load case {case.name!r}: the final condition needs the aluminium's "
                              f"creep ([stringing] creep_strain, creep_allowance_c or final_horizontal_tension_kn)")
        state_t, law1, law2 = temperature_c, laws["initial"], laws[case.condition]
    else:
        state_t = stringing.state_temperature_c(temperature_c, case.condition)
        law1 = law2 = c.law(stringing.temperature_c)
    return CasePlan(case, load, temperature_c,
                    StateRequest(carry, h0_n, load.resultant_n_m, state_t, law1, law2, load.blowout_rad))


def finish_cases(where, cases, results) -> dict:
    """``{case name: CaseState}`` from the prepared cases and their solved tensions (or errors), in order.

    Raises
    ------
    SolveError
        Every failing case of the section, together.
    """
    states, problems, results = {}, [], iter(results)
    for plan in cases:
        if isinstance(plan, SolveError):
            problems.extend(plan.problems)
            continue
        h = next(results)
        if isinstance(h, SolveError):
            problems.append(f"{where}, load case {plan.case.name!r}: change of state cannot be solved ({h})")
            continue
        carry, load = plan.request.carry, plan.load
        plane_span, plane_dz = swung_span(carry.spans_m, carry.dz_m, load.blowout_rad)
        at_a, at_b = support_tensions(plane_span, plane_dz, h, load.resultant_n_m)
        states[plan.case.name] = CaseState(plan.case.name, load, plan.case.condition, plan.temperature_c,
                                           plan.request.temperature_c, h, float(np.max(np.maximum(at_a, at_b))))
    if problems:
        raise SolveError(problems)
    return states


def solve_case(where, case, h0_n, carry: StateCarrier, conductor, stringing, ice_density_kg_m3,
               laws=None) -> CaseState:
    """Carry the stringing state (``h0_n`` at the stringing temperature, bare) to one load case.

    Raises
    ------
    SolveError
        The case cannot be solved.
    """
    plan = prepare_case(where, case, h0_n, carry, conductor, stringing, ice_density_kg_m3, laws)
    results = carry_states([plan.request]) if isinstance(plan, CasePlan) else []
    return finish_cases(where, [plan], results)[case.name]


def carry_states(requests) -> list:
    """The tension [N] of each request, or the SolveError its change of state raised.

    Requests of one method with equal laws (and, by section, equally many spans) are solved in one
    vectorised call; if that call fails, each of its requests is solved alone, for its own answer or error.
    """
    out = [None] * len(requests)
    groups = {}
    for i, r in enumerate(requests):
        key = (r.carry.method, len(r.carry.spans_m) if r.carry.method == "section" else 0, r.law1, r.law2)
        try:
            groups.setdefault(key, []).append(i)
        except TypeError:  # laws that cannot be compared by value: on their own
            groups[("alone", i)] = [i]
    for members in groups.values():
        chosen = [requests[i] for i in members]
        try:
            tensions = _carry_together(chosen)
        except SolveError:
            tensions = [_carry_alone(r) for r in chosen]
        for i, h in zip(members, tensions):
            out[i] = h if isinstance(h, SolveError) else float(h)
    return out


def _carry_together(requests):
    """One vectorised change of state for requests of one method, laws and span count."""
    first = requests[0]

    def each(name, source=None):
        return np.array([getattr(source(r) if source else r, name) for r in requests], dtype=float)

    h0, carried = each("h0_n"), lambda r: r.carry
    bare, start_c = each("bare_n_m", carried), each("stringing_c", carried)
    weight, temperature, blowout = each("weight_n_m"), each("temperature_c"), each("blowout_rad")
    if first.carry.method != "section":
        return changes_of_state_by_law(each("ruling_m", carried), h0, bare, start_c, weight, temperature,
                                       first.law1, first.law2)
    spans = np.array([r.carry.spans_m for r in requests])
    dz = np.array([r.carry.dz_m for r in requests])
    return section_changes_of_state_by_law(spans, dz, h0, bare, start_c, weight, temperature, first.law1,
                                           first.law2, loaded_spans=swung_span(spans, dz, blowout[:, None]))


def _carry_alone(r: StateRequest):
    try:
        return r.carry.tension_n(r.h0_n, r.weight_n_m, r.temperature_c, r.law1, r.law2, r.blowout_rad)
    except SolveError as exc:
        return exc


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
