"""The as-found state of each tension section, and the load cases re-rated from it.

A section's as-found state is the horizontal tension estimated from its
wires' fits (:mod:`routesag.stages.point_cloud`) at the survey conductor
temperature, bare wire, no wind, in the initial condition as found (creep
from then on only by the remaining allowance the user gives as
``creep_allowance_c``). With ``[stringing] source = "as_found"`` the change of
state starts from it instead of the design stringing; a section whose wire
has no good fit falls back to the design stringing and says so
(``tension_source``).

``compare_as_found`` reports, per span and wire, design against as-found:
horizontal tension and sag at the survey temperature and in every load case.
"""
from __future__ import annotations

import dataclasses
import math

import numpy as np
import pandas as pd

from routesag.physics.catenary import midspan_sag
from routesag.physics.conductor3d import swung_span
from routesag.pipeline import Stage
from routesag.project.model import LoadCase

#: Internal name of the survey state solved beside the load cases (no user case can be called this).
SURVEY_CASE = "__survey__"
AS_FOUND_COLUMNS = ["span_id", "from_id", "to_id", "section_id", "wire", "state", "temperature_c",
                    "design_tension_n", "as_found_tension_n", "tension_difference_n", "tension_difference_percent",
                    "design_sag_m", "as_found_sag_m", "sag_difference_m", "tension_source"]


def as_found_state(states: pd.DataFrame, section_id, wire) -> dict | None:
    """The section's fitted as-found state of one wire (tension, spread, temperature), or None."""
    if states is None or len(states) == 0:
        return None
    match = states[(states["section_id"] == section_id) & (states["wire"] == wire)]
    if match.empty:
        return None
    row = match.iloc[0]
    if not np.isfinite(row["as_found_tension_n"]) or row["survey_temperature_c"] is None \
            or not np.isfinite(row["survey_temperature_c"]):
        return None
    return row.to_dict()


def as_found_stringing(stringing, state: dict):
    """The wire's stringing restated as its as-found state: the fitted tension at the survey temperature."""
    return dataclasses.replace(stringing, temperature_c=float(state["survey_temperature_c"]),
                               horizontal_tension_kn=float(state["as_found_tension_n"]) / 1e3,
                               tension_percent_rts=None, catenary_m=None, from_limits=False)


def reference_stringing(stringing, states: pd.DataFrame, section_id, wire):
    """(stringing the load cases start from, tension_source, as-found state or None) of one section and wire.

    With ``source = "as_found"`` and a good fit: the as-found state; otherwise the design stringing.
    """
    state = as_found_state(states, section_id, wire)
    if stringing.source == "as_found" and state is not None:
        return as_found_stringing(stringing, state), "as_found", state
    return stringing, "design", state


def as_found_columns(source: str, state: dict | None) -> dict:
    """Columns the tensions rows gain: where the tension comes from and the section's fitted state."""
    return {"tension_source": source,
            "as_found_tension_n": math.nan if state is None else float(state["as_found_tension_n"]),
            "as_found_spread_percent": math.nan if state is None else float(state["as_found_spread_percent"])}


def wire_section(section: pd.Series, spans: pd.DataFrame) -> pd.Series:
    """A sections row with the ruling span of one wire's own spans in it."""
    own = section.copy()
    own["ruling_span_m"] = spans["ruling_span_m"].iloc[0]
    return own


def bare_state(project, section, wire, spans, temperature_c, stringing=None) -> dict:
    """A stringing (default: the wire's design stringing) carried to one temperature, bare wire, no wind,
    initial: the ``section_tensions`` row of that state."""
    from routesag.stages.tensions import section_tensions  # the tensions stage imports this module

    stringing = dataclasses.replace(wire.stringing, source="design") if stringing is None else stringing
    alone = dataclasses.replace(project, load_cases=[LoadCase(SURVEY_CASE, float(temperature_c))])
    return section_tensions(wire_section(section, spans), alone, wire.conductor, stringing, spans)[0]


class CompareAsFound(Stage):
    name = "compare_as_found"
    requires = ("project", "sections", "wire_spans", "tensions", "as_found_states")
    provides = ("as_found",)
    output_layers = {"as_found": None}
    description = ("design against as-found state per span and wire: horizontal tension and sag at the "
                   "survey temperature and in every load case")

    def run(self, data, ctx):
        project = data["project"]
        if project.point_cloud is None:
            return {"as_found": None}
        from routesag.stages.tensions import section_tensions  # the tensions stage imports this module

        by_wire = dict(tuple(data["wire_spans"].groupby(["section_id", "wire"], sort=False)))
        sources = data["tensions"].groupby(["section_id", "wire"])["tension_source"].first()
        rows = []
        for _, section in data["sections"].iterrows():
            for wire in project.line_wires(section["line_id"]):
                state = as_found_state(data["as_found_states"], section["section_id"], wire.name)
                if state is None:
                    continue
                spans = by_wire[(section["section_id"], wire.name)]
                own = wire_section(section, spans)
                with_survey = dataclasses.replace(project, load_cases=[
                    LoadCase(SURVEY_CASE, float(state["survey_temperature_c"]))] + list(project.load_cases))
                design_stringing = dataclasses.replace(wire.stringing, source="design")
                design = section_tensions(own, with_survey, wire.conductor, design_stringing, spans)
                found = section_tensions(own, with_survey, wire.conductor,
                                         as_found_stringing(wire.stringing, state), spans)
                source = sources.get((section["section_id"], wire.name), "design")
                rows += comparison_rows(spans, wire.name, design, found, source)
        return {"as_found": pd.DataFrame(rows, columns=AS_FOUND_COLUMNS)}


def comparison_rows(spans: pd.DataFrame, wire: str, design: list[dict], found: list[dict], source: str):
    """One row per span and state (survey, then each load case): tensions and sags, design and as found."""
    span_m, dz_m = spans["span_m"].to_numpy(dtype=float), spans["dz_m"].to_numpy(dtype=float)
    rows = []
    for d, f in zip(design, found, strict=True):
        d_sag, f_sag = _plane_sags(span_m, dz_m, d), _plane_sags(span_m, dz_m, f)
        h_d, h_f = d["horizontal_tension_n"], f["horizontal_tension_n"]
        for i, (_, span) in enumerate(spans.iterrows()):
            rows.append({"span_id": span["span_id"], "from_id": span["from_id"], "to_id": span["to_id"],
                         "section_id": span["section_id"], "wire": wire,
                         "state": "survey" if d["load_case"] == SURVEY_CASE else d["load_case"],
                         "temperature_c": d["temperature_c"], "design_tension_n": h_d, "as_found_tension_n": h_f,
                         "tension_difference_n": h_f - h_d, "tension_difference_percent": 100.0 * (h_f - h_d) / h_d,
                         "design_sag_m": float(d_sag[i]), "as_found_sag_m": float(f_sag[i]),
                         "sag_difference_m": float(f_sag[i] - d_sag[i]), "tension_source": source})
    return rows


def _plane_sags(span_m, dz_m, row) -> np.ndarray:
    """Mid-span sag of each span in the plane of the load (vertical without wind) [m]."""
    plane_span, plane_dz = swung_span(span_m, dz_m, row["blowout_rad"])
    return np.asarray(midspan_sag(plane_span, plane_dz, row["horizontal_tension_n"] / row["resultant_n_m"]))
