"""The figures of the sample survey's README, computed from a run of the sample, so text and run cannot drift.

The README holds hand-written prose and generated blocks between markers::

    <!-- figures:NAME -->
    ...generated...
    <!-- /figures:NAME -->

:func:`update_readme` runs the sample project and rewrites every block;
``scripts/make_sample_survey.py`` calls it, and a test checks that the
committed README's blocks are what a fresh run gives.
"""
from __future__ import annotations

import re
import tempfile
from pathlib import Path

KNOLL_SPAN = "L1:T11-T12"
TREE_SPAN = "L1:T14-T15"
STREAM_SPAN = "L1:T05-T06"
CENTRE_PHASE = "phase_b"
PHASES = ("phase_a", "phase_b", "phase_c")
_BLOCK = re.compile(r"(<!-- figures:(?P<name>[a-z_]+) -->\n)(?P<body>.*?)(<!-- /figures:(?P=name) -->)", re.S)


def run_sample(project_path):
    """Run the sample project into a temporary GeoPackage; the result's layers."""
    import routesag

    with tempfile.TemporaryDirectory() as folder:
        return routesag.run(project_path, out=Path(folder) / "sample.gpkg")


def blocks(result) -> dict[str, str]:
    """Every generated block's text, by name."""
    layers = result.layers
    return {"knoll": _knoll(layers["conductors"]), "phases": _phases(layers),
            "places": _places(layers), "hotspots": _hotspots(layers["hotspots"])}


def update_readme(readme_path, project_path) -> dict[str, str]:
    """Rewrite the generated blocks of ``readme_path`` from a run of ``project_path``; returns the blocks."""
    readme = Path(readme_path)
    generated = blocks(run_sample(project_path))
    readme.write_text(fill(readme.read_text(encoding="utf-8"), generated), encoding="utf-8")
    return generated


def fill(text: str, generated: dict[str, str]) -> str:
    """``text`` with each marked block replaced; KeyError for a block with no generator."""
    return _BLOCK.sub(lambda m: m.group(1) + generated[m.group("name")] + m.group(4), text)


def blocks_in(text: str) -> dict[str, str]:
    """The generated blocks as they stand in a README."""
    return {m.group("name"): m.group("body") for m in _BLOCK.finditer(text)}


def _knoll(conductors) -> str:
    span = conductors[(conductors["span_id"] == KNOLL_SPAN) & (conductors["wire"] == CENTRE_PHASE)]
    rows = ["| span T11-T12, phase_b | condition | H [kN] | sag at mid-span [m] | blowout [deg] | "
            "min. clearance [m] |", "|---|---|---|---|---|---|"]
    for _, r in span.iterrows():
        verdict = " (fails 7.5)" if r["min_clearance_m"] < r["required_m"] else ""
        rows.append(f"| {r['load_case']}, {r['temperature_c']:g} C, {r['ice_mm']:g} mm ice, {r['wind_pa']:g} Pa "
                    f"| {r['condition']} | {r['horizontal_tension_n'] / 1e3:.1f} | {r['sag_m']:.1f} | "
                    f"{r['blowout_deg']:.1f} | {r['min_clearance_m']:.2f}{verdict} |")
    return "\n".join(rows) + "\n"


def _phases(layers) -> str:
    conductors, violations = layers["conductors"], layers["clearance_violations"]
    hot = conductors[conductors["load_case"] == "hot"]
    knoll = hot[(hot["span_id"] == KNOLL_SPAN) & hot["wire"].isin(PHASES)]["min_clearance_m"]
    earth = hot[(hot["span_id"] == KNOLL_SPAN) & (hot["wire"] == "earth")]["min_clearance_m"].min()
    others = hot[(hot["span_id"] != KNOLL_SPAN) & hot["wire"].isin(PHASES)]
    nearest = others.loc[others["min_clearance_m"].idxmin()]
    ground = violations[violations["category"] == "ground"]
    return (f"- Hot case, span T11-T12: the three phases clear the ground by {knoll.min():.2f} to "
            f"{knoll.max():.2f} m, below the 7.5 m rule: {len(ground)} ground violations. The earth wire "
            f"clears by {earth:.1f} m.\n"
            f"- Every other span clears by at least {nearest['min_clearance_m']:.1f} m in the hot case "
            f"(the least on {nearest['span_id'].split(':')[-1]}).\n")


def _places(layers) -> str:
    conductors, violations = layers["conductors"], layers["clearance_violations"]
    stretches = layers["unknown_stretches"]
    rows = ["| where | rule | hot | cold |", "|---|---|---|---|"]
    road = violations[violations["category"] == "road"]
    rows.append(f"| T11-T12, over the road | road 8.5 m | {_worst(road, 'hot')} | {_worst(road, 'cold')} |")
    trees = conductors[conductors["span_id"] == TREE_SPAN]
    rows.append(f"| T14-T15, beside the tree row | surface 4.0 m, 3D | {_nearest(trees, 'hot')} | "
                f"{_nearest(trees, 'cold')} |")
    stream = stretches[stretches["span_id"] == STREAM_SPAN]
    rows.append(f"| T05-T06, over the stream | surface model | {_unknown(stream, 'hot')} | "
                f"{_unknown(stream, 'cold')} |")
    return "\n".join(rows) + "\n"


def _worst(violations, case) -> str:
    found = violations[violations["load_case"] == case]
    if len(found) == 0:
        return "clears"
    worst = found.loc[found["clearance_m"].idxmin()]
    return f"{worst['clearance_m']:.2f} m ({worst['wire']}): **fails**"


def _nearest(conductors, case) -> str:
    rows = conductors[conductors["load_case"] == case].dropna(subset=["min_surface_m"])
    if len(rows) == 0:
        return "no object within reach"
    nearest = rows.loc[rows["min_surface_m"].idxmin()]
    verdict = ": **fails**" if nearest["min_surface_m"] < 4.0 else ": clears"
    return f"{nearest['min_surface_m']:.2f} m ({nearest['wire']}){verdict}"


def _unknown(stretches, case) -> str:
    length = stretches.loc[stretches["load_case"] == case, "length_m"].sum()
    wires = stretches.loc[stretches["load_case"] == case, "wire"].nunique()
    return f"unknown over {length:.0f} m of wire ({wires} wires)" if length else "checked"


def _hotspots(hotspots) -> str:
    lines = []
    for _, h in hotspots.sort_values("rank").iterrows():
        lines.append(f"{h['rank']}. {h['category']} on {h['span_id'].split(':')[-1]} ({h['load_cases']}): short by "
                     f"{h['deficit_m']:.2f} m, {h['n_violations']} violations")
    return "\n".join(lines) + "\n"
