"""Tests of geomet.minerals.formula and geomet.minerals.reference against molmass.

Tolerances: geomet uses the IUPAC 2021 abridged atomic weights (five significant figures), molmass
its own (older, unabridged) table; the largest relative difference of any element is S at 1.5e-4
(32.06 vs 32.0648), so mass fractions and molar masses agree to rtol 3e-4.
"""

from __future__ import annotations

import math

import hypothesis.strategies as st
import pytest
from hypothesis import given
from molmass import ELEMENTS, Formula

from geomet.errors import InputDataError
from geomet.glossary import SCANNED_MINERALS
from geomet.minerals.formula import (
    ATOMIC_WEIGHTS_G_MOL,
    element_mass_fractions,
    element_pct_per_mineral_pct,
    molar_mass_g_mol,
    parse_formula,
)
from geomet.minerals.reference import MINERALS, get_mineral, mineral_reference_table

RTOL = 3e-4  # abridged IUPAC weights vs molmass's table (S differs by 1.5e-4 relative)


def _integer_formula(counts: dict[str, float], scale: int = 100) -> str:
    """Write counts with fractional occupancies as an integer formula molmass can read."""
    parts = []
    for element, n in counts.items():
        k = round(n * scale)
        assert math.isclose(k, n * scale, abs_tol=1e-9)
        parts.append(f"{element}{k}")
    return "".join(parts)


def test_every_atomic_weight_matches_molmass():
    # molmass ELEMENTS table (reference library); rtol 2e-4 covers abridged vs full values
    for element, weight in ATOMIC_WEIGHTS_G_MOL.items():
        assert weight == pytest.approx(ELEMENTS[element].mass, rel=2e-4), element


@pytest.mark.parametrize(
    ("formula", "expected"),
    [
        ("CuFeS2", {"Cu": 1, "Fe": 1, "S": 2}),
        ("CaSO4(H2O)2", {"Ca": 1, "S": 1, "O": 6, "H": 4}),
        ("CaSO4·2H2O", {"Ca": 1, "S": 1, "O": 6, "H": 4}),
        ("CaSO4*0.5H2O", {"Ca": 1, "S": 1, "O": 4.5, "H": 1}),  # bassanite
        ("(Mg5Al)(AlSi3)O10(OH)8", {"Mg": 5, "Al": 2, "Si": 3, "O": 18, "H": 8}),
        ("K0.65Al2(Al0.65Si3.35)O10(OH)2", {"K": 0.65, "Al": 2.65, "Si": 3.35, "O": 12, "H": 2}),
        ("KAl3(SO4)2(OH)6", {"K": 1, "Al": 3, "S": 2, "O": 14, "H": 6}),
        ("Ca2[Mg4(Fe)]Si8O22(OH)2", {"Ca": 2, "Mg": 4, "Fe": 1, "Si": 8, "O": 24, "H": 2}),
        ("Cu2 CO3 (OH)2", {"Cu": 2, "C": 1, "O": 5, "H": 2}),
    ],
)
def test_parse_formula_counts(formula, expected):
    # counts worked by hand from the formula
    got = parse_formula(formula)
    assert got == pytest.approx({k: float(v) for k, v in expected.items()})


@pytest.mark.parametrize(
    ("formula", "match"),
    [
        ("", "non-empty string"),
        ("CuXyS2", "unknown element 'Xy'"),
        ("cufes2", "unexpected character 'c'"),
        ("Ca(SO4", r"unclosed '\('"),
        ("CaSO4)", r"unbalanced '\)'"),
        ("(Mg]", r"unbalanced '\]'"),
        ("Ca2(Mg,Fe)5", "explicit counts"),
        ("CaSO4··2H2O", "empty part around a hydration dot"),
        ("2", "names no element"),
    ],
)
def test_parse_formula_errors(formula, match):
    with pytest.raises(InputDataError, match=match):
        parse_formula(formula)


def test_parse_formula_rejects_non_string():
    with pytest.raises(InputDataError, match="non-empty string"):
        parse_formula(None)


