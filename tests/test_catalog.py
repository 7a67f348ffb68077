"""The shipped conductor catalog: cited values, coverage, plausibility and look-up."""
import math

import pytest

from routesag.catalog import PROPERTY_FIELDS, catalog, close_matches, find_conductor, search

LB_FT_TO_KG_M = 0.45359237 / 0.3048  # NIST SP 811 (exact definitions of lb and ft)
GO95 = "ASTM B232 via CPUC GO 95 Table 23"

# Rows printed in a published table (FIELD.md section 5): (name or code word, source, diameter_mm, area_mm2,
# mass_kg_m, rated_strength_kn).
CITED = [
    # ASTM B232 tables as reprinted in CPUC GO 95 Table 23 (FIELD.md section 5); weights there in lb/ft.
    ("Drake", GO95, 28.14, 468.6, 1.094 * LB_FT_TO_KG_M, 140.1),
    ("Ibis", GO95, 19.89, 234.2, 0.5464 * LB_FT_TO_KG_M, 72.0),
    ("Partridge", GO95, 16.31, 157.2, 0.3668 * LB_FT_TO_KG_M, 50.0),
    # EN 50182 (FIELD.md section 5).
    ("243-AL1/39-ST1A", "EN 50182", 21.8, 282.5, 0.9801, 85.12),
    ("243-AL1", "EN 50182", 20.3, 242.5, 0.6711, 43.66),
]

# Recalled values listed in FIELD.md section 5 as [mem]; the catalog must say "from memory" for them.
RECALLED = [
    ("Hawk", 21.79, 280.9, 0.657 * LB_FT_TO_KG_M, 86.7),  # from memory (FIELD.md section 5 [mem])
    ("Linnet", 18.31, 198.1, 0.463 * LB_FT_TO_KG_M, 62.7),  # from memory (FIELD.md section 5 [mem])
]

# Typical final modulus [GPa] and expansion [1/C] by construction: FIELD.md section 3 (EN 50182 and handbook
# tables): ACSR 26/7 74-77 GPa and 18.9e-6; 54/7 70 GPa and 19.3e-6; 45/7 61 GPa and 20.9e-6; AAC 55-60 GPa, 23e-6.
ELASTIC = {"26/7": ((74, 77), 18.9e-6), "54/7": ((70, 70), 19.3e-6), "45/7": ((61, 61), 20.9e-6)}


@pytest.mark.parametrize("name, source, diameter_mm, area_mm2, mass_kg_m, strength_kn", CITED)
def test_cited_rows_match_their_tables(name, source, diameter_mm, area_mm2, mass_kg_m, strength_kn):
    entry = find_conductor(name)
    assert entry is not None and entry.source == source
    assert entry.diameter_mm == pytest.approx(diameter_mm, abs=0.005)
    assert entry.area_mm2 == pytest.approx(area_mm2, abs=0.05)
    assert entry.mass_kg_m == pytest.approx(mass_kg_m, rel=1e-3)
    assert entry.rated_strength_kn == pytest.approx(strength_kn, abs=0.05)


@pytest.mark.parametrize("name, diameter_mm, area_mm2, mass_kg_m, strength_kn", RECALLED)
def test_recalled_rows_say_from_memory(name, diameter_mm, area_mm2, mass_kg_m, strength_kn):
    entry = find_conductor(name)
    assert entry.source == "from memory"
    assert (entry.diameter_mm, entry.area_mm2, entry.rated_strength_kn) == (diameter_mm, area_mm2, strength_kn)
    assert entry.mass_kg_m == pytest.approx(mass_kg_m, rel=1e-3)


def test_elastic_values_follow_the_typical_tables():
    for entry in catalog():
        if entry.type == "ACSR" and entry.stranding in ELASTIC:
            (low, high), alpha = ELASTIC[entry.stranding]
            assert low <= entry.modulus_gpa <= high and entry.expansion_per_c == alpha, entry.label
        elif entry.type == "AAC":
            assert 55 <= entry.modulus_gpa <= 60 and entry.expansion_per_c == 23e-6, entry.label
        else:
            assert entry.elastic_source == "from memory", entry.label


