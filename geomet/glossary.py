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
    """
    for candidate in (name, base_column(name)):
        if candidate in COLUMNS:
            return COLUMNS[candidate].unit
        unit = _suffix_unit(candidate)
        if unit:
            return unit
    return ""


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
    ("tonnes_t", "Dry tonnes."),
    ("period", "Schedule period (1 = first)."),
    ("phase", "Pit phase (pushback)."),
    ("domain", "Geometallurgical domain name."),
    ("gypsum_anhydrite_pct", "Gypsum + anhydrite, reported together by the scanner.", True),
    ("smectite_pct", "Smectite (montmorillonite), a swelling clay.", True),
    ("white_mica_aloh_nm", "Wavelength of the white-mica Al-OH absorption feature near 2200 nm."),
    ("chlorite_feoh_nm", "Wavelength of the chlorite Fe-OH absorption feature near 2250 nm."),
)
