"""index.html: one self-contained page (images beside it, inline style and script, nothing fetched)."""
from __future__ import annotations

import math
from html import escape

from routesag.visual import palette, tables

CAUTION = ("This report is an engineering screening aid, not a design check. Loads and required clearances must "
           "come from the governing code (NESC, EN 50341 and its national annex, local rules), and every result "
           "must be confirmed by a licensed engineer before it is relied on. A clearance marked unknown was not "
           "checked: it is not clear.")

STYLE = f"""
body {{ font-family: system-ui, sans-serif; margin: 1.5rem auto; max-width: 80rem; padding: 0 1rem; color: #111; }}
h1 {{ font-size: 1.5rem; margin-bottom: .2rem; }}
.caution {{ border: 2px solid {palette.VIOLATION}; background: #fff7f0; padding: .6rem .9rem; margin: 1rem 0; }}
table {{ border-collapse: collapse; margin: .5rem 0 1.5rem; font-size: .9rem; }}
th, td {{ border: 1px solid #ccc; padding: .25rem .5rem; text-align: left; vertical-align: top; }}
td.num {{ text-align: right; font-variant-numeric: tabular-nums; }}
th.sortable {{ cursor: pointer; background: #f0f0f0; }}
th.sortable::after {{ content: " \\2195"; color: #888; }}
td.hash {{ font-family: monospace; font-size: .8rem; word-break: break-all; }}
.status-violation {{ background: {palette.VIOLATION}; color: #fff; font-weight: bold; }}
.status-unknown {{ background: {palette.UNKNOWN}; font-weight: bold; }}
.status-clear {{ color: {palette.OKABE_ITO['bluish_green']}; }}
.swatch {{ display: inline-block; width: 1.4em; height: .8em; vertical-align: middle; border: 1px solid #333; }}
figure {{ margin: 1rem 0 2rem; }}
figure img {{ max-width: 100%; height: auto; border: 1px solid #ddd; }}
.note {{ font-size: .8rem; }}
.warnings li {{ color: #7a2e00; }}
@media print {{
  body {{ max-width: none; margin: 0; font-size: 10pt; }}
  th.sortable::after, .noprint {{ content: none; display: none; }}
  a {{ color: inherit; text-decoration: none; }}
  figure, tr, .caution {{ break-inside: avoid; }}
  h2, h3 {{ break-after: avoid; }}
  .status-violation {{ -webkit-print-color-adjust: exact; print-color-adjust: exact; }}
}}
"""

# Sort a table by the clicked column; cells carry their sort value in data-v (numbers sort as numbers).
SCRIPT = """
document.querySelectorAll('table.sortable').forEach(function (table) {
  table.querySelectorAll('th.sortable').forEach(function (th, col) {
    th.addEventListener('click', function () {
      var body = table.tBodies[0], rows = Array.from(body.rows);
      var up = th.dataset.dir !== 'asc'; th.dataset.dir = up ? 'asc' : 'desc';
      rows.sort(function (a, b) {
        var x = a.cells[col].dataset.v, y = b.cells[col].dataset.v;
        var nx = parseFloat(x), ny = parseFloat(y), r;
        r = (isNaN(nx) || isNaN(ny)) ? String(x).localeCompare(String(y)) : nx - ny;
        return up ? r : -r;
      });
      rows.forEach(function (row) { body.appendChild(row); });
    });
  });
});
"""


def anchor(span_id) -> str:
    return "profile-" + "".join(c if c.isalnum() or c in "-_" else "_" for c in str(span_id))


def _cell(value, digits=2, css=""):
    """A table cell whose sort value is the number itself (unknown sorts first, as the worst)."""
    if isinstance(value, str):
        klass = f' class="{css}"' if css else ""
        return f'<td{klass} data-v="{escape(value)}">{escape(value)}</td>'
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return '<td class="num" data-v="">–</td>'
    return f'<td class="num" data-v="{value:.6g}">{value:.{digits}f}</td>'


