"""Demo mineral chemistry checked against the molmass library and textbook stoichiometry."""

from __future__ import annotations

import molmass
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from geomet.demo import chemistry
from geomet.demo.deposit import MINERALS, bulk_density_t_m3, element_grades
from geomet.demo.testwork import two_product_recovery_frac

# Integer formulas written for molmass (hydrates as (H2O)n).
MOLMASS_FORMULAS = {
    "chalcopyrite": "CuFeS2",
    "pyrite": "FeS2",
    "bornite": "Cu5FeS4",
    "chalcocite": "Cu2S",
    "covellite": "CuS",
    "molybdenite": "MoS2",
    "gypsum": "CaSO4(H2O)2",
    "anhydrite": "CaSO4",
    "calcite": "CaCO3",
    "dolomite": "CaMg(CO3)2",
    "siderite": "FeCO3",
    "magnetite": "Fe3O4",
    "hematite": "Fe2O3",
    "goethite": "FeO(OH)",
    "kaolinite": "Al2Si2O5(OH)4",
    "halloysite": "Al2Si2O5(OH)4(H2O)2",
    "pyrophyllite": "Al2Si4O10(OH)2",
    "alunite": "KAl3(SO4)2(OH)6",
    "jarosite": "KFe3(SO4)2(OH)6",
    "diaspore": "AlO(OH)",
    "rutile": "TiO2",
    "apatite": "Ca5(PO4)3F",
    "malachite": "Cu2CO3(OH)2",
    "k_feldspar": "KAlSi3O8",
    "white_mica": "KAl2(AlSi3)O10(OH)2",
    "biotite": "K(Mg2Fe)(AlSi3)O10(OH)2",
    "chlorite": "(Mg3Fe2Al)(AlSi3)O10(OH)8",
    "epidote": "Ca2Al2Fe(SiO4)(Si2O7)O(OH)",
    "actinolite": "Ca2(Mg4Fe)Si8O22(OH)2",
    "tourmaline": "NaFe3Al6(BO3)3Si6O18(OH)4",
    "chrysocolla": "Cu2H2Si2O5(OH)4",
}


@pytest.mark.parametrize("mineral", sorted(MOLMASS_FORMULAS))
def test_element_fractions_match_molmass(mineral):
    # reference: molmass (IUPAC atomic weights); rtol 5e-4 because the abridged weights
    # (e.g. S 32.06) differ from molmass's by up to ~2e-4 relative
    comp = molmass.Formula(MOLMASS_FORMULAS[mineral]).composition()
    ours = chemistry.element_fractions(mineral)
    assert set(ours) == set(comp)
    for el, item in comp.items():
        assert ours[el] == pytest.approx(item.fraction, rel=5e-4)


@pytest.mark.parametrize("mineral", ["illite", "smectite", "ankerite"])
def test_fractional_formulas_molar_mass_match_molmass(mineral):
    # reference: molmass element masses summed over the fractional counts (rtol 5e-4, as above)
    counts = chemistry.FORMULAS[mineral]
    ref = sum(molmass.ELEMENTS[el].mass * n for el, n in counts.items())
    assert chemistry.molar_mass_g_mol(counts) == pytest.approx(ref, rel=5e-4)


@pytest.mark.parametrize(
    ("mineral", "element", "expected"),
    [  # check values from the project's science notes (recomputed independently there)
        ("chalcopyrite", "Cu", 0.3463),
        ("chalcopyrite", "S", 0.3494),
        ("pyrite", "S", 0.5345),
        ("gypsum", "S", 0.1862),
        ("anhydrite", "S", 0.2355),
    ],
)
def test_science_note_check_values(mineral, element, expected):
    assert chemistry.element_fractions(mineral)[element] == pytest.approx(expected, abs=1e-4)


def test_featureless_mixture_fractions_sum_to_one():
    assert sum(chemistry.element_fractions("quartz_feldspar").values()) == pytest.approx(1.0)


def test_unknown_mineral_names_the_known_ones():
    with pytest.raises(KeyError, match="unknown demo mineral 'unobtainium'; known: .*pyrite"):
        chemistry.element_fractions("unobtainium")