def test_molar_mass_errors_on_unknown_counts():
    with pytest.raises(InputDataError, match="unknown element"):
        molar_mass_g_mol({"Qq": 1.0})
    with pytest.raises(InputDataError, match="unknown element 'Zz'"):
        element_pct_per_mineral_pct("CuS", "Zz")


@pytest.mark.parametrize(
    ("formula", "element", "value"),
    [
        # SCIENCE.md *check* values (recomputed independently by the project)
        ("CuFeS2", "Cu", 0.3463),
        ("CuFeS2", "S", 0.3494),
        ("FeS2", "S", 0.5345),
        ("CaSO4(H2O)2", "S", 0.1862),
        ("CaSO4", "S", 0.2355),
    ],
)
def test_science_check_values(formula, element, value):
    assert element_mass_fractions(formula)[element] == pytest.approx(value, abs=5e-5)
    assert element_pct_per_mineral_pct(formula, element) == pytest.approx(value, abs=5e-5)


def test_molar_mass_against_molmass_hydrate():
    # molmass reads hydrates written as CaSO4(H2O)2
    assert molar_mass_g_mol("CaSO4(H2O)2") == pytest.approx(Formula("CaSO4(H2O)2").mass, rel=RTOL)


@pytest.mark.parametrize("key", sorted(MINERALS))
def test_reference_fractions_match_molmass(key):
    mineral = MINERALS[key]
    reference = Formula(_integer_formula(mineral.atoms)).composition()
    fractions = mineral.mass_fractions
    assert set(fractions) == set(reference.keys())
    for element, frac in fractions.items():
        assert frac == pytest.approx(reference[element].fraction, rel=RTOL), element
    assert sum(fractions.values()) == pytest.approx(1.0, abs=1e-12)
    # molar mass per formula unit: molmass mass of the x100 formula / 100
    assert mineral.molar_mass_g_mol == pytest.approx(
        Formula(_integer_formula(mineral.atoms)).mass / 100, rel=RTOL
    )


def test_reference_covers_scanned_minerals_and_sulfates():
    assert set(SCANNED_MINERALS) <= set(MINERALS)
    assert {"anhydrite", "gypsum"} <= set(MINERALS)
    assert not MINERALS["anhydrite"].scanned
    assert all(MINERALS[m].scanned for m in SCANNED_MINERALS)


def test_solid_solutions_state_their_composition():
    for key in ("chlorite", "biotite", "smectite", "illite", "actinolite", "tourmaline", "epidote"):
        assert MINERALS[key].composition_note, key


def test_reference_table():
    table = mineral_reference_table()
    assert len(table) == len(MINERALS)
    assert table["mineral"].is_unique
    row = table.set_index("mineral").loc["chalcopyrite"]
    assert row["cu_frac"] == pytest.approx(0.3463, abs=5e-5)  # SCIENCE.md check value
    assert row["mo_frac"] == 0.0
    frac_cols = [c for c in table.columns if c.endswith("_frac")]
    assert table[frac_cols].sum(axis=1).to_numpy() == pytest.approx(1.0)


def test_get_mineral_suggests_close_names():
    assert get_mineral("pyrite").formula == "FeS2"
    with pytest.raises(InputDataError, match="did you mean 'chalcopyrite'"):
        get_mineral("chalcopyrte")


_symbols = st.sampled_from(sorted(ATOMIC_WEIGHTS_G_MOL))
_counts = st.dictionaries(_symbols, st.integers(1, 30), min_size=1, max_size=6)


@given(_counts, st.integers(1, 5))
def test_property_fractions_sum_to_one_and_groups_multiply(counts, mult):
    formula = "".join(f"{e}{n}" for e, n in counts.items())
    fractions = element_mass_fractions(formula)
    assert sum(fractions.values()) == pytest.approx(1.0, abs=1e-12)
    assert all(0 < f <= 1 for f in fractions.values())
    # (X)k has k times the molar mass of X, and the same mass fractions
    grouped = f"({formula}){mult}"
    assert molar_mass_g_mol(grouped) == pytest.approx(mult * molar_mass_g_mol(formula))
    assert element_mass_fractions(grouped) == pytest.approx(fractions)
    assert molar_mass_g_mol(formula) == pytest.approx(Formula(formula).mass, rel=RTOL)
