"""Mineral chemistry used by the demo generator: atomic weights, formulas, grain densities.

The demo computes its assays from its minerals, so every element it reports comes from
a mineral formula here (or from a trace-element field for Au, Ag, As, Zn and Pb, which
the scanner does not see). The table is local to the demo package on purpose: the demo
files must stay byte-for-byte stable even if the project's mineral reference is refined.

Formulas are written as element counts per formula unit. Solid solutions use one
representative composition, named beside each entry.

References
----------
.. [1] Prohaska, T. et al. (2022). Standard atomic weights of the elements 2021 (IUPAC
   Technical Report). Pure and Applied Chemistry 94(5), 573-600.
   DOI: 10.1515/pac-2019-0603. Abridged (conventional) values.
.. [2] Anthony, J.W., Bideaux, R.A., Bladh, K.W. & Nichols, M.C. (eds.) Handbook of
   Mineralogy. Mineralogical Society of America. Ideal formulas and measured densities
   (values here from memory, rounded to 0.01 g/cm3).
"""

from __future__ import annotations

import numpy as np

# IUPAC 2021 abridged / conventional standard atomic weights [g/mol] (ref. [1]).
ATOMIC_WEIGHT_G_MOL: dict[str, float] = {
    "H": 1.008,
    "B": 10.81,
    "C": 12.011,
    "O": 15.999,
    "F": 18.998,
    "Na": 22.990,
    "Mg": 24.305,
    "Al": 26.982,
    "Si": 28.085,
    "P": 30.974,
    "S": 32.06,
    "K": 39.098,
    "Ca": 40.078,
    "Ti": 47.867,
    "Fe": 55.845,
    "Cu": 63.546,
    "Mo": 95.95,
}

