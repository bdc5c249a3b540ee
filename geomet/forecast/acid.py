"""Sulfuric acid consumption of leach feed: gangue minerals plus dissolved oxide copper.

Stoichiometric factors are derived in code from the mineral formulas (molar masses from
:func:`geomet.minerals.formula.molar_mass_g_mol`); the dissolution reactions are written out in
:data:`ACID_REACTIONS`. Full dissolution is an upper bound: the reactivity factors scale it to
the fraction of each mineral that dissolves in a typical heap or agitated leach cycle.

Dissolution reactions (ν = mol H2SO4 per mol mineral; silica leaves as H4SiO4 or SiO2, which
consumes no acid, so ν is half the cation charge released):

- calcite: CaCO3 + H2SO4 → CaSO4 + CO2 + H2O  (ν = 1)
- dolomite: CaMg(CO3)2 + 2 H2SO4 → CaSO4 + MgSO4 + 2 CO2 + 2 H2O  (ν = 2)
- ankerite: CaFe0.5Mg0.5(CO3)2 + 2 H2SO4 → CaSO4 + 0.5 FeSO4 + 0.5 MgSO4 + 2 CO2 + 2 H2O  (ν = 2)
- siderite: FeCO3 + H2SO4 → FeSO4 + CO2 + H2O  (ν = 1)
- chlorite (clinochlore-chamosite midpoint): Mg2.5Fe2.5Al2Si3O10(OH)8 + 8 H2SO4 →
  2.5 MgSO4 + 2.5 FeSO4 + Al2(SO4)3 + 3 H4SiO4 + 6 H2O  (ν = 8)
- biotite: KMg1.5Fe1.5AlSi3O10(OH)2 + 5 H2SO4 → 0.5 K2SO4 + 1.5 MgSO4 + 1.5 FeSO4 +
  0.5 Al2(SO4)3 + 3 H4SiO4  (ν = 5)
- actinolite: Ca2Mg3.5Fe1.5Si8O22(OH)2 + 7 H2SO4 + 8 H2O → 2 CaSO4 + 3.5 MgSO4 + 1.5 FeSO4 +
  8 H4SiO4  (ν = 7)
- epidote: Ca2Al2FeSi3O12(OH) + 6.5 H2SO4 → 2 CaSO4 + Al2(SO4)3 + 0.5 Fe2(SO4)3 + 3 H4SiO4 +
  H2O  (Fe³⁺; ν = 6.5)
- white mica (muscovite): KAl3Si3O10(OH)2 + 5 H2SO4 → 0.5 K2SO4 + 1.5 Al2(SO4)3 + 3 H4SiO4
  (ν = 5)
- malachite: Cu2CO3(OH)2 + 2 H2SO4 → 2 CuSO4 + CO2 + 3 H2O  (ν = 2)
- chrysocolla (ideal CuSiO3·2H2O): CuSiO3(H2O)2 + H2SO4 → CuSO4 + SiO2 + 3 H2O  (ν = 1)

Malachite and chrysocolla are the oxide copper: their acid is counted through the acid-soluble
Cu assay (:func:`oxide_cu_acid_kg_t`, 98.08/63.55 kg acid per kg Cu), not again as gangue.

References
----------
.. [1] Thomas, M. (2021). Understanding gangue acid consumption in copper sulfide heap leaching:
   predicting the impact of carbonates, silicates and secondary precipitates. *Minerals
   Engineering* 171, 107090. https://doi.org/10.1016/j.mineng.2021.107090 (DOI from the article
   number, not checked; carbonates drive
   short-term, biotite and chlorite long-term consumption).
.. [2] Chetty, D. (2018). Acid-gangue interactions in heap leach operations: a review of the role
   of mineralogy for predicting ore behaviour. *Minerals* 8(2), 47.
   https://doi.org/10.3390/min8020047
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache

import numpy as np

from geomet.errors import InputDataError
from geomet.minerals.formula import molar_mass_g_mol

H2SO4 = "H2SO4"


@dataclass(frozen=True)
class AcidReaction:
    """Full dissolution of one mineral in sulfuric acid."""

    formula: str
    nu_mol_per_mol: float  # mol H2SO4 consumed per mol mineral
    reactivity_frac: float  # default fraction that dissolves in a leach cycle (assumption)
    oxide_copper: bool = False


#: Mineral -> dissolution reaction. Reactivity defaults are stated assumptions in the order the
#: literature reports (carbonates fast and near complete; chlorite and biotite slow and partial;
#: amphibole, epidote and white mica slower still; Chetty 2018, Thomas 2021) — calibrate them to
#: leach tests with :class:`geomet.forecast.calibration.AcidReactivityModel`.
ACID_REACTIONS: dict[str, AcidReaction] = {
    "calcite": AcidReaction("CaCO3", 1.0, 1.0),
    "dolomite": AcidReaction("CaMg(CO3)2", 2.0, 0.9),
    "ankerite": AcidReaction("CaFe0.5Mg0.5(CO3)2", 2.0, 0.8),
    "siderite": AcidReaction("FeCO3", 1.0, 0.6),
    "chlorite": AcidReaction("Mg2.5Fe2.5Al2Si3O10(OH)8", 8.0, 0.12),
    "biotite": AcidReaction("KMg1.5Fe1.5AlSi3O10(OH)2", 5.0, 0.08),
    "actinolite": AcidReaction("Ca2Mg3.5Fe1.5Si8O22(OH)2", 7.0, 0.04),
    "epidote": AcidReaction("Ca2Al2FeSi3O12(OH)", 6.5, 0.04),
    "white_mica": AcidReaction("KAl3Si3O10(OH)2", 5.0, 0.01),
    "malachite": AcidReaction("Cu2CO3(OH)2", 2.0, 1.0, oxide_copper=True),
    "chrysocolla": AcidReaction("CuSiO3(H2O)2", 1.0, 1.0, oxide_copper=True),
}

#: Gangue minerals that :func:`gangue_acid_kg_t` sums (the oxide copper minerals excluded).
GANGUE_ACID_MINERALS = tuple(m for m, r in ACID_REACTIONS.items() if not r.oxide_copper)


@cache
def acid_factor_kg_per_kg(mineral: str) -> float:
    """Stoichiometric acid for full dissolution of a mineral [kg H2SO4 per kg mineral].

    Parameters
    ----------
    mineral : str
        A key of :data:`ACID_REACTIONS`.

    Returns
    -------
    float
        ν M(H2SO4) / M(mineral).

    Examples
    --------
    >>> round(acid_factor_kg_per_kg("calcite"), 4)
    0.9799
    """
    if mineral not in ACID_REACTIONS:
        msg = (
            f"no acid dissolution reaction for mineral {mineral!r}; valid names are "
            f"{sorted(ACID_REACTIONS)} (geomet.forecast.acid.ACID_REACTIONS)"
        )
        raise InputDataError(msg)
    reaction = ACID_REACTIONS[mineral]
    return reaction.nu_mol_per_mol * molar_mass_g_mol(H2SO4) / molar_mass_g_mol(reaction.formula)


@cache
def acid_per_kg_cu() -> float:
    """Acid to dissolve oxide copper [kg H2SO4 per kg Cu]: M(H2SO4)/M(Cu) = 98.08/63.55."""
    return molar_mass_g_mol(H2SO4) / molar_mass_g_mol("Cu")


def gangue_acid_kg_t(mineral_pct: Mapping[str, object], *, reactivity=None):
    """Gangue acid consumption from mineral abundances.

    Parameters
    ----------
    mineral_pct : mapping
        Mineral name (keys of :data:`ACID_REACTIONS`, oxide copper minerals excluded) ->
        abundance [wt%] (float, ndarray or Series). Minerals not given count as absent; NaN
        abundances count as 0.
    reactivity : mapping, keyword-only
        Mineral -> fraction dissolving [fraction]; defaults from :data:`ACID_REACTIONS`.

    Returns
    -------
    float, ndarray or Series
        Acid [kg H2SO4 per t ore].

    Notes
    -----
    A = Σ_m 10 · x_m[wt%] · ρ_m · ν_m M(H2SO4)/M_m (10 kg/t per wt%; ρ_m the reactivity).
    With every ρ_m = 1 this is the stoichiometric upper bound.

    Examples
    --------
    >>> round(float(gangue_acid_kg_t({"calcite": 1.0})), 3)
    9.799
    """
    unknown = sorted(set(mineral_pct) - set(GANGUE_ACID_MINERALS))
    if unknown:
        msg = (
            f"gangue_acid_kg_t: no gangue reaction for {unknown}; valid names are "
            f"{list(GANGUE_ACID_MINERALS)} (oxide Cu minerals go through oxide_cu_acid_kg_t)"
        )
        raise InputDataError(msg)
    rho = {m: ACID_REACTIONS[m].reactivity_frac for m in GANGUE_ACID_MINERALS}
    rho.update(reactivity or {})
    total = 0.0
    for mineral, pct in mineral_pct.items():
        x = np.fmax(pct, 0.0)  # fmax: NaN (not reported) and negatives count as 0
        total = total + 10.0 * x * rho[mineral] * acid_factor_kg_per_kg(mineral)
    return total


def oxide_cu_acid_kg_t(cu_asol_pct, *, extraction_frac=1.0):
    """Acid consumed by dissolving oxide (acid-soluble) copper.

    Parameters
    ----------
    cu_asol_pct : float, ndarray or Series
        Acid-soluble Cu [%].
    extraction_frac : float, keyword-only
        Fraction of the acid-soluble Cu dissolved [fraction].

    Returns
    -------
    float, ndarray or Series
        Acid [kg H2SO4 per t ore]: 10 · cu_asol_pct · extraction · 98.08/63.55.

    Examples
    --------
    >>> round(float(oxide_cu_acid_kg_t(0.5)), 3)
    7.717
    """
    if not 0.0 <= extraction_frac <= 1.0:
        msg = f"oxide Cu extraction_frac must be in [0, 1]; got {extraction_frac!r}"
        raise InputDataError(msg)
    return 10.0 * np.maximum(cu_asol_pct, 0.0) * extraction_frac * acid_per_kg_cu()
