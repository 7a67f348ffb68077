"""Stage: spans between consecutive structures and tension sections between strain structures."""
from __future__ import annotations

import numpy as np
import pandas as pd

from routesag.errors import DataError
from routesag.physics.state_change import ruling_span
from routesag.physics.supports import structure_axes
from routesag.pipeline import Stage
from routesag.project.model import line_label, line_prefix

MIN_SPAN_M = 0.5


class BuildSpans(Stage):
    name = "build_spans"
    requires = ("project", "structures")
    provides = ("spans", "sections", "attachments", "wire_spans")
    description = ("join consecutive structures into spans; split tension sections at strain structures; "
                   "place every wire on its cross-arm")

    def run(self, data, ctx):
        spans = build_spans(data["structures"])
        sections = summarise_sections(spans)
        spans = spans.merge(sections[["section_id", "ruling_span_m"]], on="section_id")
        attachments = wire_attachments(data["structures"], data["project"].line_wires)
        for message in ignored_strain_insulators(data["structures"]):
            ctx.warn(message)
        return {"spans": spans, "sections": sections, "attachments": attachments,
                "wire_spans": wire_spans(spans, attachments)}


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
        problems.append(f"{line_label(line_id)}: structures {ids[i]} and {ids[i + 1]} stand at the same spot "
                        f"({span_m[i]:.2f} m apart): zero-length span")
    section_ids = _section_ids(line_id, ids, acts_as_strain(line))
    return pd.DataFrame({
        "span_id": span_ids(line_id, ids, problems),
        "line_id": line_id,
        "from_id": ids[:-1], "to_id": ids[1:],
        "section_id": section_ids,
        "x0": x[:-1], "y0": y[:-1], "z0": z[:-1], "x1": x[1:], "y1": y[1:], "z1": z[1:],
        "span_m": span_m, "dz_m": np.diff(z),
        "bearing_deg": np.degrees(np.arctan2(dx, dy)) % 360.0,
    })


def _section_ids(line_id: str, ids: np.ndarray, strain: np.ndarray) -> np.ndarray:
    """Each span's tension section, named by its end strain structures (``A:T12-T19``).

    Named by structures, not by count, so a section keeps its id when the line file starts elsewhere.
    """
    bounds = np.flatnonzero(strain)  # first and last structures always count as strain
    names = np.array([f"{line_prefix(line_id)}{ids[a]}-{ids[b]}" for a, b in zip(bounds[:-1], bounds[1:])], dtype=object)
    # A span belongs to the section that started at the last strain structure before it.
    return names[np.cumsum(strain[:-1]) - 1]


def span_ids(line_id: str, ids, problems: list[str]) -> list[str]:
    """``line:from-to`` for each span; names two spans would share get the span's number in the line (``#n``).

    Structure ids may hold the hyphen (A, B-C, A-B, C gives A-B-C twice), so the name alone is not unique.
    """
    names = [f"{line_prefix(line_id)}{a}-{b}" for a, b in zip(ids[:-1], ids[1:])]
    counts = pd.Series(names).value_counts()
    names = [f"{name}#{i + 1}" if counts[name] > 1 else name for i, name in enumerate(names)]
    seen: dict[str, int] = {}
    for i, name in enumerate(names):
        if name in seen:
            problems.append(f"{line_label(line_id)}: spans {ids[seen[name]]} -> {ids[seen[name] + 1]} and "
                            f"{ids[i]} -> {ids[i + 1]} would both be called {name!r}; rename one of the "
                            "structures (field 'structure_id')")
        seen.setdefault(name, i)
    return names


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


def acts_as_strain(line: pd.DataFrame) -> np.ndarray:
    """Strain structures of one line in seq order; the first and last always count as strain."""
    strain = line["kind"].to_numpy() == "strain"
    strain[0] = strain[-1] = True
    return strain


def _line_order(structures: pd.DataFrame):
    for line_id, line in structures.groupby("line_id", sort=True):
        yield str(line_id), line.sort_values("seq", kind="stable")


def _given_strings(line: pd.DataFrame) -> np.ndarray:
    """insulator_m as given [m]; 0 where empty or absent."""
    given = line["insulator_m"].to_numpy(dtype=float) if "insulator_m" in line else np.zeros(len(line))
    return np.nan_to_num(given)


