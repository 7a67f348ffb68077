"""Stages: checks that need the spans or the wires, and the warnings that matter.

``check_spans`` runs right after the spans are built: it refuses a station
spacing wider than the shortest span, and warns of very long spans, of tension
sections whose adjacent spans differ by 2x or more (the ruling-span assumption
is weak there) and of structures in the band along the terrain's edge.
``check_sags`` runs once the wires are drawn and warns of spans whose sag is
more than 5 % of the span. Warnings go to ``ctx.warn``: the terminal summary
and the ``run_info`` layer both list them.

References
----------
.. [1] Douglass, D.A. and Thrash, R., "Sag and tension of conductor", ch. 14
   in L.L. Grigsby (ed.), Electric Power Generation, Transmission and
   Distribution, 3rd ed., CRC Press, 2012 (parabola valid for small sag
   ratios; ruling span).
.. [2] McDonald and Peyrot, ASCE: the ruling span is a poor approximation
   when adjacent spans differ by about 2x or in steep terrain.
"""
from __future__ import annotations

import numpy as np

from routesag.errors import ProjectError
from routesag.pipeline import Stage
from routesag.wording import plural

#: Sag ratio (sag / horizontal span) above which the parabola and the ruling span lose accuracy.
SAG_RATIO_LIMIT = 0.05
#: Spans longer than this are unusual enough to deserve a second look [m].
LONG_SPAN_M = 1500.0
#: Adjacent spans of one tension section differing by this factor or more make the ruling span weak.
ADJACENT_SPAN_RATIO = 2.0
#: Smallest band along the terrain edge in which a structure is flagged [m].
EDGE_BAND_MIN_M = 10.0
#: Most stations one load case may ask for in one tension section (1,000 km at 1 m): more is a typing error in
#: station_m, not a finer answer. Per section, as sections are the unit of work; a route has no length cap.
MAX_SECTION_STATIONS = 1_000_000
#: Items named in one warning; the rest are counted.
MAX_LISTED = 10


class CheckSpans(Stage):
    name = "check_spans"
    requires = ("project", "spans", "sections", "structures", "terrain", "work_crs")
    provides = ("span_checks",)
    description = ("refuse a station spacing wider than the shortest span; warn of long spans, uneven "
                   "tension sections and structures near the terrain edge")

    def run(self, data, ctx):
        project, spans = data["project"], data["spans"]
        check_station_spacing(project, spans)
        warnings = (long_span_warnings(spans) + uneven_section_warnings(spans)
                    + edge_band_warnings(data["structures"], data["terrain"], data["work_crs"],
                                         edge_band_m(project.station_m)))
        for message in warnings:
            ctx.warn(message)
        return {"span_checks": warnings}


class CheckSags(Stage):
    name = "check_sags"
    requires = ("conductors", "spans")
    provides = ("sag_checks",)
    description = "warn of spans whose sag exceeds 5 % of the span (parabola and ruling span off)"

    def run(self, data, ctx):
        warnings = sag_ratio_warnings(data["conductors"], data["spans"])
        for message in warnings:
            ctx.warn(message)
        return {"sag_checks": warnings}


def check_station_spacing(project, spans) -> None:
    """Refuse a station spacing wider than the shortest span (the span would get no inner station),
    or so fine that one load case needs more than :data:`MAX_SECTION_STATIONS` stations in one tension section.

    Raises
    ------
    ProjectError
        Naming the project file, the key and the shortest span or the longest section and its station count.
    """
    section_m = spans.groupby("section_id", sort=False)["span_m"].sum()
    longest, length_m = section_m.idxmax(), float(section_m.max())
    stations = length_m / project.station_m
    if stations > MAX_SECTION_STATIONS:
        raise ProjectError(f"project file {project.path}: [clearance] station_m = {project.station_m:g} m asks "
                           f"for {stations:.3g} stations per load case in tension section {longest} "
                           f"({length_m:.0f} m; at most {MAX_SECTION_STATIONS:.0e} per section); use at least "
                           f"{length_m / MAX_SECTION_STATIONS:.3g} m")
    shortest = spans.loc[spans["span_m"].idxmin()]
    if project.station_m > shortest["span_m"]:
        raise ProjectError(f"project file {project.path}: [clearance] station_m = {project.station_m:g} m is "
                           f"larger than the shortest span {shortest['span_id']} ({shortest['span_m']:.1f} m); "
                           f"use at most {shortest['span_m']:.1f} m")


