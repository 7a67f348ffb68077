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
        return ProfileKey(self.section_id, self.span_id, self.wire, self.load_case)


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
        self._index = {p.key: i for i, p in enumerate(self._items)}
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
        return [p.key for p in self._items]

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
