"""Conductor profiles and the per-station values computed for them, keyed by (section, span, wire, load case).

A :class:`ConductorProfile` is one wire of one span in one load case. A
:class:`Profiles` collection keeps them in order and finds them by key; the
per-station datasets of the section phase (``ground``, ``station_rules``,
``surface``) are :class:`StationField` mappings from a profile's key to its
arrays, never lists matched by position. The station helpers shared by the
terrain, crossings, surface, clearance and unknowns stages live here once.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Iterable, Iterator, NamedTuple

import numpy as np


class ProfileKey(NamedTuple):
    """What names a profile: its tension section, span, wire and load case."""

    section_id: str
    span_id: str
    wire: str
    load_case: str


@dataclass
class ConductorProfile:
    """One wire of one span in one load case: stations along the span and the wire's 3D points."""

    span_id: str
    section_id: str
    load_case: str
    stations_m: np.ndarray      # horizontal distance from the from-support [m]
    xyz: np.ndarray             # (n, 3) wire points in the working CRS [m]
    horizontal_tension_n: float
    max_tension_n: float
    sag_m: float                # vertical distance chord to wire at mid-span [m]
    low_point_m: float          # the wire's lowest point: horizontal distance from the from-support [m]
    catenary_m: float
    blowout_deg: float
    wire: str = ""
    swung_sag_m: float = float("nan")   # mid-span sag in the swung plane, along the load [m]
    blowout_m: float = float("nan")     # largest horizontal distance of the wire from its clamps' vertical plane [m]

    @property
    def key(self) -> ProfileKey:
        # Asked for once per profile by every per-station dataset: kept, and made anew if a naming field changed.
        key = self.__dict__.get("_key")
        if (key is None or key.section_id is not self.section_id or key.span_id is not self.span_id
                or key.wire is not self.wire or key.load_case is not self.load_case):
            key = self.__dict__["_key"] = ProfileKey(self.section_id, self.span_id, self.wire, self.load_case)
        return key


@dataclass
class SurfaceProfile:
    """Distance from each station of one profile to the surface model."""

    distance_m: np.ndarray   # 3D distance to the nearest surface object cell; inf when none within R [m]
    x: np.ndarray            # that cell centre, NaN when none [m]
    y: np.ndarray
    z: np.ndarray
    unknown: np.ndarray      # bool: nodata within reach; the surface check is incomplete there


class StationField(dict):
    """Per-station values of profiles, by :class:`ProfileKey`; ``field.of(profile)`` reads one."""

    def of(self, profile):
        return self[profile.key]


class Profiles:
    """Conductor profiles in run order, found by key; ``profiles.section(id)`` selects one section's."""

    def __init__(self, profiles: Iterable[ConductorProfile] = ()):
        self._items = list(profiles)
        self._index = {p.key: i for i, p in enumerate(self._items)}  # in run order, as keys() gives them
        if len(self._index) != len(self._items):
            raise ValueError("two conductor profiles share one (section, span, wire, load case) key")

    def __iter__(self) -> Iterator[ConductorProfile]:
        return iter(self._items)

    def __len__(self) -> int:
        return len(self._items)

    def __bool__(self) -> bool:
        return bool(self._items)

    def __getitem__(self, item) -> ConductorProfile:
        return self._items[self._index[item]] if isinstance(item, tuple) else self._items[item]

    def __repr__(self) -> str:
        return f"Profiles({len(self)} profiles in {len(self.section_ids())} sections)"

    def keys(self) -> list[ProfileKey]:
        return list(self._index)

    def section_ids(self) -> list[str]:
        return list(dict.fromkeys(p.section_id for p in self._items))

    def section(self, section_id: str) -> "Profiles":
        return Profiles(p for p in self._items if p.section_id == section_id)

    @classmethod
    def concat(cls, parts: Iterable["Profiles"]) -> "Profiles":
        return cls(p for part in parts for p in part)


def by_span(profiles) -> list[list[ConductorProfile]]:
    """Profiles grouped by span (all its wires and load cases), in first-seen order."""
    groups: dict[tuple[str, str], list[ConductorProfile]] = {}
    for p in profiles:
        groups.setdefault((p.section_id, p.span_id), []).append(p)
    return list(groups.values())


def stacked_xy(profiles) -> np.ndarray:
    """Plan points of every station of ``profiles``, one (n, 2) array in profile order."""
    profiles = list(profiles)
    return np.concatenate([p.xyz[:, :2] for p in profiles]) if profiles else np.empty((0, 2))


def split_by_profile(values, profiles) -> StationField:
    """Cut arrays laid out like :func:`stacked_xy` back into one slice per profile, by key.

    ``values`` is one array or a tuple of arrays of the same length.
    """
    profiles = list(profiles)
    bounds = np.cumsum([0] + [len(p.xyz) for p in profiles])
    field = StationField()
    for p, a, b in zip(profiles, bounds[:-1], bounds[1:], strict=True):
        field[p.key] = tuple(v[a:b] for v in values) if isinstance(values, tuple) else values[a:b]
    return field


def profile_identity(profile) -> dict:
    """Columns that name a profile: span, load case and, when the profile has one, the wire."""
    identity = {"span_id": profile.span_id, "load_case": profile.load_case}
    wire = getattr(profile, "wire", None)
    if wire is not None:
        identity["wire"] = wire
    return identity


