"""Which span and wire each surveyed wire point belongs to, from plan geometry alone.

A point goes to the (span, wire) whose plan chord it lies along: beyond
``gap_m`` from either end (jumpers and hardware hang around a structure) and
within ``search_m`` of the chord in plan. A point matching no chord is
unmatched; a point matching two chords is ambiguous and goes to neither, so a
fit never mixes two wires.
"""
from __future__ import annotations

import numpy as np

__all__ = ["UNMATCHED", "AMBIGUOUS", "assign_points"]

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