# Element counts per formula unit. Hydroxyl and water written out as H and O.
FORMULAS: dict[str, dict[str, float]] = {
    # featureless quartz + plagioclase, taken as 50 % quartz, 38 % albite, 12 % anorthite by
    # mass (an assumption of the demo); stored per 100 g as moles, see _featureless_counts
    "quartz": {"Si": 1, "O": 2},
    "albite": {"Na": 1, "Al": 1, "Si": 3, "O": 8},
    "anorthite": {"Ca": 1, "Al": 2, "Si": 2, "O": 8},
    "k_feldspar": {"K": 1, "Al": 1, "Si": 3, "O": 8},
    # biotite between phlogopite and annite, Mg-rich as in potassic alteration:
    # K(Mg2Fe)AlSi3O10(OH)2
    "biotite": {"K": 1, "Mg": 2, "Fe": 1, "Al": 1, "Si": 3, "O": 12, "H": 2},
    # white mica as muscovite KAl2(AlSi3)O10(OH)2
    "white_mica": {"K": 1, "Al": 3, "Si": 3, "O": 12, "H": 2},
    # illite K0.65Al2(Al0.65Si3.35)O10(OH)2
    "illite": {"K": 0.65, "Al": 2.65, "Si": 3.35, "O": 12, "H": 2},
    # smectite as a Na-Ca montmorillonite, interlayer water left out:
    # Na0.2Ca0.1(Al1.67Mg0.33)Si4O10(OH)2
    "smectite": {"Na": 0.2, "Ca": 0.1, "Al": 1.67, "Mg": 0.33, "Si": 4, "O": 12, "H": 2},
    "kaolinite": {"Al": 2, "Si": 2, "O": 9, "H": 4},
    "dickite": {"Al": 2, "Si": 2, "O": 9, "H": 4},
    # halloysite-(10 A) Al2Si2O5(OH)4.2H2O
    "halloysite": {"Al": 2, "Si": 2, "O": 11, "H": 8},
    "pyrophyllite": {"Al": 2, "Si": 4, "O": 12, "H": 2},
    "alunite": {"K": 1, "Al": 3, "S": 2, "O": 14, "H": 6},
    "jarosite": {"K": 1, "Fe": 3, "S": 2, "O": 14, "H": 6},
    "gypsum": {"Ca": 1, "S": 1, "O": 6, "H": 4},
    "anhydrite": {"Ca": 1, "S": 1, "O": 4},
    # chlorite between clinochlore and chamosite: (Mg3Fe2Al)(AlSi3)O10(OH)8
    "chlorite": {"Mg": 3, "Fe": 2, "Al": 2, "Si": 3, "O": 18, "H": 8},
    # epidote Ca2Al2Fe(SiO4)(Si2O7)O(OH)
    "epidote": {"Ca": 2, "Al": 2, "Fe": 1, "Si": 3, "O": 13, "H": 1},
    # actinolite Ca2(Mg4Fe)Si8O22(OH)2
    "actinolite": {"Ca": 2, "Mg": 4, "Fe": 1, "Si": 8, "O": 24, "H": 2},
    "calcite": {"Ca": 1, "C": 1, "O": 3},
    "dolomite": {"Ca": 1, "Mg": 1, "C": 2, "O": 6},
    # ankerite Ca(Fe0.6Mg0.4)(CO3)2
    "ankerite": {"Ca": 1, "Fe": 0.6, "Mg": 0.4, "C": 2, "O": 6},
    "siderite": {"Fe": 1, "C": 1, "O": 3},
    "magnetite": {"Fe": 3, "O": 4},
    "hematite": {"Fe": 2, "O": 3},
    "goethite": {"Fe": 1, "O": 2, "H": 1},
    # tourmaline as schorl NaFe3Al6(BO3)3Si6O18(OH)4
    "tourmaline": {"Na": 1, "Fe": 3, "Al": 6, "B": 3, "Si": 6, "O": 31, "H": 4},
    "diaspore": {"Al": 1, "O": 2, "H": 1},
    "rutile": {"Ti": 1, "O": 2},
    # fluorapatite Ca5(PO4)3F
    "apatite": {"Ca": 5, "P": 3, "O": 12, "F": 1},
    "pyrite": {"Fe": 1, "S": 2},
    "chalcopyrite": {"Cu": 1, "Fe": 1, "S": 2},
    "bornite": {"Cu": 5, "Fe": 1, "S": 4},
    "chalcocite": {"Cu": 2, "S": 1},
    "covellite": {"Cu": 1, "S": 1},
    "molybdenite": {"Mo": 1, "S": 2},
    "malachite": {"Cu": 2, "C": 1, "O": 5, "H": 2},
    # chrysocolla taken as Cu2H2Si2O5(OH)4 (variable hydration; ideal water content)
    "chrysocolla": {"Cu": 2, "Si": 2, "O": 9, "H": 6},
}

# Mass fractions of the phases making up the featureless quartz-feldspar background.
FEATURELESS_MIX: dict[str, float] = {"quartz": 0.50, "albite": 0.38, "anorthite": 0.12}

# Grain densities [g/cm3] (ref. [2], from memory; representative values).
GRAIN_DENSITY_G_CM3: dict[str, float] = {
    "quartz_feldspar": 2.64,
    "k_feldspar": 2.56,
    "biotite": 3.00,
    "white_mica": 2.82,
    "illite": 2.75,
    "smectite": 2.35,
    "kaolinite": 2.60,
    "dickite": 2.60,
    "halloysite": 2.10,
    "pyrophyllite": 2.80,
    "alunite": 2.74,
    "jarosite": 3.10,
    "gypsum": 2.32,
    "anhydrite": 2.97,
    "chlorite": 2.90,
    "epidote": 3.40,
    "actinolite": 3.10,
    "calcite": 2.71,
    "dolomite": 2.85,
    "ankerite": 3.00,
    "siderite": 3.90,
    "magnetite": 5.18,
    "hematite": 5.26,
    "goethite": 4.27,
    "tourmaline": 3.15,
    "diaspore": 3.38,
    "rutile": 4.25,
    "apatite": 3.19,
    "pyrite": 5.01,
    "chalcopyrite": 4.19,
    "bornite": 5.09,
    "chalcocite": 5.65,
    "covellite": 4.68,
    "molybdenite": 4.70,
    "malachite": 4.00,
    "chrysocolla": 2.20,
}

