"""Which span and wire each surveyed wire point belongs to, from plan geometry alone.

A point goes to the (span, wire) whose plan chord it lies along: beyond
``gap_m`` from either end (jumpers and hardware hang around a structure) and
within ``search_m`` of the chord in plan. A point matching no chord is
unmatched; a point matching two chords is ambiguous and goes to neither, so a
fit never mixes two wires.

Wires stacked in plan (an earth wire above a phase) share one plan chord; for
them :func:`assign_points_by_height` also compares each point's height with
each wire's expected curve (a prior catenary) and takes the nearest wire when
the point lies clearly closer to it than to the next one.
"""
from __future__ import annotations

import numpy as np

from .catenary import catenary_z

__all__ = ["UNMATCHED", "AMBIGUOUS", "assign_points", "assign_points_by_height"]

UNMATCHED = -1
AMBIGUOUS = -2


def assign_points(x_m, y_m, x0_m, y0_m, x1_m, y1_m, search_m, gap_m=5.0):
    """Assign points to chords.

    Parameters
    ----------
    x_m, y_m : array
        Point positions in plan [m].
    x0_m, y0_m, x1_m, y1_m : array
        Plan ends of each chord (one per span and wire) [m].
    search_m : float or array
        Largest plan distance from a chord, per chord or for all [m].
    gap_m : float
        Length ignored at each end of a chord [m].

    Returns
    -------
    tuple of arrays
        (chord index per point, or UNMATCHED / AMBIGUOUS; horizontal distance
        along the chord from its first end [m]; signed plan offset, + to the
        right looking from the first end [m]).
    """
    px, py = np.asarray(x_m, dtype=float), np.asarray(y_m, dtype=float)
    ax, ay = np.asarray(x0_m, dtype=float), np.asarray(y0_m, dtype=float)
    dx, dy = np.asarray(x1_m, dtype=float) - ax, np.asarray(y1_m, dtype=float) - ay
    length = np.hypot(dx, dy)
    search = np.broadcast_to(np.asarray(search_m, dtype=float), length.shape)
    chord = np.full(px.size, UNMATCHED, dtype=np.int64)
    along_out, offset_out = np.full(px.size, np.nan), np.full(px.size, np.nan)
    hits = np.zeros(px.size, dtype=np.int64)
    for i in range(length.size):  # one vectorised pass per chord
        rx, ry = px - ax[i], py - ay[i]
        along = (rx * dx[i] + ry * dy[i]) / length[i]
        offset = (rx * dy[i] - ry * dx[i]) / length[i]
        match = (along >= gap_m) & (along <= length[i] - gap_m) & (np.abs(offset) <= search[i])
        hits += match
        chord[match], along_out[match], offset_out[match] = i, along[match], offset[match]
    chord[hits > 1] = AMBIGUOUS
    along_out[hits > 1] = offset_out[hits > 1] = np.nan
    return chord, along_out, offset_out


def assign_points_by_height(x_m, y_m, z_m, x0_m, y0_m, z0_m, x1_m, y1_m, z1_m, catenary_m, search_m, gap_m=5.0,
                            share=0.25):
    """Assign points to chords in plan, telling wires stacked in plan apart by height.

    A point within plan reach of several chords goes to the one whose expected
    wire (the exact catenary of constant ``catenary_m`` between the chord's
    ends) is nearest to it vertically, when that vertical distance is below
    ``share`` times the vertical distance between the two nearest expected
    wires there; otherwise it is ambiguous.

    Parameters
    ----------
    x_m, y_m, z_m : array
        Points [m].
    x0_m, y0_m, z0_m, x1_m, y1_m, z1_m : array
        Ends (wire clamps) of each chord [m].
    catenary_m : array
        Expected catenary constant of each chord's wire, H/w [m] (a prior; a tension off by 20 %
        moves the curve by a fifth of its sag).
    search_m : float or array
        Largest plan distance from a chord [m].
    gap_m : float
        Length ignored at each end of a chord [m].
    share : float
        Largest vertical distance to the chosen wire, as a share of the separation of the two
        nearest expected wires [-].

    Returns
    -------
    tuple of arrays
        As :func:`assign_points`.
    """
    px, py, pz = (np.asarray(v, dtype=float) for v in (x_m, y_m, z_m))
    ax, ay, az = (np.asarray(v, dtype=float) for v in (x0_m, y0_m, z0_m))
    dx, dy = np.asarray(x1_m, dtype=float) - ax, np.asarray(y1_m, dtype=float) - ay
    dz, c = np.asarray(z1_m, dtype=float) - az, np.asarray(catenary_m, dtype=float)
    length = np.hypot(dx, dy)
    search = np.broadcast_to(np.asarray(search_m, dtype=float), length.shape)
    n = px.size
    best, best_gap, best_z, second_gap, second_z = (np.full(n, -1), np.full(n, np.inf), np.full(n, np.nan),
                                                    np.full(n, np.inf), np.full(n, np.nan))
    along_best, offset_best, hits = np.full(n, np.nan), np.full(n, np.nan), np.zeros(n, dtype=np.int64)
    for i in range(length.size):  # one vectorised pass per chord
        rx, ry = px - ax[i], py - ay[i]
        along = (rx * dx[i] + ry * dy[i]) / length[i]
        offset = (rx * dy[i] - ry * dx[i]) / length[i]
        match = np.flatnonzero((along >= gap_m) & (along <= length[i] - gap_m) & (np.abs(offset) <= search[i]))
        hits[match] += 1
        expected = az[i] + catenary_z(along[match], length[i], dz[i], c[i])
        gap = np.abs(pz[match] - expected)
        better = gap < best_gap[match]
        runner_up = ~better & (gap < second_gap[match])
        second_gap[match[runner_up]], second_z[match[runner_up]] = gap[runner_up], expected[runner_up]
        won = match[better]
        second_gap[won], second_z[won] = best_gap[won], best_z[won]
        best[won], best_gap[won], best_z[won] = i, gap[better], expected[better]
        along_best[won], offset_best[won] = along[match][better], offset[match][better]
    clear = best_gap < share * np.abs(best_z - second_z)
    chord = np.where(hits == 0, UNMATCHED, np.where((hits == 1) | clear, best, AMBIGUOUS)).astype(np.int64)
    along_best[chord < 0] = offset_best[chord < 0] = np.nan
    return chord, along_best, offset_best