def _string_lengths(line: pd.DataFrame) -> np.ndarray:
    """Suspension string length per structure [m]; 0 on strain structures (their strings lie along the wire)."""
    return np.where(acts_as_strain(line), 0.0, _given_strings(line))


def ignored_strain_insulators(structures: pd.DataFrame) -> list[str]:
    """Warnings for insulator_m given on structures that act as strain structures (it is ignored there)."""
    messages = []
    for line_id, line in _line_order(structures):
        for sid in line["structure_id"].to_numpy()[acts_as_strain(line) & (_given_strings(line) > 0)]:
            messages.append(f"{line_label(line_id)}: structure {sid}: insulator_m ignored: it acts as a strain "
                            "structure (strain strings lie along the wire, the wire is held at attach_height_m)")
    return messages


def wire_attachments(structures: pd.DataFrame, line_wires) -> pd.DataFrame:
    """Where each wire hangs at each structure, at rest (no wind).

    Parameters
    ----------
    structures : DataFrame
        Checked structures with x, y, attach_z_m and optional insulator_m.
    line_wires : callable
        ``line_wires(line_id)`` gives the :class:`routesag.project.Wire` list of a line.

    Returns
    -------
    DataFrame
        One row per structure and wire: structure_id, line_id, wire, kind
        (``strain`` at the line ends too), x, y (cross-arm point: offset
        along the bisector), top_z (structure attachment + dz_m), z (wire
        clamp: top_z minus the string length), insulator_m (string length, 0
        when the wire does not hang from a string), along_x, along_y,
        across_x, across_y (structure axes), deviation_deg (line angle,
        positive to the right).
    """
    frames = []
    for line_id, line in _line_order(structures):
        along, across, turn = structure_axes(line["x"].to_numpy(dtype=float), line["y"].to_numpy(dtype=float))
        strings = _string_lengths(line)
        kind = np.where(acts_as_strain(line), "strain", "suspension")
        for wire in line_wires(line_id):
            top_z = line["attach_z_m"].to_numpy(dtype=float) + wire.dz_m
            string_m = strings if wire.insulated else np.zeros(len(line))
            frames.append(pd.DataFrame({
                "structure_id": line["structure_id"].astype(str).to_numpy(), "line_id": line_id,
                "wire": wire.name, "kind": kind,
                "x": line["x"].to_numpy(dtype=float) + wire.offset_m * across[:, 0],
                "y": line["y"].to_numpy(dtype=float) + wire.offset_m * across[:, 1],
                "top_z": top_z, "z": top_z - string_m, "insulator_m": string_m,
                "along_x": along[:, 0], "along_y": along[:, 1], "across_x": across[:, 0],
                "across_y": across[:, 1], "deviation_deg": np.degrees(turn),
            }))
    return pd.concat(frames, ignore_index=True)


def wire_spans(spans: pd.DataFrame, attachments: pd.DataFrame) -> pd.DataFrame:
    """Spans per wire, between the wire's rest attachments.

    Columns: span_id, line_id, wire, from_id, to_id, section_id, x0, y0, z0,
    x1, y1, z1 [m], span_m (horizontal), dz_m (z1 - z0), ruling_span_m (of
    the wire's own spans in the section).
    """
    ends = attachments[["line_id", "structure_id", "wire", "x", "y", "z"]]
    frame = (spans[["span_id", "line_id", "from_id", "to_id", "section_id"]]
             .merge(ends.rename(columns={"structure_id": "from_id", "x": "x0", "y": "y0", "z": "z0"}),
                    on=["line_id", "from_id"])
             .merge(ends.rename(columns={"structure_id": "to_id", "x": "x1", "y": "y1", "z": "z1"}),
                    on=["line_id", "to_id", "wire"]))
    frame["span_m"] = np.hypot(frame["x1"] - frame["x0"], frame["y1"] - frame["y0"])
    frame["dz_m"] = frame["z1"] - frame["z0"]
    ruling = frame.groupby(["section_id", "wire"])["span_m"].transform(lambda s: ruling_span(s.to_numpy()))
    frame["ruling_span_m"] = ruling.astype(float)
    order = ["span_id", "line_id", "wire", "from_id", "to_id", "section_id"]
    return frame[order + [c for c in frame.columns if c not in order]]
