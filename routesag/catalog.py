"""The conductor catalog shipped with routesag (``routesag/data/conductors.csv``).

Each row holds one standard conductor: its designation (``name``), the
trade's code word where it has one, the construction, and the six properties
the mechanics need. The ``source`` column says where the dimensions, mass and
rated strength come from; ``elastic_source`` says the same for the final
modulus and the expansion coefficient, ``resistance_source`` for the AC
resistances and ``two_material_source`` for the core and aluminium members
of a composite conductor. Values recalled without a printed
source say "from memory".

Pure standard library (csv, difflib): no pandas, no GIS imports.

References
----------
.. [1] ASTM B232, Concentric-lay-stranded aluminum conductors, coated-steel
   reinforced (ACSR), as reprinted in CPUC General Order 95, Table 23.
.. [2] EN 50182, Conductors for overhead lines - Round wire concentric lay
   stranded conductors.
.. [3] Douglass, D.A. and Thrash, R., "Sag and tension of conductor", ch. 14
   in L.L. Grigsby (ed.), Electric Power Generation, Transmission and
   Distribution, 3rd ed., CRC Press, 2012 (typical final moduli and
   expansion coefficients).
"""
from __future__ import annotations

import csv
import difflib
from dataclasses import dataclass, fields
from functools import lru_cache
from importlib.resources import files

__all__ = ["CatalogEntry", "PROPERTY_FIELDS", "OPTIONAL_FIELDS", "catalog", "find_conductor", "close_matches", "search"]

#: The six numeric properties a conductor needs, as named in the project file and the CSV.
PROPERTY_FIELDS = ("diameter_mm", "area_mm2", "mass_kg_m", "rated_strength_kn", "modulus_gpa", "expansion_per_c")
#: Numeric properties only some rows hold: AC resistance at 25 and 75 degC (for the heat balance) and the
#: two members of a composite conductor (for the two-material model). Empty in the CSV: None.
OPTIONAL_FIELDS = ("resistance_25c_ohm_km", "resistance_75c_ohm_km", "aluminium_area_mm2", "aluminium_modulus_gpa",
                   "aluminium_expansion_per_c", "core_area_mm2", "core_modulus_gpa", "core_expansion_per_c")
#: Text fields a search looks in.
SEARCHED_FIELDS = ("name", "code_word", "type", "standard", "stranding", "source", "note")


@dataclass(frozen=True)
class CatalogEntry:
    """One catalog row; numbers in the units their names carry."""

    name: str
    code_word: str
    type: str
    standard: str
    stranding: str
    diameter_mm: float
    area_mm2: float
    mass_kg_m: float
    rated_strength_kn: float
    modulus_gpa: float
    expansion_per_c: float
    source: str
    elastic_source: str
    note: str
    resistance_25c_ohm_km: float | None = None
    resistance_75c_ohm_km: float | None = None
    resistance_source: str = ""
    aluminium_area_mm2: float | None = None
    aluminium_modulus_gpa: float | None = None
    aluminium_expansion_per_c: float | None = None
    core_area_mm2: float | None = None
    core_modulus_gpa: float | None = None
    core_expansion_per_c: float | None = None
    two_material_source: str = ""

    @property
    def label(self) -> str:
        """Designation with the code word beside it, e.g. ``ACSR 795 kcmil 26/7 Drake``."""
        return f"{self.name} {self.code_word}".strip()

    def properties(self) -> dict[str, float]:
        """The six properties, and the optional ones this row holds, keyed as in the ``[conductor]`` table."""
        optional = {key: getattr(self, key) for key in OPTIONAL_FIELDS if getattr(self, key) is not None}
        return {**{key: getattr(self, key) for key in PROPERTY_FIELDS}, **optional}

    def text(self) -> str:
        """The fields a search looks in, joined, lower case."""
        return " ".join(getattr(self, f) for f in SEARCHED_FIELDS).lower()


@lru_cache(maxsize=1)
def catalog() -> tuple[CatalogEntry, ...]:
    """Every conductor of the shipped catalog, in file order."""
    resource = files("routesag").joinpath("data", "conductors.csv")
    with resource.open("r", encoding="utf-8", newline="") as fh:
        return tuple(_entry(row) for row in csv.DictReader(fh))


def _entry(row: dict) -> CatalogEntry:
    values = {}
    for f in fields(CatalogEntry):
        raw = (row.get(f.name) or "").strip()
        if f.name in OPTIONAL_FIELDS:
            values[f.name] = float(raw) if raw else None
        else:
            values[f.name] = float(raw) if f.name in PROPERTY_FIELDS else raw
    return CatalogEntry(**values)


def _key(text: str) -> str:
    return " ".join(str(text).lower().split())


def find_conductor(name: str) -> CatalogEntry | None:
    """The entry whose name, code word or label equals ``name`` (case and spacing ignored).

    Parameters
    ----------
    name : str
        e.g. ``"drake"``, ``"ACSR 795 kcmil 26/7"`` or ``"243-AL1/39-ST1A"``.

    Returns
    -------
    CatalogEntry or None
    """
    wanted = _key(name)
    for entry in catalog():
        if wanted in {_key(entry.name), _key(entry.code_word), _key(entry.label)} - {""}:
            return entry
    return None


def close_matches(name: str, n: int = 5) -> list[CatalogEntry]:
    """Entries that look like ``name``: those containing it first, then spelling neighbours."""
    wanted = _key(name)
    containing = [e for e in catalog() if wanted and wanted in e.text()]
    by_word = {}
    for entry in catalog():
        for word in (entry.name, entry.code_word, entry.label):
            if word:
                by_word.setdefault(_key(word), entry)
    similar = [by_word[w] for w in difflib.get_close_matches(wanted, list(by_word), n=n, cutoff=0.6)]
    return list(dict.fromkeys(containing + similar))[:n]


def search(text: str = "") -> list[CatalogEntry]:
    """Entries whose text holds every word of ``text`` (case-insensitive); all entries for no text."""
    words = _key(text).split()
    return [e for e in catalog() if all(w in e.text() for w in words)]
