"""Plain-words descriptions of the columns the minerals package adds (for workbooks).

Keys follow the naming rules of :mod:`geomet.glossary` (unit suffixes); values are the
descriptions shown beside each column. ``True`` in the second place marks a risk column (higher
means more process risk).
"""

from __future__ import annotations

from geomet.minerals.speciation import CU_SULFIDES

COLUMN_DESCRIPTIONS: dict[str, tuple[str, bool]] = {
    "clay_swelling_pct": ("Swelling clay (smectite).", True),
    "clay_kaolin_pct": ("Kaolin-group clays: kaolinite, dickite, halloysite.", True),
    "white_mica_illite_pct": ("White mica (sericite) and illite.", False),
    "advanced_argillic_pct": ("Advanced argillic minerals: pyrophyllite, alunite, diaspore, "
                              "dickite.", False),
    "sulfate_pct": ("Gypsum and anhydrite.", True),
    "carbonate_pct": ("Carbonates: calcite, dolomite, ankerite, siderite.", True),
    "femg_silicate_pct": ("Fe-Mg silicates: chlorite, biotite, actinolite.", False),
    "iron_oxide_pct": ("Iron oxides: magnetite, hematite, goethite.", False),
    "featureless_pct": ("Quartz and feldspar (no infrared feature).", False),
    "clay_total_pct": ("All clays: smectite, kaolin group and illite.", True),
    "sulfide_pct": ("Scanned sulfides: pyrite, Cu sulfides, molybdenite.", False),
    "cu_oxide_pct": ("Scanned oxide Cu minerals: malachite, chrysocolla.", False),
    "clay_severity_idx": ("Weighted clay, in wt% smectite-equivalent (smectite 1, kaolin 0.3, "
                          "illite 0.1 by default).", True),
    "oxide_ratio_frac": ("Acid-soluble Cu / total Cu.", False),
    "norm_pyrite_pct": ("Pyrite computed from the assays (balanced on S).", False),
    "norm_molybdenite_pct": ("Molybdenite computed from Mo.", False),
    "norm_cu_oxide_pct": ("Oxide Cu mineral (default chrysocolla) from acid-soluble Cu.", False),
    "norm_gypsum_anhydrite_pct": ("Gypsum-anhydrite used for the sulfate S (as the chosen "
                                  "mineral).", True),
    "s_sulfide_pct": ("Sulfur in sulfides, from the normative balance.", False),
    "s_sulfate_pct": ("Sulfur in sulfates (gypsum-anhydrite, alunite, jarosite).", False),
    "resid_cu_pct": ("Assayed Cu not placed in a normative mineral.", False),
    "resid_s_pct": ("Assayed S not placed in a normative mineral.", False),
    "resid_fe_pct": ("Assayed Fe not in sulfides (Fe of silicates and oxides).", False),
    "resid_ca_pct": ("Assayed Ca not in sulfate (Ca of carbonates and silicates).", False),
    "balance_flag": ("What could not be balanced or was assumed in the normative "
                     "minerals ('ok' when clean).", False),
    "balance_ok": ("True when every assay balanced within tolerance.", False),
    "scan_cu_pct": ("Cu implied by the scanned minerals.", False),
    "scan_s_pct": ("S implied by the scanned minerals.", False),
    "scan_fe_pct": ("Fe implied by the scanned minerals.", False),
    "scan_mo_ppm": ("Mo implied by the scanned minerals.", False),
    "scan_ca_pct": ("Ca implied by the scanned minerals (plagioclase Ca not included).", False),
    "scan_k_pct": ("K implied by the scanned minerals.", False),
    "scan_mg_pct": ("Mg implied by the scanned minerals.", False),
    **{
        f"norm_{m}_pct": (f"{m.capitalize()} computed from the assays.", False)
        for m in CU_SULFIDES
    },
}  # fmt: skip
