"""Plain-text run summary for the terminal."""
from __future__ import annotations

import contextvars
import math

from routesag.stages.output import CAUTION
from routesag.units import c_to_f, m_to_ft, n_to_lbf
from routesag.wording import plural

#: Whether the summary being written shows imperial values beside SI ([report] units = "imperial").
_IMPERIAL = contextvars.ContextVar("imperial", default=False)

#: Violations listed by default, worst first (the rest are in the GeoPackage; ``--all`` lists them).
MAX_LISTED_VIOLATIONS = 20

#: A section wire whose fitted tension differs from the design by more than this is listed [%].
AS_FOUND_LISTED_PERCENT = 2.0


def _fmt(value, digits=2) -> str:
    return "unknown" if value is None or (isinstance(value, float) and math.isnan(value)) else f"{value:.{digits}f}"


def _m(value, digits=2) -> str:
    """A length in metres, with feet beside it in an imperial summary."""
    text = f"{value:.{digits}f} m"
    return text + f" ({float(m_to_ft(value)):.{max(digits - 1, 0)}f} ft)" if _IMPERIAL.get() else text


def _kn(value_n) -> str:
    """A force in kN, with pounds-force beside it in an imperial summary."""
    text = f"{value_n / 1e3:.2f} kN"
    return text + f" ({float(n_to_lbf(value_n)):.0f} lbf)" if _IMPERIAL.get() else text


def _degc(value_c) -> str:
    text = f"{value_c:g} C"
    return text + f" ({float(c_to_f(value_c)):.0f} F)" if _IMPERIAL.get() else text


def summary_text(result, per_span: bool = False, max_violations: int | None = MAX_LISTED_VIOLATIONS,
                 units: str | None = None) -> str:
    """Short report: counts, worst clearance per load case, violations (the worst ``max_violations``; None:
    all), hotspots, unknowns, warnings, caution, and the file written.

    ``units`` "imperial" adds feet, pounds-force and degrees F beside the SI values (default: the project's
    ``[report] units``)."""
    units = units or result.project.settings.get("report", {}).get("units", "si")
    token = _IMPERIAL.set(units == "imperial")
    try:
        return _summary(result, per_span, max_violations)
    finally:
        _IMPERIAL.reset(token)


def _summary(result, per_span, max_violations) -> str:
    layers = result.layers
    conductors, violations = _attributes(layers, "conductors"), layers["clearance_violations"]
    lines = [f"routesag: {plural(len(layers['spans']), 'span')} in "
             f"{plural(layers['sections']['section_id'].nunique(), 'tension section')}, "
             f"{plural(conductors['load_case'].nunique(), 'load case')}, {_wires(conductors)}"]
    lines.append("worst clearance per load case:")
    for case, group in conductors.groupby("load_case", sort=False):
        row = group.loc[group["min_clearance_m"].idxmin()] if group["min_clearance_m"].notna().any() else None
        required = "not checked" if (group["status"] == "unchecked").all() else (
            f"required {_m(row['required_m'])}" if row is not None else "")
        where = (f"span {row['span_id']}{_wire(row)} at {row['min_clearance_station_m']:.0f} m "
                 f"({required})") if row is not None else "no terrain"
        worst = _m(row["min_clearance_m"]) if row is not None and math.isfinite(row["min_clearance_m"]) else "unknown"
        lines.append(f"  {case:<12} {worst:>{18 if _IMPERIAL.get() else 10}}  {where}{_case_temperature(result, case)}")
    if per_span:
        lines.extend(_span_table(conductors))
    lines.extend(_violation_lines(violations, max_violations))
    lines.extend(_hotspot_lines(layers.get("hotspots")))
    lines.extend(_uplift_lines(layers.get("structure_loads")))
    lines.extend(_tension_lines(result))
    lines.extend(as_found_lines(layers))
    lines.extend(_unknown_lines(layers.get("unknown_stretches"), conductors))
    for message in result.warnings:
        lines.append(f"warning: {message}")
    lines.append(f"CAUTION: {CAUTION}")
    lines.extend(_written_lines(result))
    return "\n".join(lines)