def _clearance_cell(worst) -> str:
    """Worst clearance of one load case; says when it is to a surface object and when stretches are unknown."""
    if not isinstance(worst, tuple):
        return _cell(worst)
    value, what, unknown_m = worst
    notes = [what] if what else []
    notes += [f"{unknown_m:.0f} m unknown"] if unknown_m > 0 else []
    extra = f' <span class="note">({escape(", ".join(notes))})</span>' if notes else ""
    css = "num status-unknown" if unknown_m > 0 else "num"
    return f'<td class="{css}" data-v="{value:.6g}">{value:.2f}{extra}</td>'


def _link(span_id, profiles) -> str:
    text = escape(str(span_id))
    if span_id in profiles:
        return f'<td data-v="{text}"><a href="#{anchor(span_id)}">{text}</a></td>'
    return f'<td data-v="{text}">{text}</td>'


def _head(names) -> str:
    return "<thead><tr>" + "".join(f'<th class="sortable">{n}</th>' for n in names) + "</tr></thead>"


def hotspot_table(results, profiles) -> str:
    rows = tables.hotspot_rows(results)
    if not rows:
        return "<p>No clearance violations, so no hotspots.</p>"
    head = _head(["rank", "deficit [m]", "clearance [m]", "required [m]", "category", "load case", "wire",
                  "span", "station [m]", "violations", "load cases"])
    body = []
    for h in rows:
        swatch = f'<span class="swatch" style="background:{palette.deficit_colour(h["deficit_m"])}"></span> '
        body.append("<tr>" + _cell(float(h["rank"]), 0) +
                    f'<td class="num" data-v="{h["deficit_m"]:.6g}">{swatch}{h["deficit_m"]:.2f}</td>' +
                    _cell(float(h["clearance_m"])) + _cell(float(h["required_m"])) + _cell(str(h["category"])) +
                    _cell(str(h["load_case"])) + _cell(str(h.get("wire", ""))) + _link(str(h["span_id"]), profiles) +
                    _cell(float(h["station_m"]), 0) + _cell(float(h["n_violations"]), 0) +
                    _cell(str(h.get("load_cases", ""))) + "</tr>")
    return f'<table class="sortable" id="hotspots">{head}<tbody>{"".join(body)}</tbody></table>'


def span_table(results, profiles) -> str:
    cases = results.case_order()
    as_found = tables.has_as_found(results)
    names = ["span", "from", "to", "section", "span [m]"] + [f"worst clearance {escape(c)} [m] (terrain or object)" for c in cases]
    names += ["status", "unknown [m]", "max tension [% RTS]", "design tension [kN]"]
    names += ["as-found tension [kN]"] if as_found else []
    body = []
    for s in tables.span_rows(results):
        cells = [_link(s["span_id"], profiles), _cell(s["from_id"]), _cell(s["to_id"]), _cell(s["section_id"]),
                 _cell(s["span_m"], 1)]
        cells += [_clearance_cell(s["worst_m"][c]) for c in cases]
        cells += [_cell(s["status"], css=f"status-{s['status']}"), _cell(s["unknown_m"], 0),
                  _cell(s["max_tension_percent_rts"], 1), _cell(s["design_tension_n"] / 1000.0, 1)]
        if as_found:
            cells.append(_cell(s.get("as_found_tension_n", math.nan) / 1000.0, 1))
        body.append("<tr>" + "".join(cells) + "</tr>")
    return f'<table class="sortable" id="spans">{_head(names)}<tbody>{"".join(body)}</tbody></table>'


def _pairs_table(rows, klass="") -> str:
    body = "".join(f"<tr><th>{escape(str(k))}</th><td>{escape(str(v))}</td></tr>" for k, v in rows)
    return f'<table class="{klass}">{body}</table>'


