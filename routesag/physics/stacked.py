"""The stations of many wires in one array, so a tension section's spans, wires and load cases are computed at once.

Wire ``k``'s stations are ``values[bounds[k]:bounds[k + 1]]``, increasing
and without repeats; ``wire`` gives, for every station, the index of its
wire. Per-wire parameters (clamps, tension, load) are arrays indexed by
``wire``, so one numpy expression evaluates every wire at every station.
"""

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["StackedStations"]


@dataclass(frozen=True)
class StackedStations:
    """Increasing, distinct stations of ``n_wires`` wires, laid end to end.

    Attributes
    ----------
    values : numpy.ndarray
        Every wire's stations, wire after wire [m].
    bounds : numpy.ndarray of int
        ``n_wires + 1`` offsets: wire ``k`` holds ``values[bounds[k]:bounds[k + 1]]``.
    """

    values: np.ndarray
    bounds: np.ndarray

    @property
    def n_wires(self) -> int:
        return len(self.bounds) - 1

    @property
    def counts(self) -> np.ndarray:
        """Number of stations of each wire."""
        return np.diff(self.bounds)

    @property
    def wire(self) -> np.ndarray:
        """Wire index of every station."""
        return np.repeat(np.arange(self.n_wires), self.counts)

    def split(self) -> list[np.ndarray]:
        """Each wire's stations, as views into :attr:`values`."""
        return [self.values[a:b] for a, b in zip(self.bounds[:-1], self.bounds[1:])]

    def neighbours(self) -> np.ndarray:
        """True for each pair of consecutive entries of :attr:`values` that belong to one wire (length n - 1)."""
        wire = self.wire
        return wire[1:] == wire[:-1]

    @classmethod
    def of(cls, arrays) -> "StackedStations":
        """Stack per-wire arrays that are already increasing and distinct."""
        arrays = [np.asarray(a, dtype=float) for a in arrays]
        bounds = np.concatenate([[0], np.cumsum([len(a) for a in arrays], dtype=np.int64)])
        return cls(np.concatenate(arrays) if arrays else np.empty(0), bounds)

    @classmethod
    def gather(cls, values, wire, n_wires: int, with_source: bool = False):
        """Sorted distinct stations of each wire from ``values`` in any order, ``wire`` naming each one's wire.

        The result equals ``np.unique`` of each wire's values, wire by wire. With ``with_source``, also the
        index in ``values`` of each station kept.
        """
        order, v, w, same = _wire_major_order(np.asarray(values, dtype=float), np.asarray(wire, dtype=np.int64))
        fresh = np.ones(len(v), dtype=bool)
        fresh[1:] = ~same | (v[1:] != v[:-1])
        v, w = v[fresh], w[fresh]
        stations = cls(v, np.concatenate([[0], np.cumsum(np.bincount(w, minlength=n_wires), dtype=np.int64)]))
        return (stations, order[fresh]) if with_source else stations

    def with_extra(self, values, wire, with_source: bool = False):
        """These stations and ``values`` (of wires ``wire``), sorted and distinct per wire.

        With ``with_source``, also where each station comes from: ``i < len(self.values)`` is this one's
        ``values[i]``, else the added ``values[i - len(self.values)]``.
        """
        return StackedStations.gather(np.concatenate([self.values, values]),
                                      np.concatenate([self.wire, np.asarray(wire, dtype=np.int64)]), self.n_wires,
                                      with_source)


def _wire_major_order(values, wire):
    """Indices that sort by wire, then by value (exactly, also where values of one wire lie within rounding);
    the values and wires in that order, and where consecutive ones share a wire."""
    if not len(values):
        return np.arange(0), values, wire, np.zeros(0, dtype=bool)
    low, high = float(values.min()), float(values.max())
    if not (math.isfinite(low) and math.isfinite(high)):
        raise ValueError("stations must be finite")
    # One float key: each wire's values shifted past the previous wire's by more than their whole range, so
    # a stable sort of the key orders by wire; the shift's rounding (far below the 1-unit gap) can only swap
    # values of one wire that lie within it, which the check below puts right.
    order = np.argsort((values - low) + wire * (high - low + 1.0), kind="stable")
    v = values[order]
    counts = np.bincount(wire)
    w = np.repeat(np.arange(len(counts)), counts)   # wire[order], as the sort grouped them
    same = w[1:] == w[:-1]
    swapped = np.flatnonzero(same & (v[1:] < v[:-1]))
    for k in np.unique(w[swapped]):
        a, b = np.searchsorted(w, [k, k + 1])
        order[a:b] = order[a:b][np.argsort(values[order[a:b]], kind="stable")]
        v[a:b] = values[order[a:b]]
    return order, v, w, same
