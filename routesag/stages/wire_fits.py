"""Fits of every span and wire of one tension section from its surveyed wire points.

Pure functions over one section's data (used by :mod:`routesag.stages.point_cloud`), so sections can
be run independently: assign the points to (span, wire), fit each
span's catenary, and estimate the section's tension per wire from the good fits.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from routesag.physics.wire_assignment import AMBIGUOUS, UNMATCHED, assign_points, assign_points_by_height
from routesag.physics.wire_fit import FitSettings, fit_catenary, section_tension

FIT_COLUMNS = ["span_id", "from_id", "to_id", "section_id", "wire", "n_points", "n_outliers", "rms_m",
               "coverage", "both_halves", "catenary_m", "horizontal_tension_n", "sag_m", "low_point_m",
               "quality", "reason"]


def fit_section(wire_spans: pd.DataFrame, x_m, y_m, z_m, weight_n_m: dict, search_m=1.5, gap_m=5.0,
                settings: FitSettings = FitSettings()):
    """Fit every (span, wire) row of one section.

    Parameters
    ----------
    wire_spans : DataFrame
        The section's rows of ``wire_spans`` (x0, y0, z0, x1, y1, z1, span_m, ...).
    x_m, y_m, z_m : array
        Wire-class points near the section [m].
    weight_n_m : dict
        Bare weight per metre of each wire by name [N/m].
    search_m : float or array
        Plan search distance per row [m].

    Returns
    -------
    tuple
        (fits DataFrame with :data:`FIT_COLUMNS`, list of CatenaryFit aligned with it,
        counts {"unmatched": n, "ambiguous": n}).
    """
    rows = wire_spans.reset_index(drop=True)
    chord, along = assign_section(rows, x_m, y_m, search_m, gap_m, z_m)
    z = np.asarray(z_m, dtype=float)
    records, fits = [], []
    for i, row in rows.iterrows():
        mine = chord == i
        fit = fit_catenary(along[mine], z[mine], float(row["span_m"]), float(row["z0"]), float(row["z1"]),
                           settings)
        fits.append(fit)
        records.append({**{k: row[k] for k in ("span_id", "from_id", "to_id", "section_id", "wire")},
                        "n_points": fit.n_points, "n_outliers": fit.n_outliers, "rms_m": fit.rms_m,
                        "coverage": fit.coverage, "both_halves": fit.both_halves, "catenary_m": fit.catenary_m,
                        "horizontal_tension_n": fit.horizontal_tension_n(weight_n_m[row["wire"]]),
                        "sag_m": fit.sag_m, "low_point_m": fit.low_point_m, "quality": fit.quality,
                        "reason": fit.reason})
    counts = {"unmatched": int((chord == UNMATCHED).sum()), "ambiguous": int((chord == AMBIGUOUS).sum())}
    return pd.DataFrame(records, columns=FIT_COLUMNS), fits, counts


def assign_section(rows: pd.DataFrame, x_m, y_m, search_m=1.5, gap_m=5.0, z_m=None):
    """(row index per point, or UNMATCHED / AMBIGUOUS; distance along its chord [m]) for ``rows`` of
    ``wire_spans`` in order. With a ``prior_catenary_m`` column and the points' ``z_m``, wires stacked in
    plan are told apart by height."""
    if z_m is not None and "prior_catenary_m" in rows:
        chord, along, _ = assign_points_by_height(x_m, y_m, z_m, rows["x0"], rows["y0"], rows["z0"], rows["x1"],
                                                  rows["y1"], rows["z1"], rows["prior_catenary_m"], search_m,
                                                  gap_m)
    else:
        chord, along, _ = assign_points(x_m, y_m, rows["x0"], rows["y0"], rows["x1"], rows["y1"], search_m, gap_m)
    return chord, along


def section_estimates(fits: pd.DataFrame, catenary_fits, weight_n_m: dict) -> pd.DataFrame:
    """Per section and wire: as-found horizontal tension from the good fits and its spread [%]."""
    rows = []
    for (section_id, wire), group in fits.groupby(["section_id", "wire"], sort=False):
        good = group.index[group["quality"] == "good"]
        sigmas = [catenary_fits[i].catenary_sigma_m * weight_n_m[wire] for i in good]
        estimate, spread = section_tension(group.loc[good, "horizontal_tension_n"].to_numpy(), sigmas)
        rows.append({"section_id": section_id, "wire": wire, "as_found_tension_n": estimate,
                     "as_found_spread_percent": spread, "n_good_fits": len(good)})
    return pd.DataFrame(rows)