def run_summary(results) -> str:
    info = results.run_info
    facts = [("results file", results.path.name), ("routesag version", info.get("routesag_version", "")),
             ("run (UTC)", info.get("run_utc", "")), ("project file", info.get("project_file", ""))]
    inputs = "".join(f"<tr><th>{escape(role)}</th><td>{escape(path)}</td><td class=\"hash\">{escape(sha)}</td></tr>"
                     for role, path, sha in tables.inputs(results))
    warnings = tables.warnings(results)
    warned = ("<ul class=\"warnings\">" + "".join(f"<li>{escape(w)}</li>" for w in warnings) + "</ul>"
              if warnings else "<p>No warnings.</p>")
    return (f"{_pairs_table(facts)}<h3>Inputs</h3><table><tr><th>input</th><th>file</th><th>SHA-256</th></tr>"
            f"{inputs}</table><h3>Settings that matter</h3>{_pairs_table(tables.key_settings(results))}"
            f"<details class=\"noprint\"><summary>every setting</summary>"
            f"{_pairs_table(tables.all_settings(results))}</details><h3>Warnings</h3>{warned}")


def drawing_notes(results) -> list[str]:
    """What the figures could not draw as the run saw it: rasters gone or changed, crossings not available."""
    notes = [n for n in (results.raster_note("terrain"), results.raster_note("surface")) if n]
    if results.crossing_areas is None:
        notes.append("crossings or project file changed or gone: the required line shows crossing categories "
                     "only where violated")
    return notes


def counts(results) -> str:
    violations, hotspots = results["clearance_violations"], results["hotspots"]
    unknown = results["unknown_stretches"]
    unknown_m = float(unknown["length_m"].sum()) if len(unknown) else 0.0
    worst = f", worst deficit {hotspots['deficit_m'].max():.2f} m" if len(hotspots) else ""
    return (f"<p><strong>{len(violations)}</strong> clearance violation(s) in <strong>{len(hotspots)}</strong> "
            f"hotspot(s){worst}; <strong>{unknown_m:.0f} m</strong> of conductor in {len(unknown)} stretch(es) "
            f"with unknown clearance; {len(results['tension_exceedances'])} tension limit exceedance(s).</p>")


def profile_section(profiles) -> str:
    figures = []
    for span_id, png in profiles.items():
        svg = png.removesuffix(".png") + ".svg"
        figures.append(f'<figure id="{anchor(span_id)}"><img src="{escape(png)}" alt="profile of span '
                       f'{escape(span_id)}"><figcaption>span {escape(span_id)} '
                       f'(<a href="{escape(png)}">PNG</a>, <a href="{escape(svg)}">SVG</a>)</figcaption></figure>')
    if not figures:
        return "<p>No span has a violation, hotspot or unknown stretch (build with --all for every span).</p>"
    return "".join(figures)


def overview_section(overviews) -> str:
    return "".join(f'<figure><img src="{escape(name)}" alt="plan overview page {n}">'
                   f'<figcaption>plan overview, page {n} (<a href="{escape(name)}">PNG</a>, '
                   f'<a href="{escape(name.removesuffix(".png") + ".svg")}">SVG</a>)</figcaption></figure>'
                   for n, name in enumerate(overviews, start=1))


def index_html(results, profiles: dict, overviews: list) -> str:
    title = escape(tables.description(results))
    drawn = drawing_notes(results)
    notes = ('<ul class="warnings">' + "".join(f"<li>{escape(n)}</li>" for n in drawn) + "</ul>") if drawn else ""
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>{title}</title><style>{STYLE}</style></head>
<body>
<h1>{title}</h1>
<p>Clearance screening report from {escape(results.path.name)}.</p>
<div class="caution" role="note"><strong>Caution.</strong> {escape(CAUTION)}</div>
<section><h2>Result</h2>{counts(results)}{notes}</section>
<section><h2>Hotspots</h2><p class="noprint">Click a column heading to sort.</p>{hotspot_table(results, profiles)}
</section>
<section><h2>Spans</h2>{span_table(results, profiles)}</section>
<section><h2>Plan overview</h2>{overview_section(overviews)}</section>
<section class="profiles"><h2>Span profiles</h2>{profile_section(profiles)}</section>
<section><h2>Run summary</h2>{run_summary(results)}</section>
<script>{SCRIPT}</script>
</body></html>
"""
