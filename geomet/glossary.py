"""Canonical table and column names of geomet, with units and meanings.

One place defines a column's name and unit. Column names carry their unit as a
suffix (``cu_pct``, ``au_gpt``, ``from_m``) because assay data mixes ppm,
percent and g/t (common practice in the trade). :func:`unit_of` reads the unit
from the suffix, so a new column named by these rules needs no entry here to
get its unit; an entry adds the plain-words description shown in workbooks.
"""

from __future__ import annotations

from dataclasses import dataclass

# Suffix -> unit label, longest suffixes first so that `_kwh_t` wins over `_t`.
UNIT_SUFFIXES: dict[str, str] = {
    "_kwh_m3": "kWh/m³",
    "_kwh_t": "kWh/t",
    "_kwh": "kWh",
    "_usd_t": "USD/t",
    "_usd_oz": "USD/oz",
    "_usd_g": "USD/g",
    "_usd_lb": "USD/lb",
    "_usd": "USD",
    "_t_m3": "t/m³",
    "_kg_t": "kg/t",
    "_g_t": "g/t",
    "_gpt": "g/t",
    "_ppm": "ppm",
    "_ppb": "ppb",
    "_pct": "%",
    "_frac": "fraction",
    "_tph": "t/h",
    "_kw": "kW",
    "_mm": "mm",
    "_um": "µm",
    "_nm": "nm",
    "_deg": "°",
    "_kt": "kt",
    "_kg": "kg",
    "_oz": "oz",
    "_min": "min",
    "_h": "h",
    "_m": "m",
    "_t": "t",
    "_g": "g",
    "_idx": "index",
}


@dataclass(frozen=True)
class Column:
    """A canonical column: its name, unit label and meaning."""

    name: str
    unit: str
    description: str
    risk: bool = False  # shown with a colour scale in workbooks: higher means more process risk


# Statistic suffixes that follow the unit (``cu_pct_p10``, ``clay_total_pct_mean``).
STATISTIC_SUFFIXES = ("_mean", "_median", "_std", "_min", "_max", "_p10", "_p50", "_p90", "_lo",
                      "_hi")


def base_column(name: str) -> str:
    """Strip one statistic suffix: ``cu_pct_p90`` -> ``cu_pct`` (other names unchanged)."""
    for suffix in STATISTIC_SUFFIXES:
        if name.endswith(suffix) and len(name) > len(suffix):
            return name[: -len(suffix)]
    return name


def unit_of(name: str) -> str:
    """Return the unit label read from a column name's suffix ('' when it has none).

    A statistic suffix after the unit is skipped, so ``cu_pct_p10`` is in % too.

    Examples
    --------
    >>> unit_of("cu_pct"), unit_of("energy_kwh_t"), unit_of("hole_id"), unit_of("au_gpt_p90")
    ('%', 'kWh/t', '', 'g/t')
    >>> unit_of("cu_pct_min"), unit_of("flotation_time_min")
    ('%', 'min')
    """
    if name in COLUMNS:
        return COLUMNS[name].unit
    base = base_column(name)
    # A statistic suffix counts only when what it follows has a unit: cu_pct_min is in %, but
    # flotation_time_min is in minutes.
    if base != name and (base in COLUMNS or _suffix_unit(base)):
        return COLUMNS[base].unit if base in COLUMNS else _suffix_unit(base)
    return _suffix_unit(name)


# Packages that add many derived columns describe them beside the code that computes them; the
# glossary reads those tables on first use (lazily, because those packages import the glossary).
PACKAGE_COLUMN_TABLES = ("geomet.minerals.columns",)
_package_columns: dict[str, Column] | None = None


def _lookup(name: str) -> Column | None:
    global _package_columns
    if name in COLUMNS:
        return COLUMNS[name]
    if _package_columns is None:
        import importlib

        found: dict[str, Column] = {}
        for module_name in PACKAGE_COLUMN_TABLES:
            table = importlib.import_module(module_name).COLUMN_DESCRIPTIONS
            for key, (text, risk) in table.items():
                found[key] = Column(key, _suffix_unit(key), text, risk)
        _package_columns = found
    return _package_columns.get(name)