def edge_band_m(station_m: float) -> float:
    """Width of the band along the terrain edge in which structures are flagged [m]."""
    return max(2.0 * station_m, EDGE_BAND_MIN_M)


def long_span_warnings(spans) -> list[str]:
    """One warning naming every span longer than :data:`LONG_SPAN_M`."""
    long = spans[spans["span_m"] > LONG_SPAN_M]
    if long.empty:
        return []
    items = [f"{row.span_id} ({row.span_m:.0f} m)" for row in long.itertuples()]
    return [f"{plural(len(items), 'span')} longer than {LONG_SPAN_M:.0f} m: {_listing(items)}; check the structure "
            "positions and whether these crossings need their own design"]


def adjacent_span_ratios(span_m: np.ndarray) -> np.ndarray:
    """Ratio longer/shorter of each pair of consecutive spans (length n - 1)."""
    a, b = span_m[:-1], span_m[1:]
    return np.maximum(a, b) / np.minimum(a, b)


def uneven_section_warnings(spans) -> list[str]:
    """One warning naming each pair of adjacent spans in a section that differ by 2x or more."""
    items = []
    for section_id, group in spans.groupby("section_id", sort=False):
        ids, lengths = group["span_id"].to_numpy(), group["span_m"].to_numpy(dtype=float)
        for i in np.flatnonzero(adjacent_span_ratios(lengths) >= ADJACENT_SPAN_RATIO):
            items.append(f"{section_id}: {ids[i]} ({lengths[i]:.0f} m) next to {ids[i + 1]} "
                         f"({lengths[i + 1]:.0f} m)")
    if not items:
        return []
    return [f"{len(items)} pair(s) of adjacent spans in one tension section differ by "
            f"{ADJACENT_SPAN_RATIO:g}x or more, so the ruling-span tension is a weak approximation there: "
            f"{_listing(items)}; check these spans one by one or add a strain structure"]


def edge_band_warnings(structures, terrain, crs, band_m: float) -> list[str]:
    """One warning naming the structures within ``band_m`` of the terrain edge or outside it.

    A structure is in the band when any of eight points at ``band_m`` around it
    (in the working CRS) falls outside the raster footprint; this works
    whatever the raster's own CRS.
    """
    x, y = structures["x"].to_numpy(dtype=float), structures["y"].to_numpy(dtype=float)
    angles = np.linspace(0.0, 2.0 * np.pi, 8, endpoint=False)
    ring_x = x[:, None] + band_m * np.cos(angles)[None, :]
    ring_y = y[:, None] + band_m * np.sin(angles)[None, :]
    centre_in = terrain.contains(x, y, crs=crs)
    ring_in = terrain.contains(ring_x, ring_y, crs=crs).all(axis=1)
    ids = structures["structure_id"].astype(str).to_numpy()
    items = ([f"{sid} (outside)" for sid in ids[~centre_in]]
             + [str(sid) for sid in ids[centre_in & ~ring_in]])
    if not items:
        return []
    return [f"{plural(len(items), 'structure')} within {band_m:g} m of the terrain edge or outside it: "
            f"{_listing(items)}; the wire near them may hang over missing terrain (unknown clearance)"]


def sag_ratio_warnings(profiles, spans) -> list[str]:
    """One warning naming the spans whose worst sag ratio (sag / span) exceeds :data:`SAG_RATIO_LIMIT`."""
    span_m = dict(zip(spans["span_id"], spans["span_m"].to_numpy(dtype=float)))  # one look-up per profile
    worst: dict[str, tuple[float, str]] = {}
    for p in profiles:
        ratio = p.sag_m / float(span_m[p.span_id])
        if ratio > worst.get(p.span_id, (-np.inf, ""))[0]:
            worst[p.span_id] = (ratio, p.load_case)
    items = [f"{span_id} ({ratio * 100:.1f} % in {case})" for span_id, (ratio, case) in worst.items()
             if ratio > SAG_RATIO_LIMIT]
    if not items:
        return []
    verb, their = ("sags", "its") if len(items) == 1 else ("sag", "their")
    return [f"{plural(len(items), 'span')} {verb} more than {SAG_RATIO_LIMIT * 100:g} % of {their} length: "
            f"{_listing(items)}; the ruling-span tension and parabolic estimates lose accuracy there (the wire "
            "itself is drawn as an exact catenary): check the stringing tension"]


def _listing(items: list[str]) -> str:
    shown = ", ".join(items[:MAX_LISTED])
    more = len(items) - MAX_LISTED
    return shown + (f" and {more} more" if more > 0 else "")