def station_edges(stations_m: np.ndarray) -> np.ndarray:
    """Where each station's share of the wire begins and ends: the span ends and the mid-points between [m]."""
    return np.concatenate([[stations_m[0]], (stations_m[1:] + stations_m[:-1]) / 2.0, [stations_m[-1]]])


def station_lengths(stations_m: np.ndarray) -> np.ndarray:
    """Length of conductor (horizontal) each station stands for: half the gap to each neighbour [m]."""
    return np.diff(station_edges(stations_m))


def runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """Index ranges [first, last] of each contiguous True stretch."""
    padded = np.concatenate([[False], mask, [False]]).astype(np.int8)
    change = np.flatnonzero(np.diff(padded))
    return [(int(a), int(b) - 1) for a, b in zip(change[::2], change[1::2])]


class StationStack:
    """The stations of several profiles laid end to end, so a section's checks are a few array operations.

    Per-station arrays are stacked in profile order (as :func:`stacked_xy`);
    per-profile results come back from segment reductions, in the same order.
    Runs of stations never cross from one profile into the next.
    """

    def __init__(self, profiles):
        self.profiles = list(profiles)
        self.lengths = np.fromiter((len(p.xyz) for p in self.profiles), dtype=np.int64, count=len(self.profiles))
        self.bounds = np.concatenate([[0], np.cumsum(self.lengths)])
        self.starts = self.bounds[:-1]

    def __len__(self) -> int:
        return int(self.bounds[-1])

    def stack(self, arrays, dtype=float) -> np.ndarray:
        """One array from one array per profile (in profile order)."""
        arrays = list(arrays)
        return np.concatenate(arrays).astype(dtype, copy=False) if arrays else np.empty(0, dtype)

    def z(self) -> np.ndarray:
        """Wire elevation of every station [m]."""
        return self.stack(p.xyz[:, 2] for p in self.profiles)

    def stations_m(self) -> np.ndarray:
        """Station of every station along its span [m]."""
        return self.stack(p.stations_m for p in self.profiles)

    def per_station(self, values) -> np.ndarray:
        """One value per profile repeated over its stations."""
        return np.repeat(np.asarray(values), self.lengths)

    def slice(self, i: int) -> slice:
        """Where profile ``i`` lies in the stacked arrays."""
        return slice(int(self.bounds[i]), int(self.bounds[i + 1]))

    def take(self, arrays, index, dtype=float) -> np.ndarray:
        """Values at stacked station ``index`` from one array per profile (rows for 2D arrays), in order."""
        owner = self.profile_of(index)
        local = np.asarray(index) - self.starts[owner]
        values = [arrays[i][j] for i, j in zip(owner.tolist(), local.tolist())]
        return np.array(values, dtype=dtype) if values else np.empty(0, dtype)

    def profile_of(self, index) -> np.ndarray:
        """Which profile each stacked station index belongs to."""
        return np.searchsorted(self.bounds, index, side="right") - 1

    def any(self, mask: np.ndarray) -> np.ndarray:
        """Whether each profile has a True station."""
        return self.reduce(np.logical_or, mask, False)

    def any_nan(self, values: np.ndarray) -> np.ndarray:
        """Whether each profile has a NaN value (the minimum propagates NaN: one pass, no mask)."""
        return np.isnan(self.reduce(np.minimum, values, 0.0))

    def reduce(self, ufunc, values: np.ndarray, empty) -> np.ndarray:
        """``ufunc`` reduced over each profile's stations (``empty`` for a profile with none)."""
        out = np.full(len(self.profiles), empty, dtype=np.result_type(values, np.asarray(empty)))
        filled = self.lengths > 0
        if filled.any():
            out[filled] = ufunc.reduceat(values, self.starts[filled])
        return out

    def first_minimum(self, values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """The smallest value of each profile (inf for none) and the stacked index of its first station
        holding it (the profile's start when all are inf, -1 when it has no stations). ``values`` holds no NaN."""
        smallest = self.reduce(np.minimum, values, np.inf)
        at = np.flatnonzero(values == self.per_station(smallest))
        first = at[np.minimum(np.searchsorted(at, self.starts), max(len(at) - 1, 0))] if len(at) else self.starts
        return smallest, np.where(self.lengths > 0, first, -1)

    def runs(self, mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Stacked index ranges [first, last] of each contiguous True stretch, cut where a profile ends."""
        if not len(mask):
            return np.empty(0, np.int64), np.empty(0, np.int64)
        opens = mask.copy()
        opens[1:] &= ~mask[:-1]
        closes = mask.copy()
        closes[:-1] &= ~mask[1:]
        begins = self.starts[self.lengths > 0]
        opens[begins] = mask[begins]
        ends = self.bounds[1:][self.lengths > 0] - 1
        closes[ends] = mask[ends]
        return np.flatnonzero(opens), np.flatnonzero(closes)


def profile_keys(profiles) -> list[ProfileKey]:
    """The keys of ``profiles`` in order (kept by a :class:`Profiles` collection, so not made again)."""
    return profiles.keys() if isinstance(profiles, Profiles) else [p.key for p in profiles]


def identity_columns(profiles) -> dict[str, list]:
    """:func:`profile_identity` of every profile as columns (``wire`` when any profile has one)."""
    profiles = list(profiles)
    columns = {"span_id": [p.span_id for p in profiles], "load_case": [p.load_case for p in profiles]}
    wires = [getattr(p, "wire", None) for p in profiles]
    if any(w is not None for w in wires):
        columns["wire"] = [np.nan if w is None else w for w in wires]
    return columns
