"""Stage: horizontal tension of every tension section in every load case.

The stringing state is carried to each load case by the change-of-state
equation on the section's ruling span; all spans of a section share it.
"""
from __future__ import annotations

import pandas as pd

from routesag.errors import ProjectError, SolveError
from routesag.physics.loads import bare_weight_n_m, conductor_load
from routesag.physics.state_change import change_of_state
from routesag.pipeline import Stage


class SolveTensions(Stage):
    name = "solve_tensions"
    requires = ("project", "sections")
    provides = ("tensions",)
    description = "change of state from the stringing state to every load case, per tension section"

    def run(self, data, ctx):
        project = data["project"]
        stringing_tension_n(project)  # a bad stringing tension is one problem, not one per section
        rows, problems = [], []
        for _, section in data["sections"].iterrows():
            try:
                rows.extend(section_tensions(section, project))
            except SolveError as exc:  # report every section and case that fails, together
                problems.extend(exc.problems)
        if problems:
            raise SolveError(problems)
        return {"tensions": pd.DataFrame(rows)}


def stringing_tension_n(project) -> float:
    """Horizontal tension of the stringing state [N], checked against the rated strength."""
    conductor = project.conductor
    tension_n = project.stringing.horizontal_tension_n(conductor, bare_weight_n_m(conductor.mass_kg_m))
    if tension_n >= conductor.rated_strength_n:
        raise ProjectError(f"project file {project.path}: [stringing] tension {tension_n / 1e3:.1f} kN is not "
                         f"below the rated strength {conductor.rated_strength_n / 1e3:.1f} kN")
    return tension_n


def section_tensions(section, project) -> list[dict]:
    """Rows of (section, load case) with the solved horizontal tension and loads."""
    c = project.conductor
    w0 = bare_weight_n_m(c.mass_kg_m)
    h0 = stringing_tension_n(project)
    t0 = project.stringing.temperature_c
    rows, problems = [], []
    for case in project.load_cases:
        load = conductor_load(c.mass_kg_m, c.diameter_m, case.ice_m, case.wind_pa, case.constant_n_m,
                              project.ice_density_kg_m3)
        try:
            h = change_of_state(section["ruling_span_m"], h0, w0, t0, load.resultant_n_m, case.temperature_c,
                                c.modulus_pa, c.area_m2, c.expansion_per_c)
        except SolveError as exc:
            problems.append(f"tension section {section['section_id']}, load case {case.name!r}: "
                            f"change of state cannot be solved ({exc})")
            continue
        rows.append({
            "section_id": section["section_id"], "load_case": case.name,
            "temperature_c": case.temperature_c, "ice_mm": case.ice_m * 1e3, "wind_pa": case.wind_pa,
            "vertical_n_m": load.vertical_n_m, "wind_n_m": load.wind_n_m,
            "resultant_n_m": load.resultant_n_m, "blowout_deg": float(load.blowout_rad * 180 / 3.141592653589793),
            "blowout_rad": load.blowout_rad, "side": case.side_sign,
            "horizontal_tension_n": h, "catenary_m": h / load.resultant_n_m,
        })
    if problems:
        raise SolveError(problems)
    return rows