# Elements the demo assays report from mineral stoichiometry.
ASSAY_ELEMENTS = ("Cu", "Mo", "Fe", "S", "Ca", "Mg", "Al", "K")

# Charges of cations released by acid dissolution (Si stays as silica, C leaves as CO2).
_CATION_CHARGE = {"Na": 1, "K": 1, "Mg": 2, "Ca": 2, "Fe": 2, "Al": 3, "Cu": 2}

H2SO4_G_MOL = 2 * ATOMIC_WEIGHT_G_MOL["H"] + ATOMIC_WEIGHT_G_MOL["S"] + 4 * ATOMIC_WEIGHT_G_MOL["O"]


def molar_mass_g_mol(counts: dict[str, float]) -> float:
    """Molar mass [g/mol] of a formula given as element counts.

    Examples
    --------
    >>> round(molar_mass_g_mol(FORMULAS["chalcopyrite"]), 3)
    183.517
    """
    return float(sum(ATOMIC_WEIGHT_G_MOL[el] * n for el, n in counts.items()))


def element_fractions(name: str) -> dict[str, float]:
    """Element mass fractions [g/g] of a demo mineral (or of the featureless background).

    Parameters
    ----------
    name : str
        A key of :data:`FORMULAS`, or ``"quartz_feldspar"`` for the featureless mixture
        of :data:`FEATURELESS_MIX`.

    Notes
    -----
    w_el = n_el A_el / sum_j n_j A_j, with A the atomic weights of ref. [1]. For a mixture
    the fractions are the mass-weighted means of its phases.

    Examples
    --------
    >>> round(element_fractions("chalcopyrite")["Cu"], 4)
    0.3463
    """
    if name == "quartz_feldspar":
        out: dict[str, float] = {}
        for phase, share in FEATURELESS_MIX.items():
            for el, w in element_fractions(phase).items():
                out[el] = out.get(el, 0.0) + share * w
        return out
    if name not in FORMULAS:
        msg = f"unknown demo mineral {name!r}; known: {', '.join(sorted(FORMULAS))}"
        raise KeyError(msg)
    counts = FORMULAS[name]
    total = molar_mass_g_mol(counts)
    return {el: ATOMIC_WEIGHT_G_MOL[el] * n / total for el, n in counts.items()}


def element_matrix(minerals: tuple[str, ...], elements: tuple[str, ...] = ASSAY_ELEMENTS):
    """Mass-fraction matrix [g/g], shape (len(minerals), len(elements))."""
    mat = np.zeros((len(minerals), len(elements)))
    for i, m in enumerate(minerals):
        fr = element_fractions(m)
        for j, el in enumerate(elements):
            mat[i, j] = fr.get(el, 0.0)
    return mat


def acid_factor_kg_kg(name: str) -> float:
    """Sulfuric acid consumed by full dissolution of a mineral [kg H2SO4 / kg mineral].

    Notes
    -----
    f = (nu_H / 2) M(H2SO4) / M(mineral), with nu_H the protons consumed, taken as the sum
    of the charges of the released cations (Na+, K+, Mg2+, Ca2+, Fe2+, Al3+, Cu2+); silica
    stays behind and carbonate leaves as CO2. This is the stoichiometric upper bound
    (e.g. CaCO3 + H2SO4 -> CaSO4 + CO2 + H2O gives 98.08/100.09).
    """
    counts = FORMULAS[name]
    protons = sum(_CATION_CHARGE.get(el, 0) * n for el, n in counts.items())
    return float(protons / 2.0 * H2SO4_G_MOL / molar_mass_g_mol(counts))


def acid_per_cu_kg_kg() -> float:
    """Acid consumed per kg of copper dissolved from oxide minerals: M(H2SO4)/M(Cu) [kg/kg]."""
    return H2SO4_G_MOL / ATOMIC_WEIGHT_G_MOL["Cu"]