def describe(name: str) -> str:
    """Return the plain-words description of a column ('' when unknown)."""
    col = _lookup(name)
    return col.description if col else ""


def is_risk_column(name: str) -> bool:
    """True for columns where a higher value means more process risk (workbook colour scales)."""
    col = _lookup(name)
    if col is not None:
        return col.risk
    return name.startswith(("clay_", "sulfate_", "acid_")) or name.endswith("_loss_tph")


def _cols(*entries: tuple) -> dict[str, Column]:
    out = {}
    for entry in entries:
        name, description, *rest = entry
        risk = bool(rest[0]) if rest else False
        out[name] = Column(name, _suffix_unit(name), description, risk)
    return out


def _suffix_unit(name: str) -> str:
    for suffix in sorted(UNIT_SUFFIXES, key=len, reverse=True):
        if name.endswith(suffix):
            return UNIT_SUFFIXES[suffix]
    return ""


# --- keys and geometry -----------------------------------------------------------------------
HOLE_ID = "hole_id"
FROM_M = "from_m"
TO_M = "to_m"
INTERVAL_KEYS = (HOLE_ID, FROM_M, TO_M)

COLLAR_COLUMNS = ("hole_id", "easting_m", "northing_m", "elevation_m", "total_depth_m")
SURVEY_COLUMNS = ("hole_id", "depth_m", "azimuth_deg", "dip_deg")

# --- assays (four-acid style, canonical units) ------------------------------------------------
ASSAY_COLUMNS = (
    "cu_pct", "au_gpt", "mo_ppm", "fe_pct", "s_pct", "ca_pct", "cu_asol_pct",
    "ag_gpt", "as_ppm", "zn_ppm", "pb_ppm", "mg_pct", "al_pct", "k_pct",
)

# --- scanned mineral abundances (wt%), as a core scanner reports them ---------------------------
# Gypsum and anhydrite are one group: a scanner cannot tell them apart at the core surface because
# anhydrite hydrates to gypsum once exposed to water (common practice).
SCANNED_MINERALS = (
    "quartz_feldspar", "k_feldspar", "biotite", "white_mica", "illite", "smectite",
    "kaolinite", "dickite", "halloysite", "pyrophyllite", "alunite", "jarosite",
    "gypsum_anhydrite", "chlorite", "epidote", "actinolite", "calcite", "dolomite",
    "ankerite", "siderite", "magnetite", "hematite", "goethite", "tourmaline", "diaspore",
    "rutile", "apatite", "pyrite", "chalcopyrite", "bornite", "chalcocite", "covellite",
    "molybdenite", "malachite", "chrysocolla",
)
SCANNED_MINERAL_COLUMNS = tuple(f"{m}_pct" for m in SCANNED_MINERALS)
# Absorption-feature positions reported by the scanner (kept as domain attributes).
SCAN_FEATURE_COLUMNS = ("white_mica_aloh_nm", "chlorite_feoh_nm")

# --- table names used inside a run ---------------------------------------------------------------
INPUT_TABLES = {
    "collars": "Drill-hole collars: one row per hole.",
    "surveys": "Downhole surveys: depth, azimuth and dip along each hole.",
    "assays": "Multi-element assays by interval.",
    "scan": "Scanned mineral abundances by interval (about 1 m).",
    "lithology": "Logged lithology codes by interval.",
    "density": "Dry bulk density by interval.",
    "testwork": "Metallurgical testwork results by sample interval.",
    "blocks": "Block model of the planned pit: centroids, size, density and estimated attributes.",
    "schedule": "Mine schedule: each block's mining period and phase.",
    "plant_limits": "Plant limits by schedule period.",
    "site_domains": "Domain codes supplied by the site, by interval.",
}
INTERVAL_INPUTS = ("assays", "scan", "lithology", "density", "testwork", "site_domains")
# Tables keyed by something other than downhole intervals: geometry, blocks and plans. No
# censoring applies to their numbers (a negative dip is a dip, not a value below detection).
NON_INTERVAL_TABLES = frozenset({"collars", "surveys", "blocks", "schedule", "plant_limits"})
# Columns that hold text (identifiers, codes, dates) whatever their name looks like.
TEXT_COLUMNS = frozenset(
    {"hole_id", "sample_id", "block_id", "lith_code", "site_domain", "domain", "phase",
     "test_date", "lab", "comment", "comments"}
)