def test_catalog_coverage_and_sources():
    entries = catalog()
    assert len(entries) >= 15
    assert {e.source for e in entries} <= {"EN 50182", GO95, "from memory"}
    kinds = {(e.type, e.standard) for e in entries}
    assert {("ACSR", "ASTM B232"), ("AAC", "ASTM B231"), ("AAAC", "ASTM B399"), ("ACSR", "EN 50182"),
            ("AAC", "EN 50182")} <= kinds
    astm_acsr = [e for e in entries if e.standard == "ASTM B232"]
    assert all(e.code_word and e.stranding in e.name and ("kcmil" in e.name or "AWG" in e.name)
               for e in astm_acsr)
    labels = [e.label.lower() for e in entries]
    assert len(set(labels)) == len(labels)


def test_every_row_is_physically_plausible():
    # Independent plausibility: a stranded round conductor fills 70-85 % of its circumscribed circle; its
    # mass per metre is area x density x (1 + lay increment), density 2700 kg/m3 for aluminium and about
    # 7780 for steel (handbook values, from memory), so ACSR lies between the two.
    for e in catalog():
        fill = e.area_mm2 / (math.pi * e.diameter_mm**2 / 4)
        assert 0.70 < fill < 0.85, (e.label, fill)
        density = e.mass_kg_m / (e.area_mm2 * 1e-6)
        low, high = (2700, 2850) if e.type in ("AAC", "AAAC") else (3000, 4100)
        assert low < density < high, (e.label, density)
        strength_mpa = e.rated_strength_kn * 1e3 / e.area_mm2
        assert 120 < strength_mpa < 350, (e.label, strength_mpa)
        assert all(getattr(e, f) > 0 for f in PROPERTY_FIELDS)


@pytest.mark.parametrize("text", ["Drake", "drake", "  DRAKE ", "ACSR 795 kcmil 26/7", "acsr 795 kcmil 26/7 drake"])
def test_find_by_name_or_code_word_ignores_case(text):
    assert find_conductor(text).code_word == "Drake"


def test_unknown_name_has_close_matches():
    assert find_conductor("Drak") is None
    assert "Drake" in [e.code_word for e in close_matches("Drak")]
    assert "Condor" in [e.code_word for e in close_matches("Condr")]


def test_search_needs_every_word():
    assert {e.code_word for e in search("795")} == {"Drake", "Condor", "Arbutus"}
    assert [e.code_word for e in search("795 54/7")] == ["Condor"]
    assert [e.name for e in search("240/40")] == ["243-AL1/39-ST1A"]
    assert len(search("")) == len(catalog())


def test_composite_rows_hold_both_members_with_a_source():
    for entry in catalog():
        members = [entry.aluminium_area_mm2, entry.aluminium_modulus_gpa, entry.aluminium_expansion_per_c,
                   entry.core_area_mm2, entry.core_modulus_gpa, entry.core_expansion_per_c]
        if entry.type == "ACSR":
            assert all(v is not None and v > 0 for v in members), entry.label
            assert "from memory" in entry.two_material_source and "derived" in entry.two_material_source
            # the members add up to the row's total area and, stiffness-weighted, to its composite modulus
            assert entry.aluminium_area_mm2 + entry.core_area_mm2 == pytest.approx(entry.area_mm2, abs=0.2)
            composite = (entry.aluminium_area_mm2 * entry.aluminium_modulus_gpa
                         + entry.core_area_mm2 * entry.core_modulus_gpa) / entry.area_mm2
            assert composite == pytest.approx(entry.modulus_gpa, rel=3e-3), entry.label
        else:
            assert all(v is None for v in members), entry.label


def test_resistances_come_with_a_source():
    drake = find_conductor("Drake")
    # IEEE Std 738-2006 worked example (from memory; FIELD.md §10): 7.283e-5 and 8.688e-5 ohm/m
    assert (drake.resistance_25c_ohm_km, drake.resistance_75c_ohm_km) == (0.07283, 0.08688)
    assert all(e.resistance_source for e in catalog() if e.resistance_25c_ohm_km is not None)