def test_acid_factors_follow_textbook_stoichiometry():
    m = molmass.Formula
    h2so4 = m("H2SO4").mass
    # CaCO3 + H2SO4 -> CaSO4 + CO2 + H2O: one mole acid per mole calcite (textbook)
    assert chemistry.acid_factor_kg_kg("calcite") == pytest.approx(
        h2so4 / m("CaCO3").mass, rel=5e-4
    )
    # CaMg(CO3)2 + 2 H2SO4: two moles per mole dolomite (textbook)
    assert chemistry.acid_factor_kg_kg("dolomite") == pytest.approx(
        2 * h2so4 / m("CaMg(CO3)2").mass, rel=5e-4
    )
    # clinochlore-type chlorite releases 3 Mg + 2 Fe + 2 Al = 16 protons -> 8 H2SO4
    assert chemistry.acid_factor_kg_kg("chlorite") == pytest.approx(
        8 * h2so4 / m("(Mg3Fe2Al)(AlSi3)O10(OH)8").mass, rel=5e-4
    )
    # 98.08 / 63.55 kg acid per kg Cu from oxides (science notes)
    assert chemistry.acid_per_cu_kg_kg() == pytest.approx(98.08 / 63.55, rel=2e-4)


def test_two_product_formula_check_value():
    # science notes check value (Wills & Finch 2016 two-product formula): f 1.0, c 10.0, t 0.2 % Cu
    assert two_product_recovery_frac(1.0, 10.0, 0.2) == pytest.approx(0.816327, abs=1e-6)
    got = two_product_recovery_frac(
        np.array([1.0, 1.0]), np.array([10.0, 10.0]), np.array([0.2, 0.2])
    )
    np.testing.assert_allclose(got, 0.816327, atol=1e-6)


@settings(max_examples=60, deadline=None)
@given(
    arrays(np.float64, (5, len(MINERALS)), elements=st.floats(0.0, 10.0)),
    arrays(np.float64, 5, elements=st.floats(0.0, 1.0)),
)
def test_element_grades_conserve_mass(minerals, gyp):
    # invariant: element wt% never exceed the mineral mass they come from, asol Cu <= total Cu
    grades = element_grades(minerals, gyp)
    total = minerals.sum(axis=1)
    elems = (
        sum(grades[k] for k in ("cu_pct", "fe_pct", "s_pct", "ca_pct", "mg_pct", "al_pct", "k_pct"))
        + grades["mo_ppm"] / 1e4
    )
    assert np.all(elems <= total + 1e-9)
    assert np.all(grades["cu_asol_pct"] <= grades["cu_pct"] + 1e-12)
    assert all(np.all(v >= 0) for v in grades.values())


def test_element_grades_of_pure_chalcopyrite():
    m = np.zeros((1, len(MINERALS)))
    m[0, MINERALS.index("chalcopyrite")] = 100.0
    g = element_grades(m, np.array([1.0]))
    # molmass reference: CuFeS2 is 34.63 % Cu, 30.43 % Fe, 34.94 % S
    comp = molmass.Formula("CuFeS2").composition()
    assert g["cu_pct"][0] == pytest.approx(100 * comp["Cu"].fraction, rel=5e-4)
    assert g["fe_pct"][0] == pytest.approx(100 * comp["Fe"].fraction, rel=5e-4)
    assert g["s_pct"][0] == pytest.approx(100 * comp["S"].fraction, rel=5e-4)
    assert g["cu_asol_pct"][0] == pytest.approx(0.01 * g["cu_pct"][0])


def test_bulk_density_of_pure_quartz_feldspar_and_pyrite():
    m = np.zeros((2, len(MINERALS)))
    m[0, 0] = 100.0
    m[1, MINERALS.index("pyrite")] = 100.0
    rho = bulk_density_t_m3(m, np.ones(2), np.array([0.0, 0.1]))
    # handbook grain densities (from memory): quartz-plagioclase ~2.64, pyrite 5.01 g/cm3
    np.testing.assert_allclose(rho, [2.64, 0.9 * 5.01], rtol=1e-9)
