"""The minerals geomet knows: formula, plant group, chemical class and element mass fractions.

Every mineral scanned by the core scanner (:data:`geomet.glossary.SCANNED_MINERALS`) has an entry,
plus anhydrite and gypsum separately (the scanner reports them together) and the minerals that the
normative speciation needs besides (cuprite, tenorite, and the arsenic minerals enargite,
tennantite and arsenopyrite). Element mass fractions are computed from the
formula with :func:`geomet.minerals.formula.element_mass_fractions`, never typed in.

Solid solutions need one composition each; the choice and the reason are in ``composition_note``:

- **biotite**: K(Mg2Fe)(AlSi3)O10(OH)2, phlogopite-annite with Mg:Fe = 2:1, because hydrothermal
  biotite of potassic alteration is magnesian (Mg/(Mg+Fe) mostly 0.6-0.8; from memory of porphyry
  alteration studies, e.g. Sillitoe 2010).
- **chlorite**: (Mg3Fe2Al)(AlSi3)O10(OH)8, between clinochlore and chamosite with
  Fe/(Fe+Mg) = 0.4, because propylitic chlorite of porphyry systems is intermediate rather than
  an end-member (from memory). The scanner's Fe-OH feature position (``chlorite_feoh_nm``)
  tracks the real Fe content; geomet keeps it as an attribute.
- **smectite**: Na-montmorillonite Na0.33(Al1.67Mg0.33)Si4O10(OH)2, the ideal swelling smectite,
  anhydrous (interlayer water varies with humidity and is left out).
- **illite**: K0.65Al2(Al0.65Si3.35)O10(OH)2, the usual "illite" composition with 0.65 K per
  O10(OH)2 (between muscovite, K = 1, and smectite), after Rosenberg (2002).
- **white mica**: ideal muscovite KAl2(AlSi3)O10(OH)2 (sericite of phyllic alteration).
- **actinolite**: Ca2(Mg4Fe)Si8O22(OH)2, Mg/(Mg+Fe) = 0.8, inside the actinolite field (0.5-0.9)
  of the amphibole nomenclature (Leake et al. 1997).
- **tourmaline**: schorl NaFe3Al6(BO3)3Si6O18(OH)4, the Fe tourmaline of porphyry breccias.
- **epidote**: Ca2Al2Fe(SiO4)(Si2O7)O(OH), the IMA ideal epidote with one Fe3+ per formula unit
  (Armbruster et al. 2006).
- **ankerite**: Ca(Fe0.6Mg0.4)(CO3)2; ankerite needs Fe > Mg and the pure CaFe(CO3)2 end-member is
  not known in nature (from memory).
- **quartz_feldspar**: the scanner's "featureless" class (quartz and plagioclase, no SWIR feature);
  taken as quartz SiO2. Its Na and Al are thereby ignored, which no geomet balance uses.
- **gypsum_anhydrite**: the scanner sees gypsum at the core surface (anhydrite hydrates once
  exposed to water) but the group's mass is mostly anhydrite where it is abundant, below the
  sulfate front; taken as anhydrite CaSO4. ``gypsum`` and ``anhydrite`` are listed separately
  (speciation option ``sulfate_mineral``).
- **halloysite**: halloysite-10 Å Al2Si2O5(OH)4(H2O)2, the hydrated form.
- **chrysocolla**: simplified CuSiO3(H2O)2, the common idealisation of a variable hydrous Cu
  silicate.

References
----------
.. [1] Leake, B. E. et al. (1997). Nomenclature of amphiboles. *American Mineralogist* 82,
   1019-1037.
.. [2] Armbruster, T. et al. (2006). Recommended nomenclature of epidote-group minerals.
   *European Journal of Mineralogy* 18(5), 551-567.
.. [3] Rosenberg, P. E. (2002). The nature, formation, and stability of end-member illite: a
   hypothesis. *American Mineralogist* 87(1), 103-107 (journal details from memory).
.. [4] Sillitoe, R. H. (2010). Porphyry copper systems. *Economic Geology* 105(1), 3-41.
   https://doi.org/10.2113/gsecongeo.105.1.3
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass
from functools import cached_property

import pandas as pd

from geomet.errors import InputDataError
from geomet.glossary import SCANNED_MINERALS
from geomet.minerals.formula import element_mass_fractions, molar_mass_g_mol, parse_formula


@dataclass(frozen=True)
class Mineral:
    """One mineral: key, display name, formula, plant group and chemical class.

    Attributes
    ----------
    key : str
        Lower-case name used in column names (``chalcopyrite`` -> ``chalcopyrite_pct``).
    name : str
        Display name.
    formula : str
        Ideal or representative formula (see ``composition_note`` for solid solutions).
    group : str
        Main plant group (``clay_swelling``, ``sulfide``, ...); a mineral may also sit in further
        groups of :data:`geomet.minerals.groups.DEFAULT_GROUPS` (dickite: kaolin and advanced
        argillic).
    mineral_class : str
        Chemical class (silicate, sulfide, sulfate, carbonate, oxide, hydroxide, phosphate).
    scanned : bool
        True when the core scanner reports it (a ``<key>_pct`` scan column exists).
    composition_note : str
        Which end-member or composition stands for a solid solution, and why.
    """

    key: str
    name: str
    formula: str
    group: str
    mineral_class: str
    scanned: bool = True
    composition_note: str = ""

    @cached_property
    def _counts(self) -> dict[str, float]:
        return parse_formula(self.formula)

    @property
    def atoms(self) -> dict[str, float]:
        """Atoms of each element per formula unit."""
        return dict(self._counts)

    @property
    def molar_mass_g_mol(self) -> float:
        """Molar mass [g/mol] of one formula unit."""
        return molar_mass_g_mol(self._counts)

    @property
    def mass_fractions(self) -> dict[str, float]:
        """Element mass fractions [fraction], computed from the formula."""
        return element_mass_fractions(self._counts)

    def fraction(self, element: str) -> float:
        """Mass fraction [fraction] of ``element`` in the mineral (0.0 when absent)."""
        return self.mass_fractions.get(element, 0.0)


def _m(key, name, formula, group, mineral_class, scanned=True, note=""):
    return Mineral(key, name, formula, group, mineral_class, scanned, note)


_ENTRIES = (
    _m("quartz_feldspar", "Quartz-feldspar (featureless)", "SiO2", "featureless", "silicate",
       note="featureless scanner class of quartz and plagioclase; taken as quartz"),
    _m("k_feldspar", "K-feldspar", "KAlSi3O8", "potassic", "silicate",
       note="orthoclase/microcline ideal formula"),
    _m("biotite", "Biotite", "K(Mg2Fe)(AlSi3)O10(OH)2", "femg_silicate", "silicate",
       note="phlogopite-annite with Mg:Fe 2:1, magnesian as hydrothermal biotite is"),
    _m("white_mica", "White mica (sericite)", "KAl2(AlSi3)O10(OH)2", "white_mica_illite",
       "silicate", note="ideal muscovite"),
    _m("illite", "Illite", "K0.65Al2(Al0.65Si3.35)O10(OH)2", "white_mica_illite", "silicate",
       note="0.65 K per O10(OH)2 (Rosenberg 2002)"),
    _m("smectite", "Smectite (montmorillonite)", "Na0.33(Al1.67Mg0.33)Si4O10(OH)2",
       "clay_swelling", "silicate",
       note="Na-montmorillonite, anhydrous (interlayer water varies and is left out)"),
    _m("kaolinite", "Kaolinite", "Al2Si2O5(OH)4", "clay_kaolin", "silicate"),
    _m("dickite", "Dickite", "Al2Si2O5(OH)4", "clay_kaolin", "silicate",
       note="kaolin polymorph; also counted in the advanced argillic group"),
    _m("halloysite", "Halloysite", "Al2Si2O5(OH)4(H2O)2", "clay_kaolin", "silicate",
       note="halloysite-10 A, hydrated form"),
    _m("pyrophyllite", "Pyrophyllite", "Al2Si4O10(OH)2", "advanced_argillic", "silicate"),
    _m("alunite", "Alunite", "KAl3(SO4)2(OH)6", "advanced_argillic", "sulfate",
       note="K end-member (natroalunite not separated)"),
    _m("jarosite", "Jarosite", "KFe3(SO4)2(OH)6", "supergene_sulfate", "sulfate",
       note="K end-member"),
    _m("gypsum_anhydrite", "Gypsum-anhydrite", "CaSO4", "sulfate", "sulfate",
       note="scanner group; mass taken as anhydrite, dominant below the sulfate front"),
    _m("chlorite", "Chlorite", "(Mg3Fe2Al)(AlSi3)O10(OH)8", "femg_silicate", "silicate",
       note="clinochlore-chamosite, Fe/(Fe+Mg) 0.4; real Fe tracked by chlorite_feoh_nm"),
    _m("epidote", "Epidote", "Ca2Al2Fe(SiO4)(Si2O7)O(OH)", "propylitic", "silicate",
       note="IMA ideal epidote, one Fe3+ per formula unit (Armbruster et al. 2006)"),
    _m("actinolite", "Actinolite", "Ca2(Mg4Fe)Si8O22(OH)2", "femg_silicate", "silicate",
       note="Mg/(Mg+Fe) 0.8, inside the actinolite field (Leake et al. 1997)"),
    _m("calcite", "Calcite", "CaCO3", "carbonate", "carbonate"),
    _m("dolomite", "Dolomite", "CaMg(CO3)2", "carbonate", "carbonate"),
    _m("ankerite", "Ankerite", "Ca(Fe0.6Mg0.4)(CO3)2", "carbonate", "carbonate",
       note="Fe > Mg as ankerite requires; Fe:Mg 0.6:0.4 representative"),
    _m("siderite", "Siderite", "FeCO3", "carbonate", "carbonate"),
    _m("magnetite", "Magnetite", "Fe3O4", "iron_oxide", "oxide"),
    _m("hematite", "Hematite", "Fe2O3", "iron_oxide", "oxide"),
    _m("goethite", "Goethite", "FeO(OH)", "iron_oxide", "hydroxide"),
    _m("tourmaline", "Tourmaline (schorl)", "NaFe3Al6(BO3)3Si6O18(OH)4", "tourmaline",
       "silicate", note="schorl, the Fe tourmaline of porphyry breccias"),
    _m("diaspore", "Diaspore", "AlO(OH)", "advanced_argillic", "hydroxide"),
    _m("rutile", "Rutile", "TiO2", "accessory", "oxide"),
    _m("apatite", "Apatite", "Ca5(PO4)3F", "accessory", "phosphate",
       note="fluorapatite, the usual igneous apatite"),
    _m("pyrite", "Pyrite", "FeS2", "sulfide", "sulfide"),
    _m("chalcopyrite", "Chalcopyrite", "CuFeS2", "sulfide", "sulfide"),
    _m("bornite", "Bornite", "Cu5FeS4", "sulfide", "sulfide"),
    _m("chalcocite", "Chalcocite", "Cu2S", "sulfide", "sulfide"),
    _m("covellite", "Covellite", "CuS", "sulfide", "sulfide"),
    _m("molybdenite", "Molybdenite", "MoS2", "sulfide", "sulfide"),
    _m("malachite", "Malachite", "Cu2CO3(OH)2", "cu_oxide", "carbonate"),
    _m("chrysocolla", "Chrysocolla", "CuSiO3(H2O)2", "cu_oxide", "silicate",
       note="simplified formula of a variable hydrous Cu silicate"),
    # Not scanned separately: the two sulfates, and oxide Cu minerals for the speciation option.
    _m("anhydrite", "Anhydrite", "CaSO4", "sulfate", "sulfate", scanned=False),
    _m("gypsum", "Gypsum", "CaSO4(H2O)2", "sulfate", "sulfate", scanned=False),
    _m("cuprite", "Cuprite", "Cu2O", "cu_oxide", "oxide", scanned=False),
    _m("enargite", "Enargite", "Cu3AsS4", "sulfide", "sulfide", scanned=False,
       note="Cu-As sulfosalt of high-sulfidation (advanced argillic) ore"),
    _m("tennantite", "Tennantite", "Cu12As4S13", "sulfide", "sulfide", scanned=False,
       note="ideal Cu end-member of the tennantite-tetrahedrite series (Zn, Fe, Sb left out)"),
    _m("arsenopyrite", "Arsenopyrite", "FeAsS", "sulfide", "sulfide", scanned=False),
    _m("tenorite", "Tenorite", "CuO", "cu_oxide", "oxide", scanned=False),
)  # fmt: skip

MINERALS: dict[str, Mineral] = {m.key: m for m in _ENTRIES}
"""Mineral key -> :class:`Mineral`; keys of scanned minerals match ``glossary.SCANNED_MINERALS``."""

_missing = set(SCANNED_MINERALS) - set(MINERALS)
if _missing:  # pragma: no cover - guards the table above against glossary changes
    _msg = f"mineral reference lacks scanned minerals {sorted(_missing)}"
    raise RuntimeError(_msg)


def get_mineral(key: str) -> Mineral:
    """Return the :class:`Mineral` named ``key``; an unknown name suggests the closest ones.

    Raises
    ------
    geomet.errors.InputDataError
        When ``key`` is not in :data:`MINERALS`.
    """
    mineral = MINERALS.get(key)
    if mineral is None:
        msg = unknown_mineral_message(key, where="mineral name")
        raise InputDataError(msg)
    return mineral


def unknown_mineral_message(key: str, *, where: str) -> str:
    """Error text for an unknown mineral name, with close matches from :data:`MINERALS`."""
    close = difflib.get_close_matches(str(key), list(MINERALS), n=3, cutoff=0.6)
    hint = f"; did you mean {', '.join(repr(c) for c in close)}?" if close else ""
    return (
        f"unknown {where} {key!r}{hint} (known minerals are listed in "
        "geomet.minerals.reference.MINERALS)"
    )


def mineral_reference_table() -> pd.DataFrame:
    """One row per known mineral with its formula, group and element mass fractions.

    Returns
    -------
    pandas.DataFrame
        Columns ``mineral``, ``name``, ``formula``, ``group``, ``mineral_class``, ``scanned``,
        ``molar_mass_g_mol``, ``composition_note`` and one ``<element>_frac`` column per element
        present in any formula (lower-case symbol, e.g. ``cu_frac``) [fraction]; 0.0 where a
        mineral lacks the element.
    """
    rows = []
    elements: list[str] = []
    for mineral in MINERALS.values():
        fractions = mineral.mass_fractions
        for element in fractions:
            if element not in elements:
                elements.append(element)
        rows.append(
            {
                "mineral": mineral.key,
                "name": mineral.name,
                "formula": mineral.formula,
                "group": mineral.group,
                "mineral_class": mineral.mineral_class,
                "scanned": mineral.scanned,
                "molar_mass_g_mol": mineral.molar_mass_g_mol,
                "composition_note": mineral.composition_note,
                **{f"{e.lower()}_frac": f for e, f in fractions.items()},
            }
        )
    table = pd.DataFrame(rows)
    frac_cols = [f"{e.lower()}_frac" for e in elements]
    table[frac_cols] = table[frac_cols].fillna(0.0)
    return table
