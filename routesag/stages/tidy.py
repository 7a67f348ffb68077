"""The last touch on the output layers: stable columns, integer types, line-end kinds.

A reader (a GIS style, a script that joins layers) must find the same columns
in every run: a one-wire run still has ``wire``, a run without exceedances still
has the exceedance table's columns, and a count or an order stays an integer.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

#: Columns that hold whole numbers; written as integers when every value is one.
INTEGER_COLUMNS = ("seq", "rank", "n_violations", "n_spans")
#: Columns every run writes, per layer, in this order at the front (others follow as they are).
STABLE_COLUMNS = {
    "sections": ("section_id", "line_id", "from_id", "to_id", "n_spans", "length_m", "ruling_span_m",
                 "max_span_ratio", "wire"),
    "tension_exceedances": ("section_id", "wire", "load_case", "condition", "limit", "applies_to", "tension_n",
                            "percent_rts", "max_percent_rts", "catenary_m", "max_catenary_m", "utilisation"),
    "hotspots": ("rank", "deficit_m", "clearance_m", "required_m", "load_case", "category", "span_id",
                 "station_m", "n_violations", "load_cases", "categories", "span_ids", "wire", "wires"),
    "unknown_stretches": ("span_id", "from_id", "to_id", "section_id", "wire", "load_case"),
    "clearance_violations": ("span_id", "from_id", "to_id", "section_id", "wire", "load_case"),
    "conductors": ("span_id", "from_id", "to_id", "section_id", "wire", "load_case"),
    "structure_loads": ("structure_id", "line_id", "wire", "load_case"),
    "sag_table": ("section_id", "wire"),
}
_TEXT = ("wire", "wires", "load_case", "load_cases", "category", "categories", "span_ids", "condition", "limit",
         "applies_to")


def tidy_layers(layers: dict, wire: str | None = None) -> dict:
    """Every layer with its stable columns, integer columns as integers and line-end kinds stated.

    ``wire``: the run's wire name when it has exactly one, else "" (default: found in the conductors layer).
    A layer held as None (streamed to the file already) is passed through.
    """
    wire = _only_wire(layers) if wire is None else wire
    out = type(layers)()
    for name, (frame, *spec) in layers.items():
        if frame is None:
            out[name] = (frame, *spec)
            continue
        frame = _stable_columns(frame, STABLE_COLUMNS.get(name, ()), wire)
        frame = _integers(frame)
        if name == "structures":
            frame = line_ends_as_strain(frame)
        out[name] = (frame, *spec)
    return out


def _only_wire(layers) -> str:
    """The wire's name when the run has exactly one (fills ``wire`` in rows that lack it), else empty."""
    conductors = layers.get("conductors", (pd.DataFrame(),))[0]
    return only_wire(conductors)


def only_wire(frame) -> str:
    """The one wire name in ``frame``'s ``wire`` column, or "" (none, several, or no such column)."""
    names = set(frame["wire"].dropna().astype(str)) if frame is not None and "wire" in frame else set()
    return names.pop() if len(names) == 1 else ""


def _stable_columns(frame, columns, wire: str):
    missing = [c for c in columns if c not in frame.columns]
    if not missing:
        return frame
    frame = frame.copy()
    for column in missing:
        if column in ("wire", "wires"):
            frame[column] = pd.Series([wire] * len(frame), index=frame.index, dtype=str)
        elif column in _TEXT or column.endswith("_id"):
            frame[column] = pd.Series([None] * len(frame), index=frame.index, dtype=object)
        else:
            frame[column] = pd.Series(np.nan, index=frame.index, dtype=float)
    front = [c for c in columns if c in frame.columns]
    return frame[front + [c for c in frame.columns if c not in front]]


def _integers(frame):
    for column in INTEGER_COLUMNS:
        if column in frame.columns and frame[column].dtype.kind == "f":
            values = frame[column].to_numpy()
            if np.isfinite(values).all() and (values == np.round(values)).all():
                frame = frame.assign(**{column: values.astype("int64")})
    return frame


def line_ends_as_strain(structures):
    """``kind = strain`` at the first and last structure of each line, with ``kind_forced`` saying it was set.

    A line end holds the wire's full tension on one side, so it acts as strain
    whatever the file says; the layer says so rather than show ``suspension``.
    """
    if "kind" not in structures or "seq" not in structures or len(structures) == 0:
        return structures.assign(kind_forced=pd.Series(False, index=structures.index, dtype=bool))
    seq = structures.groupby("line_id")["seq"]
    end = (structures["seq"] == seq.transform("min")) | (structures["seq"] == seq.transform("max"))
    forced = end & (structures["kind"] != "strain")
    out = structures.assign(kind=structures["kind"].where(~forced, "strain"), kind_forced=forced.astype(bool))
    columns = list(structures.columns)
    columns.insert(columns.index("kind") + 1, "kind_forced")
    return out[columns]
