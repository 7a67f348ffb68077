"""The report's tables as plain rows: hotspots, spans (worst clearance per load case), run summary."""
from __future__ import annotations

import json

import numpy as np
import pandas as pd

#: Worst first: a span's status is the worst of its wires and load cases.
STATUS_ORDER = ("violation", "unknown", "clear", "unchecked")


def worst_status(statuses) -> str:
    present = set(map(str, statuses))
    return next((s for s in STATUS_ORDER if s in present), "unchecked")


def span_rows(results) -> list[dict]:
    """One row per span: ends, section, worst clearance per load case, status, tension use and tensions."""
    conductors = pd.DataFrame(results["conductors"].drop(columns="geometry"))
    conductors["span_id"] = conductors["span_id"].astype(str)
    cases = results.case_order()
    tensions = section_tensions(results)
    rows = []
    for _, span in results["spans"].iterrows():
        span_id = str(span["span_id"])
        mine = conductors[conductors["span_id"] == span_id]
        worst = {}
        for case in cases:
            of_case = mine[mine["load_case"].astype(str) == case]
            worst[case] = _worst_clearance(of_case)
        row = {"span_id": span_id, "line_id": str(span["line_id"]), "from_id": str(span["from_id"]),
               "to_id": str(span["to_id"]), "section_id": str(span["section_id"]), "span_m": float(span["span_m"]),
               "worst_m": worst, "status": worst_status(mine["status"]) if "status" in mine else "unchecked",
               "unknown_m": _max_or_nan(mine.get("unknown_m")),
               "max_tension_percent_rts": _max_or_nan(mine.get("max_tension_percent_rts"))}
        row.update(tensions.get(str(span["section_id"]), {}))
        rows.append(row)
    return rows


def _worst_clearance(of_case: pd.DataFrame):
    """Smallest clearance [m] over the wires of one load case, to terrain or to surface objects, whichever is
    smaller, as (value, 'surface' or '', unknown length [m]); a text value when nothing was measured."""
    if len(of_case) == 0:
        return np.nan
    if (of_case["status"].astype(str) == "unchecked").all():
        return "unchecked"
    ground = of_case["min_clearance_m"].to_numpy(dtype=float)
    surface = (of_case["min_surface_m"].to_numpy(dtype=float) if "min_surface_m" in of_case
               else np.full(len(ground), np.nan))
    unknown_m = _max_or_nan(of_case.get("unknown_m"))
    if not (np.isfinite(ground).any() or np.isfinite(surface).any()):
        return "unknown"
    g = np.nanmin(ground) if np.isfinite(ground).any() else np.inf
    o = np.nanmin(surface) if np.isfinite(surface).any() else np.inf
    return (float(min(g, o)), "surface" if o < g else "", 0.0 if np.isnan(unknown_m) else unknown_m)


def _max_or_nan(column) -> float:
    if column is None or len(column) == 0:
        return np.nan
    values = pd.to_numeric(column, errors="coerce").to_numpy(dtype=float)
    return float(np.nanmax(values)) if np.isfinite(values).any() else np.nan


def section_tensions(results) -> dict:
    """Per section: design (stringing) tension and, when the layer carries it, the as-found tension [N]."""
    sections = results["sections"]
    out = {}
    for section_id, group in sections.groupby(sections["section_id"].astype(str), sort=False):
        entry = {"design_tension_n": _max_or_nan(group.get("stringing_tension_n"))}
        if "as_found_tension_n" in group:
            entry["as_found_tension_n"] = _max_or_nan(group["as_found_tension_n"])
        out[section_id] = entry
    return out


def has_as_found(results) -> bool:
    return "as_found_tension_n" in results["sections"].columns


def hotspot_rows(results) -> list[dict]:
    hotspots = pd.DataFrame(results["hotspots"].drop(columns="geometry"))
    return [row.to_dict() for _, row in hotspots.sort_values("rank").iterrows()]


def inputs(results) -> list[tuple[str, str, str]]:
    """(role, path, SHA-256) of every input the run recorded."""
    info = results.run_info
    return [(key.removeprefix("input."), value, info.get(f"{key}.sha256", ""))
            for key, value in info.items() if key.startswith("input.") and not key.endswith(".sha256")]


def warnings(results) -> list[str]:
    info = results.run_info
    keys = sorted((k for k in info if k.startswith("warning.")), key=lambda k: int(k.split(".")[1]))
    return [info[k] for k in keys]


def key_settings(results) -> list[tuple[str, str]]:
    """The settings that matter for reading the results, as (name, text)."""
    info = results.run_info
    param = {k.removeprefix("param."): json.loads(v) for k, v in info.items() if k.startswith("param.")}
    rows = [("CRS", info.get("note.crs", "not recorded"))]
    conductor = param.get("conductor") or {}
    if conductor:
        rows.append(("conductor", conductor.get("name") or (
            f"{conductor.get('area_mm2')} mm², {conductor.get('diameter_mm')} mm, "
            f"{conductor.get('mass_kg_m')} kg/m, RTS {conductor.get('rated_strength_kn')} kN")))
    stringing = param.get("stringing") or {}
    if stringing:
        rows.append(("stringing", ", ".join(f"{k} {v}" for k, v in stringing.items() if v is not None)))
    for case in param.get("load_cases") or []:
        rows.append((f"load case {case.get('name')}",
                     f"{case.get('temperature_c')} °C, ice {case.get('ice_mm')} mm, wind {case.get('wind_pa')} Pa, "
                     f"{case.get('condition')}"))
    required = info.get("note.clearance_required_m")
    if required:
        rows.append(("required clearance [m] (after adder)",
                     ", ".join(f"{k} {v}" for k, v in json.loads(required).items())))
    for limit in param.get("limits") or []:
        rows.append(("tension limit", ", ".join(f"{k} {v}" for k, v in limit.items() if v is not None)))
    for key in ("station_m", "hotspot_rule", "surface_rule", "terrain_z_note"):
        if f"note.{key}" in info:
            rows.append((key.replace("_", " "), info[f"note.{key}"]))
    return rows


def all_settings(results) -> list[tuple[str, str]]:
    return [(k.removeprefix("param."), v) for k, v in results.run_info.items() if k.startswith("param.")]


def description(results) -> str:
    """The job's one-line description: the project's [report] title, else what was screened."""
    report = json.loads(results.run_info.get("param.report", "{}") or "{}")
    if report.get("title"):
        return str(report["title"])
    spans = results["spans"]
    lines = ", ".join(dict.fromkeys(spans["line_id"].astype(str)))
    return (f"Clearance screening of line {lines}: {len(results['structures'])} structures, {len(spans)} spans, "
            f"{len(results.case_order())} load cases ({results.run_info.get('project_file', 'project')})")
