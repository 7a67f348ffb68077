"""Plan overview: structures, spans coloured by tension section, ranked hotspots, scale bar, north arrow.

A long line or several lines are paged: each page shows at most ``SPANS_PER_PAGE`` spans of one line.
"""
from __future__ import annotations

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from routesag.visual import palette  # noqa: E402

SPANS_PER_PAGE = 20
SECTION_COLOURS = [palette.OKABE_ITO[k] for k in ("blue", "bluish_green", "sky_blue", "reddish_purple")]


def pages(results):
    """(line_id, spans frame) per page."""
    spans = results["spans"]
    for line_id, group in spans.groupby(spans["line_id"].astype(str), sort=False):
        for start in range(0, len(group), SPANS_PER_PAGE):
            yield line_id, group.iloc[start:start + SPANS_PER_PAGE]


def figure_size(spans) -> tuple[float, float]:
    """Width fixed for the page [in]; height follows the plan's shape so a long, flat line leaves no empty band."""
    xy = np.vstack([np.asarray(g.coords)[:, :2] for g in spans.geometry])
    dx, dy = np.ptp(xy[:, 0]), np.ptp(xy[:, 1])
    return 11.0, float(np.clip(11.0 * dy / max(dx, 1.0) + 2.0, 4.5, 8.5))


def draw_overview(results, line_id, spans):
    fig, ax = plt.subplots(figsize=figure_size(spans), layout="constrained")
    sections = list(dict.fromkeys(spans["section_id"].astype(str)))
    for k, section in enumerate(sections):
        mine = spans[spans["section_id"].astype(str) == section]
        for j, geom in enumerate(mine.geometry):
            x, y = np.asarray(geom.coords)[:, 0], np.asarray(geom.coords)[:, 1]
            ax.plot(x, y, color=SECTION_COLOURS[k % len(SECTION_COLOURS)], linewidth=2.5,
                    label=f"tension section {section}" if j == 0 else None, gid=f"section:{section}")
    ids = set(spans["from_id"].astype(str)) | set(spans["to_id"].astype(str))
    structures = results["structures"]
    mine = structures[(structures["line_id"].astype(str) == line_id) & structures["structure_id"].astype(str).isin(ids)]
    for _, s in mine.iterrows():
        strain = str(s["kind"]) == "strain"
        ax.plot(s.geometry.x, s.geometry.y, marker="s" if strain else "o", markersize=7 if strain else 5,
                color=palette.STRUCTURE, markerfacecolor="white" if not strain else palette.STRUCTURE,
                linestyle="none", gid=f"structure:{s['structure_id']}")
        ax.annotate(str(s["structure_id"]), (s.geometry.x, s.geometry.y), xytext=(4, -12),
                    textcoords="offset points", fontsize=8)
    _draw_hotspots(ax, results, set(spans["span_id"].astype(str)))
    ax.set_aspect("equal", adjustable="datalim")
    ax.margins(0.08)
    fig.canvas.draw()  # settle the limits the equal aspect sets before sizing the scale bar
    _scale_bar(ax)
    _north_arrow(ax)
    ax.set_xlabel("easting [m]")
    ax.set_ylabel("northing [m]")
    ax.ticklabel_format(useOffset=False, style="plain")
    ax.legend(loc="upper left", fontsize=9, framealpha=0.9)
    ax.set_title(f"line {line_id}: plan ({results.run_info.get('note.crs', 'CRS unknown')}); "
                 "square = strain structure, circle = suspension", fontsize=11)
    return fig


def _draw_hotspots(ax, results, span_ids):
    hotspots = results["hotspots"]
    mine = hotspots[hotspots["span_id"].astype(str).isin(span_ids)]
    # Hotspots close together would print their labels on top of each other: fan the offsets out.
    offsets = [(12, 10), (12, -26), (-80, 10), (-80, -26)]
    for k, (_, h) in enumerate(mine.sort_values("rank").iterrows()):
        ax.plot(h.geometry.x, h.geometry.y, marker="o", markersize=16, linestyle="none",
                color=palette.deficit_colour(h["deficit_m"]), markeredgecolor="black", alpha=0.9,
                label="hotspot (rank, deficit)" if k == 0 else None, gid=f"hotspot:{h['rank']}")
        ax.annotate(f"#{int(h['rank'])}  {h['deficit_m']:.2f} m", (h.geometry.x, h.geometry.y),
                    xytext=offsets[k % len(offsets)], textcoords="offset points", fontsize=10, fontweight="bold",
                    bbox={"boxstyle": "round", "fc": "white", "ec": "black", "alpha": 0.85})


def _scale_bar(ax):
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    raw = (x1 - x0) / 5.0
    length = 10 ** np.floor(np.log10(raw))
    length = max(m * length for m in (1, 2, 5) if m * length <= raw)
    xs, ys = x1 - 0.05 * (x1 - x0) - length, y0 + 0.05 * (y1 - y0)
    ax.plot([xs, xs + length], [ys, ys], color="black", linewidth=4, solid_capstyle="butt", gid="scale_bar")
    ax.text(xs + length / 2, ys + 0.015 * (y1 - y0), f"{length:g} m", ha="center", va="bottom", fontsize=9)


def _north_arrow(ax):
    # Grid north: the axes are the projected CRS's easting and northing.
    ax.annotate("N", xy=(0.95, 0.95), xytext=(0.95, 0.83), xycoords="axes fraction", ha="center",
                fontsize=12, fontweight="bold", arrowprops={"arrowstyle": "-|>", "color": "black", "lw": 2},
                gid="north_arrow")


def write_overviews(results, folder) -> list[str]:
    names = []
    for n, (line_id, spans) in enumerate(pages(results), start=1):
        fig = draw_overview(results, line_id, spans)
        name = f"overview_{n}.png"
        fig.savefig(folder / name, dpi=100)
        fig.savefig(folder / name.replace(".png", ".svg"))
        plt.close(fig)
        names.append(name)
    return names