def _attributes(layers, name):
    """A layer's attribute columns; a run's written layers give them without reading the geometries."""
    return layers.attributes(name) if hasattr(layers, "attributes") else layers[name]


def _violation_lines(violations, limit) -> list[str]:
    """The worst violations, one line each; a note on how many more there are."""
    worst = violations.sort_values("deficit_m", ascending=False, kind="stable")
    shown = worst if limit is None else worst.head(limit)
    lines = [f"violations: {len(violations)}" + (f" (the {len(shown)} worst; --all lists every one)"
                                                  if len(shown) < len(worst) else "")]
    for _, v in shown.iterrows():
        lines.append(f"  span {v['span_id']}{_wire(v)} [{v['load_case']}] {v.get('category', 'ground')} "
                     f"at {v['station_m']:.0f} m "
                     f"({v['start_m']:.0f}-{v['end_m']:.0f} m): clearance {_m(v['clearance_m'])} < "
                     f"{_m(v['required_m'])}, short by {_m(v['deficit_m'])} "
                     f"at x={v.geometry.x:.1f} y={v.geometry.y:.1f}")
    return lines


def _written_lines(result) -> list[str]:
    """What was written and how to open it."""
    if not result.path:
        return []
    names = ", ".join(name for name in result.layers)
    return [f"written: {result.path} (GeoPackage, layers {names})",
            "  open it in any desktop GIS (add the file as a vector data source), or in Python: "
            "geopandas.read_file(path, layer=\"clearance_violations\")"]


def _case_temperature(result, case) -> str:
    """`` (90 C)``: the load case's conductor temperature, shown in an imperial summary."""
    if not _IMPERIAL.get():
        return ""
    temps = {c.name: c.temperature_c for c in result.project.load_cases}
    return f", conductor {_degc(temps[case])}" if case in temps else ""


def _hotspot_lines(hotspots, top=10) -> list[str]:
    """The worst hotspots, one line each."""
    if hotspots is None or len(hotspots) == 0:
        return []
    lines = [f"hotspots: {len(hotspots)} (violations merged within the hotspot distance; top {top}, worst first)"]
    for _, h in hotspots.sort_values("rank").head(top).iterrows():
        wire = f" wire {h['wire']}" if "wire" in h and isinstance(h["wire"], str) else ""
        lines.append(f"  #{h['rank']} short by {_m(h['deficit_m'])}: {h['category']} [{h['load_case']}]{wire} "
                     f"span {h['span_id']} at {h['station_m']:.0f} m, {plural(int(h['n_violations']), 'violation')} "
                     f"({h['load_cases']}) at x={h.geometry.x:.1f} y={h.geometry.y:.1f}")
    return lines


def _unknown_lines(stretches, conductors) -> list[str]:
    """Total length whose clearance is unknown (over terrain or surface nodata)."""
    if stretches is None:
        total, count, why = conductors["unknown_m"].sum(), None, "terrain"
    else:
        total, count = stretches["length_m"].sum() if len(stretches) else 0.0, len(stretches)
        why = " or ".join(sorted({r for reasons in stretches.get("reason", []) for r in reasons.split(", ")}))
    if not total > 0:
        return []
    where = f" in {count} stretches" if count is not None else ""
    return [f"UNKNOWN: {_m(total, 0)} of conductor{where} over missing {why} data (not checked, not clear)"]


