"""Stage: spans between consecutive structures and tension sections between strain structures."""
from __future__ import annotations

import numpy as np
import pandas as pd

from routesag.errors import DataError
from routesag.physics.state_change import ruling_span
from routesag.pipeline import Stage

MIN_SPAN_M = 0.5


class BuildSpans(Stage):
    name = "build_spans"
    requires = ("structures",)
    provides = ("spans", "sections")
    description = "join consecutive structures into spans; split tension sections at strain structures"

    def run(self, data, ctx):
        spans = build_spans(data["structures"])
        sections = summarise_sections(spans)
        spans = spans.merge(sections[["section_id", "ruling_span_m"]], on="section_id")
        return {"spans": spans, "sections": sections}


def build_spans(structures: pd.DataFrame) -> pd.DataFrame:
    """One row per span, in line and seq order, with its tension section.

    Columns: span_id, line_id, from_id, to_id, section_id, x0, y0, z0, x1, y1,
    z1 (attachment points [m]), span_m (horizontal), dz_m (z1 - z0), bearing_deg.
    """
    frames, problems = [], []
    for line_id, line in structures.groupby("line_id", sort=True):
        line = line.sort_values("seq", kind="stable")
        frames.append(_line_spans(str(line_id), line, problems))
    if problems:
        raise DataError(problems)
    return pd.concat(frames, ignore_index=True)


def _line_spans(line_id: str, line: pd.DataFrame, problems: list[str]) -> pd.DataFrame:
    ids = line["structure_id"].astype(str).to_numpy()
    x, y, z = (line[c].to_numpy(dtype=float) for c in ("x", "y", "attach_z_m"))
    dx, dy = np.diff(x), np.diff(y)
    span_m = np.hypot(dx, dy)
    for i in np.flatnonzero(span_m < MIN_SPAN_M):
        problems.append(f"line {line_id}: structures {ids[i]} and {ids[i + 1]} stand at the same spot "
                        f"({span_m[i]:.2f} m apart): zero-length span")
    strain = (line["kind"].to_numpy() == "strain")
    strain[0] = strain[-1] = True
    # A span belongs to the section that started at the last strain structure before it.
    section_no = np.cumsum(strain[:-1])
    return pd.DataFrame({
        "span_id": [f"{line_id}:{a}-{b}" for a, b in zip(ids[:-1], ids[1:])],
        "line_id": line_id,
        "from_id": ids[:-1], "to_id": ids[1:],
        "section_id": [f"{line_id}:S{n}" for n in section_no],
        "x0": x[:-1], "y0": y[:-1], "z0": z[:-1], "x1": x[1:], "y1": y[1:], "z1": z[1:],
        "span_m": span_m, "dz_m": np.diff(z),
        "bearing_deg": np.degrees(np.arctan2(dx, dy)) % 360.0,
    })


def summarise_sections(spans: pd.DataFrame) -> pd.DataFrame:
    """One row per tension section with its ruling span [m]."""
    rows = []
    for section_id, group in spans.groupby("section_id", sort=False):
        rows.append({
            "section_id": section_id, "line_id": group["line_id"].iloc[0],
            "from_id": group["from_id"].iloc[0], "to_id": group["to_id"].iloc[-1],
            "n_spans": len(group), "length_m": float(group["span_m"].sum()),
            "ruling_span_m": float(ruling_span(group["span_m"].to_numpy())),
            "max_span_ratio": float(group["span_m"].max() / group["span_m"].min()),
        })
    return pd.DataFrame(rows)
