"""Acid consumption: stoichiometric factors checked with molmass, reactivity and oxide Cu."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from molmass import Formula

from geomet.errors import InputDataError
from geomet.forecast import acid

H2SO4_MOLMASS = Formula("H2SO4").mass

# molmass reads whole-number subscripts only: formulas with half occupancies are written here
# doubled (same composition, two formula units), and their mass halved.
DOUBLED = {
    "ankerite": "Ca2FeMg(CO3)4",
    "chlorite": "Mg5Fe5Al4Si6O20(OH)16",
    "biotite": "K2Mg3Fe3Al2Si6O20(OH)4",
    "actinolite": "Ca4Mg7Fe3Si16O44(OH)4",
}


def _reference(mineral):
    if mineral in DOUBLED:
        f = Formula(DOUBLED[mineral])
        return f.mass / 2, {el: c.count / 2 for el, c in f.composition().items()}
    f = Formula(acid.ACID_REACTIONS[mineral].formula)
    return f.mass, {el: c.count for el, c in f.composition().items()}


@pytest.mark.parametrize("mineral", sorted(acid.ACID_REACTIONS))
def test_acid_factor_matches_molmass(mineral):
    # ν M(H2SO4)/M(mineral) with molar masses from the reference library molmass
    # (rtol 3e-4: the atomic weight tables differ slightly).
    reaction = acid.ACID_REACTIONS[mineral]
    expected = reaction.nu_mol_per_mol * H2SO4_MOLMASS / _reference(mineral)[0]
    assert acid.acid_factor_kg_per_kg(mineral) == pytest.approx(expected, rel=3e-4)


@pytest.mark.parametrize("mineral", sorted(acid.ACID_REACTIONS))
def test_nu_is_half_the_cation_charge(mineral):
    # Full dissolution: H+ consumed = charge of the cations released (Si to silica, C to CO2);
    # valences Ca, Mg, Fe(II), Cu 2; Al 3; K 1; epidote's Fe is Fe(III) (textbook chemistry).
    counts = _reference(mineral)[1]
    valence = {"Ca": 2, "Mg": 2, "Fe": 3 if mineral == "epidote" else 2, "Cu": 2, "Al": 3, "K": 1}
    charge = sum(valence.get(el, 0) * n for el, n in counts.items())
    assert acid.ACID_REACTIONS[mineral].nu_mol_per_mol == pytest.approx(charge / 2)


def test_calcite_and_oxide_cu_factors():
    # CaCO3 + H2SO4: 98.08/100.09 kg/kg; oxide Cu: 98.08/63.55 kg acid per kg Cu (science notes).
    assert acid.acid_factor_kg_per_kg("calcite") == pytest.approx(98.08 / 100.09, rel=2e-4)
    assert acid.acid_per_kg_cu() == pytest.approx(98.08 / 63.55, rel=2e-4)
    assert float(acid.oxide_cu_acid_kg_t(1.0)) == pytest.approx(10 * 98.08 / 63.55, rel=2e-4)


def test_malachite_factor_equals_its_copper_acid():
    # Consistency: acid per kg malachite = Cu fraction × acid per kg Cu (2 Cu per formula).
    cu_frac = Formula("Cu2CO3(OH)2").composition()["Cu"].fraction
    assert acid.acid_factor_kg_per_kg("malachite") == pytest.approx(
        cu_frac * acid.acid_per_kg_cu(), rel=3e-4
    )


def test_gangue_acid_sums_reactive_minerals():
    out = acid.gangue_acid_kg_t({"calcite": 1.0, "chlorite": 10.0})
    expected = 10 * (
        1.0 * acid.acid_factor_kg_per_kg("calcite")
        + 10.0 * 0.12 * acid.acid_factor_kg_per_kg("chlorite")
    )
    assert float(out) == pytest.approx(expected)
    full = acid.gangue_acid_kg_t({"chlorite": 10.0}, reactivity={"chlorite": 1.0})
    assert float(full) == pytest.approx(100 * acid.acid_factor_kg_per_kg("chlorite"))


def test_gangue_acid_types_and_nan():
    s = pd.Series([1.0, np.nan], index=["a", "b"])
    out = acid.gangue_acid_kg_t({"calcite": s})
    assert isinstance(out, pd.Series)
    assert out["b"] == 0.0
    arr = acid.gangue_acid_kg_t({"calcite": np.array([1.0, 2.0])})
    np.testing.assert_allclose(arr, [9.799, 19.598], rtol=1e-3)


def test_acid_errors():
    with pytest.raises(InputDataError, match="no acid dissolution reaction for mineral 'quartz'"):
        acid.acid_factor_kg_per_kg("quartz")
    with pytest.raises(InputDataError, match="oxide Cu minerals go through oxide_cu_acid_kg_t"):
        acid.gangue_acid_kg_t({"malachite": 1.0})
    with pytest.raises(InputDataError, match=r"extraction_frac must be in \[0, 1\]"):
        acid.oxide_cu_acid_kg_t(0.5, extraction_frac=2.0)


@settings(max_examples=50, deadline=None)
@given(
    x=st.lists(
        st.floats(0, 20),
        min_size=len(acid.GANGUE_ACID_MINERALS),
        max_size=len(acid.GANGUE_ACID_MINERALS),
    ),
    d=st.floats(0.01, 5),
)
def test_acid_non_negative_and_rising_with_carbonate(x, d):
    minerals = dict(zip(acid.GANGUE_ACID_MINERALS, x, strict=True))
    a = float(acid.gangue_acid_kg_t(minerals))
    assert a >= 0
    assert float(acid.gangue_acid_kg_t({**minerals, "calcite": minerals["calcite"] + d})) > a
    upper = float(acid.gangue_acid_kg_t(minerals, reactivity=dict.fromkeys(minerals, 1.0)))
    assert a <= upper + 1e-9