COLUMNS: dict[str, Column] = _cols(
    ("hole_id", "Drill-hole identifier."),
    ("from_m", "Downhole depth of the interval top."),
    ("to_m", "Downhole depth of the interval bottom."),
    ("length_m", "Interval length along the hole."),
    ("depth_m", "Downhole (measured) depth of a survey station."),
    ("azimuth_deg", "Hole azimuth, clockwise from grid north."),
    ("dip_deg", "Hole dip from horizontal; negative downward."),
    ("easting_m", "Grid easting."),
    ("northing_m", "Grid northing."),
    ("elevation_m", "Elevation."),
    ("total_depth_m", "Final depth of the hole."),
    ("x_m", "Easting of the interval mid-point or block centroid."),
    ("y_m", "Northing of the interval mid-point or block centroid."),
    ("z_m", "Elevation of the interval mid-point or block centroid."),
    ("cu_pct", "Total copper."),
    ("au_gpt", "Gold."),
    ("mo_ppm", "Molybdenum."),
    ("fe_pct", "Iron."),
    ("s_pct", "Total sulfur."),
    ("ca_pct", "Calcium."),
    ("cu_asol_pct", "Acid-soluble copper (oxide copper)."),
    ("ag_gpt", "Silver."),
    ("as_ppm", "Arsenic."),
    ("zn_ppm", "Zinc."),
    ("pb_ppm", "Lead."),
    ("mg_pct", "Magnesium."),
    ("al_pct", "Aluminium."),
    ("k_pct", "Potassium."),
    ("density_t_m3", "Dry bulk density."),
    ("lith_code", "Logged lithology code."),
    ("period", "Schedule period (1 = first)."),
    ("phase", "Pit phase (pushback)."),
    ("domain", "Geometallurgical domain name."),
    # --- forecasts ------------------------------------------------------------------------
    ("bond_bwi_kwh_t", "Bond ball-mill work index."),
    ("smc_axb", "Impact breakage parameter A x b (higher = softer)."),
    ("smc_mia_kwh_t", "Coarse-stage grinding work index Mia (Morrell SMC method)."),
    ("specific_energy_kwh_t", "Grinding specific energy of the ore, without the clay penalty."),
    ("mill_energy_kwh_t", "Grinding energy per tonne including the clay handling penalty "
     "(specific energy / (1 - clay penalty))."),
    ("clay_penalty_frac", "Share of power-limited throughput lost to clay handling.", True),
    ("throughput_tph", "Mill throughput limited by grinding power and clay handling."),
    ("throughput_clay_loss_tph", "Throughput lost to clay against the same ore without clay.",
     True),
    ("cu_recovery_frac", "Forecast rougher flotation Cu recovery."),
    ("au_recovery_frac", "Forecast rougher flotation Au recovery."),
    ("conc_cu_pct", "Forecast Cu grade of the rougher concentrate."),
    ("conc_mass_pull_frac", "Share of feed mass reporting to the rougher concentrate."),
    ("acid_kg_t", "Forecast leach acid consumption (gangue + oxide Cu), as H2SO4.", True),
    ("acid_gangue_kg_t", "Acid consumed by gangue minerals (carbonates, Fe-Mg silicates ...).",
     True),
    ("acid_oxide_kg_t", "Acid consumed dissolving oxide Cu (98.08/63.55 kg per kg Cu).", True),
    ("rmse_default", "Cross-validated root-mean-square error of the uncalibrated default model."),
    ("rmse_cv", "Cross-validated (grouped by drill hole) root-mean-square error, calibrated."),
    ("mae_default", "Cross-validated mean absolute error of the uncalibrated default model."),
    ("mae_cv", "Cross-validated (grouped by drill hole) mean absolute error after calibration."),
    ("interval_coverage_frac", "Share of held-out tests inside their prediction interval."),
    ("coverage_target_frac", "Coverage the prediction intervals aim for."),
    # --- flags -----------------------------------------------------------------------------
    ("periods_ahead", "Periods between the current period and the flagged period."),
    ("flagged_t", "Tonnes of the period's ore over the flag threshold."),
    ("flagged_share_frac", "Share of the period's ore over the flag threshold.", True),
    ("period_ore_t", "Scheduled ore tonnes in the period."),
    # --- blend plan ------------------------------------------------------------------------
    ("feed_t", "Tonnes fed to the processor in the period."),
    ("energy_kwh", "Grinding energy used in the period."),
    ("energy_available_kwh", "Grinding energy available: power x hours x availability."),
    ("hours_used_h", "Mill hours the feed needs at its throughput."),
    ("hours_available_h", "Mill hours available in the period."),
    ("cu_recovered_t", "Copper recovered."),
    ("au_recovered_oz", "Gold recovered (troy ounces)."),
    ("acid_t", "Acid used by the leach pad."),
    ("value_usd", "Undiscounted value: payable metal less costs."),
    ("value_pv_usd", "Present value: value x discount factor."),
    ("discount_factor", "End-of-period discount factor (1 + annual rate) ^ -(years elapsed)."),
    ("limit_value", "The limit's value in the period."),
    ("used_value", "How much of the limit the plan uses."),
    ("slack", "Unused part of the limit."),
    ("binding", "True when the limit holds the plan back."),
    ("shadow_price_usd", "Present value gained per unit the limit is relaxed (0 when not "
     "binding)."),
    ("shadow_price_unit", "Unit of the shadow price (USD per unit of the limit)."),
    ("price_valid_from", "Lowest limit value over which the shadow price holds (HiGHS ranging)."),
    ("price_valid_to", "Highest limit value over which the shadow price holds (HiGHS ranging)."),
    ("reduced_cost_usd_t", "Value a tonne on an unused route would lose (reduced cost)."),
    ("value_usd_t", "Value of a tonne on this route."),
    ("required_change", "How far the limit must move for the plan to become feasible."),
    ("tonnes_t", "Dry tonnes."),
    ("opening_t", "Stockpile inventory at the start of the period."),
    ("closing_t", "Stockpile inventory at the end of the period."),
    ("added_t", "Tonnes placed on the stockpile in the period."),
    ("reclaimed_t", "Tonnes reclaimed from the stockpile in the period."),
    ("capacity_t", "Stockpile capacity."),
    # --- testwork selection ----------------------------------------------------------------
    ("mass_kg", "Core mass of the sample: length x core cross-section x density x core fraction."),
    ("core_size", "Wireline core size (NQ, HQ, PQ) or diameter."),
    ("core_fraction", "Share of the core cross-section available (0.5 = half core)."),
    ("tonnes_represented_t", "Scheduled tonnes of the domain closest to this sample."),
    ("reason", "Why the sample was chosen: the part of the ore it stands for."),
    ("samples_allocated", "Samples the domain gets (Neyman allocation, rounded)."),
    ("samples_existing", "Samples of the domain already tested."),
    ("samples_new", "New samples to send for this domain."),
    ("scheduled_tonnes_t", "Tonnes of the domain in the scheduled plan."),
    ("covered_tonnes_frac", "Share of the domain's tonnes within the stated distance of a sample."),
    ("wasserstein", "Wasserstein distance between sample and ore distributions of the attribute."),
    ("domain_id", "Domain number (1 = most metres)."),
    ("block_id", "Block identifier."),
    ("sample_id", "Testwork sample identifier."),
    ("gypsum_anhydrite_pct", "Gypsum + anhydrite, reported together by the scanner.", True),
    ("smectite_pct", "Smectite (montmorillonite), a swelling clay.", True),
    ("white_mica_aloh_nm", "Wavelength of the white-mica Al-OH absorption feature near 2200 nm."),
    ("chlorite_feoh_nm", "Wavelength of the chlorite Fe-OH absorption feature near 2250 nm."),
)
