"""Stage: stringing sag tables for crews.

Per tension section: the horizontal tension, support tension and mid-span sag
of the ruling span and of every span at conductor temperatures from -20 C to
+50 C in 5 C steps, initial condition (as strung), bare wire, no wind. Each
temperature is one change of state from the section's stringing state on the
ruling span; every span of the section shares that horizontal tension and
hangs as an exact inclined catenary.

References
----------
.. [1] Douglass, D.A. and Thrash, R., "Sag and tension of conductor", ch. 14
   in L.L. Grigsby (ed.), Electric Power Generation, Transmission and
   Distribution, 3rd ed., CRC Press, 2012 (ruling span, stringing sag
   tables, initial condition).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
import pandas as pd

from routesag.errors import ProjectError
from routesag.physics.catenary import midspan_sag, support_tensions
from routesag.physics.loads import bare_weight_n_m
from routesag.physics.state_change import changes_of_state_by_law
from routesag.pipeline import Stage

#: Conductor temperatures of the table [degC].
TEMPERATURES_C = np.arange(-20.0, 50.0 + 1e-9, 5.0)

COLUMNS = ["section_id", "wire", "kind", "span_id", "from_id", "to_id", "span_m", "dz_m", "temperature_c",
           "condition", "horizontal_tension_n", "max_tension_n", "sag_m", "catenary_m"]


class BuildSagTable(Stage):
    name = "build_sag_table"
    requires = ("project", "sections", "wire_spans", "tensions")
    provides = ("sag_table",)
    description = "sag and tension of the ruling span and every span, -20..+50 C in 5 C steps, initial, bare"
    beside_sections = True  # for the crews and the output only: no section waits for it

    def run(self, data, ctx):
        return {"sag_table": sag_table(data["project"], data["sections"], data["wire_spans"], data["tensions"])}


def sag_table(project, sections, wire_spans, tensions, temperatures_c=TEMPERATURES_C,
              conditions=("initial",)) -> pd.DataFrame:
    """Rows of (section, wire, condition, ruling span or span, temperature); see :data:`COLUMNS`.

    The stringing tension of each section and wire is read from ``tensions``
    (``stringing_tension_n``), so a design tension found from the limits is used.
    ``conditions``: ``initial`` (as strung) and/or ``final`` (after creep: the
    initial state at the temperature plus the wire's creep allowance). The
    changes of state of every section, wire and temperature are solved
    together, one vectorised solve per pair of stretch laws.
    """
    first = tensions.drop_duplicates(["section_id", "wire"]).set_index(["section_id", "wire"])
    stringing_n = first["stringing_tension_n"]
    # the temperature of the state the tensions start from (the survey's when re-rated from the as-found state)
    stringing_c = first["stringing_temperature_c"] if "stringing_temperature_c" in first else None
    positions = wire_spans.groupby(["section_id", "wire"], sort=False).indices
    columns = {name: wire_spans[name].to_numpy() for name in SpanColumns._fields}
    tables = []
    for section_id, line_id in zip(sections["section_id"], sections["line_id"]):
        for wire in project.line_wires(line_id):
            key = (section_id, wire.name)
            start_c = None if stringing_c is None else float(stringing_c[key])
            spans = SpanColumns(*(values[positions[key]] for values in columns.values()))
            tables.extend(SagTableTask.of(section_id, spans, float(stringing_n[key]), wire, temperatures_c,
                                          condition, start_c) for condition in conditions)
    if not tables:
        return pd.DataFrame(columns=COLUMNS)
    solve_ruling_spans(tables)
    parts = [task.columns() for task in tables]
    return pd.DataFrame({name: np.concatenate([part[name] for part in parts]) for name in COLUMNS})


def section_sag_table(section, spans, stringing_tension_n, wire, temperatures_c,
                      condition="initial", stringing_temperature_c=None) -> pd.DataFrame:
    """The sag table of one wire in one tension section (ruling span first, then its spans in order).

    ``stringing_tension_n`` holds at ``stringing_temperature_c`` (default: the wire's stringing temperature).

    Raises
    ------
    ProjectError
        ``final`` for a wire without a creep allowance.
    """
    columns = SpanColumns(*(spans[name].to_numpy() for name in SpanColumns._fields))
    task = SagTableTask.of(section["section_id"], columns, stringing_tension_n, wire, temperatures_c, condition,
                           stringing_temperature_c)
    solve_ruling_spans([task])
    return pd.DataFrame(task.columns())[COLUMNS]


class SpanColumns(NamedTuple):
    """The columns of one wire's spans in a section that the sag table uses, as numpy arrays."""

    span_id: np.ndarray
    from_id: np.ndarray
    to_id: np.ndarray
    span_m: np.ndarray
    dz_m: np.ndarray
    ruling_span_m: np.ndarray


@dataclass
class SagTableTask:
    """One wire's sag table in one tension section and condition: its ruling span's states, then its rows."""

    section_id: object
    spans: SpanColumns
    wire: object
    condition: str
    temps_c: np.ndarray             # table temperatures [degC]
    states_c: np.ndarray            # temperatures the stringing state is carried to [degC]
    start_c: float                  # temperature of the stringing state [degC]
    stringing_tension_n: float
    weight_n_m: float               # bare wire [N/m]
    ruling_m: float
    laws: tuple                     # stretch laws of the stringing state and of the condition
    horizontal_tension_n: np.ndarray | None = None

    @classmethod
    def of(cls, section_id, spans: SpanColumns, stringing_tension_n, wire, temperatures_c, condition="initial",
           stringing_temperature_c=None) -> "SagTableTask":
        """The task, its laws and state temperatures set.

        Raises
        ------
        ProjectError
            ``final`` for a wire without a creep allowance.
        """
        c, stringing = wire.conductor, wire.stringing
        start_c = stringing.temperature_c if stringing_temperature_c is None else stringing_temperature_c
        temps = np.asarray(temperatures_c, dtype=float)
        law = c.law(start_c)  # initial condition: linear composite or the two members uncrept
        try:
            states_c, final_law = condition_states(c, stringing, temps, condition, start_c, law)
        except ValueError as exc:
            raise ProjectError(f"sag table of wire {wire.name!r}, {condition} condition: {exc}; set "
                               "creep_allowance_c in its [stringing] table") from None
        return cls(section_id, spans, wire, condition, temps, np.asarray(states_c, dtype=float), start_c,
                   stringing_tension_n, float(bare_weight_n_m(c.mass_kg_m)),
                   float(spans.ruling_span_m[0]), (law, final_law))  # the wire's own spans

    def columns(self) -> dict:
        """The rows as numpy columns (:data:`COLUMNS`), ruling span first."""
        spans, h_n, w_n_m = self.spans, self.horizontal_tension_n, self.weight_n_m
        span_m = np.concatenate([[self.ruling_m], spans.span_m.astype(float)])[:, None]
        dz_m = np.concatenate([[0.0], spans.dz_m.astype(float)])[:, None]
        catenary_m = h_n[None, :] / w_n_m
        at_a, at_b = support_tensions(span_m, dz_m, h_n[None, :], w_n_m)
        shape = (len(span_m), len(self.temps_c))
        size = shape[0] * shape[1]

        def labels(values):
            return np.repeat(np.concatenate([[None], values.astype(object)]), shape[1])

        return {
            "section_id": np.full(size, self.section_id, dtype=object),
            "wire": np.full(size, self.wire.name, dtype=object),
            "kind": np.repeat(np.array(["ruling"] + ["span"] * (shape[0] - 1), dtype=object), shape[1]),
            "span_id": labels(spans.span_id), "from_id": labels(spans.from_id), "to_id": labels(spans.to_id),
            "span_m": np.broadcast_to(span_m, shape).ravel(), "dz_m": np.broadcast_to(dz_m, shape).ravel(),
            "temperature_c": np.broadcast_to(self.temps_c, shape).ravel(),
            "condition": np.full(size, self.condition, dtype=object),
            "horizontal_tension_n": np.broadcast_to(h_n, shape).ravel(),
            "max_tension_n": np.maximum(at_a, at_b).ravel(),
            "sag_m": midspan_sag(span_m, dz_m, catenary_m).ravel(),
            "catenary_m": np.broadcast_to(catenary_m, shape).ravel(),
        }


def solve_ruling_spans(tasks) -> None:
    """Set every task's ruling-span tensions: one :func:`changes_of_state_by_law` per pair of equal laws."""
    groups = {}
    for task in tasks:
        try:
            groups.setdefault(task.laws, []).append(task)
        except TypeError:  # laws that cannot be compared by value: solved on their own
            groups[id(task)] = [task]
    for group in groups.values():
        law, final_law = group[0].laws
        sizes = [len(task.states_c) for task in group]

        def each(name):
            return np.concatenate([np.full(n, getattr(task, name)) for task, n in zip(group, sizes)])

        h_n = changes_of_state_by_law(each("ruling_m"), each("stringing_tension_n"), each("weight_n_m"),
                                      each("start_c"), each("weight_n_m"),
                                      np.concatenate([task.states_c for task in group]), law, final_law)
        for task, part in zip(group, np.split(h_n, np.cumsum(sizes)[:-1])):
            task.horizontal_tension_n = part


def condition_states(conductor, stringing, temps_c, condition, start_c, initial_law):
    """Temperatures to carry the initial state to, and the stretch law of ``condition``.

    Two-material conductors creep in the aluminium (the final law holds its creep
    strain, from ``creep_strain`` or converted from ``creep_allowance_c``); linear
    ones take the final state at T as the initial state at T + creep allowance.

    Raises
    ------
    ValueError
        The final condition without a creep allowance or strain.
    """
    members = conductor.two_material
    if condition != "final" or members is None:
        return [stringing.state_temperature_c(float(t), condition) for t in temps_c], initial_law
    strain = stringing.creep_strain
    if stringing.creep_allowance_c is not None:
        strain = members.creep_strain_from_allowance(stringing.creep_allowance_c)
    if strain is None:
        raise ValueError("the final condition needs creep_allowance_c or creep_strain")
    return [float(t) for t in temps_c], conductor.law(start_c, strain)