def _span_table(conductors) -> list[str]:
    cases = list(dict.fromkeys(conductors["load_case"]))
    table = conductors.pivot_table(index="span_id", columns="load_case", values="min_clearance_m",
                                   aggfunc="min", sort=False)
    imperial = _IMPERIAL.get()
    width = 16 if imperial else 10
    header = f"  {'span':<16}" + "".join(f"{c:>{width}}" for c in cases)
    rows = [f"minimum clearance [{'m / ft' if imperial else 'm'}] per span and load case:", header]

    def cell(value):
        text = _fmt(value)
        return f"{text} / {float(m_to_ft(value)):.1f}" if imperial and text != "unknown" else text

    for span_id, row in table.iterrows():
        rows.append(f"  {span_id:<16}" + "".join(f"{cell(row.get(c)):>{width}}" for c in cases))
    return rows


def _wires(conductors) -> str:
    return plural(conductors["wire"].nunique() if "wire" in conductors else 1, "wire")


def _wire(row) -> str:
    return f" wire {row['wire']}" if "wire" in row and row["wire"] else ""


def _uplift_lines(loads) -> list[str]:
    """Suspension structures that a wire pulls up, in some load case."""
    if loads is None or "uplift" not in loads:
        return []
    up = loads[loads["uplift"].astype(bool)]
    lines = [f"uplift at suspension structures: {len(up)}"]
    for _, u in up.iterrows():
        direction = "up" if u["vertical_n"] < 0 else "down, but the string is lifted"
        lines.append(f"  structure {u['structure_id']}{_wire(u)} [{u['load_case']}]: net vertical load "
                     f"{_kn(abs(u['vertical_n']))} ({direction}), weight span {u['weight_span_m']:.0f} m")
    return lines


def _tension_lines(result) -> list[str]:
    """Design stringing tensions (limits mode) and every tension limit exceeded."""
    limits = result.project.limits
    if not limits:
        return []
    lines = []
    sections = result.layers["sections"]
    if result.project.stringing.from_limits:
        lines.append("design stringing tension per tension section (largest that meets every limit):")
        for _, row in sections.iterrows():
            label = row["section_id"] + (f" {row['wire']}" if "wire" in row else "")
            lines.append(f"  {label:<12} {_kn(row['design_tension_n']):>10} "
                         f"({row['stringing_percent_rts']:.1f} % RTS), set by {row['governing_limit']} "
                         f"in {row['governing_case']!r}")
    exceeded = result.layers["tension_exceedances"]
    checked = result.notes.get("tension_limits_checked", "?")
    lines.append(f"tension limits: {checked} checks, {len(exceeded)} exceeded")
    for _, e in exceeded.sort_values("utilisation", ascending=False).iterrows():
        lines.append(f"  section {e['section_id']}{_wire(e)} [{e['load_case']}, {e['condition']}]: {e['limit']} exceeded "
                     f"({e['percent_rts']:.1f} % RTS, H/w {e['catenary_m']:.0f} m; "
                     f"{100 * e['utilisation']:.1f} % of the limit)")
    return lines


def as_found_lines(layers) -> list[str]:
    """The fitted as-found state against the design, per section and wire (those off by more than 2 %)."""
    fits, table = layers.get("wire_fits"), layers.get("as_found")
    if fits is None or table is None:
        return []
    good = int((fits["quality"] == "good").sum())
    survey = table[table["state"] == "survey"].drop_duplicates(["section_id", "wire"])
    lines = [f"as-found state from the wire points: {good} of {len(fits)} fits good, {len(survey)} section wires "
             f"with a fitted tension"]
    off = survey[survey["tension_difference_percent"].abs() > AS_FOUND_LISTED_PERCENT]
    for _, row in off.iterrows():
        lines.append(f"  {row['section_id']} {row['wire']}: {row['as_found_tension_n'] / 1e3:.2f} kN as found vs "
                     f"{row['design_tension_n'] / 1e3:.2f} kN design at {row['temperature_c']:g} degC "
                     f"({row['tension_difference_percent']:+.1f} %); load cases from the {row['tension_source']} "
                     "state")
    if len(survey) > len(off):
        lines.append(f"  {len(survey) - len(off)} more within {AS_FOUND_LISTED_PERCENT:g} % of the design")
    return lines
