"""The invented Vellantra porphyry Cu-Au system as a 3-D model that can be sampled anywhere.

The model is a telescoped porphyry system in a local mine grid (metres): a potassic core
around a gently plunging porphyry stock, a phyllic shell that climbs inward at upper levels,
a propylitic halo, an advanced-argillic lithocap lens near the top, a leached cap over a
supergene blanket (oxide copper at its top, chalcocite-covellite below), a sulfate front
below which anhydrite survives with gypsum horizons just above it, patches of late smectite,
tourmaline in places and a barren post-mineral dyke. Every boundary is made irregular by
smooth random fields (:mod:`geomet.demo.fields`), so nothing is a nested sphere.

:func:`build_deposit` draws the fields for a seed; :func:`sample_geology` evaluates the
"true" state (mineral wt%, trace grades, zone memberships, lithology) at any points.
Everything is vectorised over points. Zone geometry and assemblages follow the textbook
porphyry model (refs. [1], [2]); the absorption-feature trends follow ref. [3]. All
numbers are invented for the demo (from memory of typical values, not fitted to any deposit).

References
----------
.. [1] Sillitoe, R.H. (2010). Porphyry copper systems. Economic Geology 105(1), 3-41.
   DOI: 10.2113/gsecongeo.105.1.3
.. [2] Sillitoe, R.H. (2005). Supergene oxidized and enriched porphyry copper and related
   deposits. Economic Geology 100th Anniversary Volume, 723-768.
   DOI: 10.5382/AV100.22 (DOIs of [1] and [2] from memory; pages checked)
.. [3] Halley, S., Dilles, J.H. & Tosdal, R.M. (2015). Footprints: hydrothermal alteration
   and geochemical dispersion around porphyry copper deposits. SEG Newsletter 100, 1-17
   (white-mica Al-OH shortening towards Al-rich phyllic and argillic alteration).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from geomet.demo import chemistry
from geomet.demo.fields import FourierField
from geomet.glossary import SCANNED_MINERALS

# Local Vellantra mine grid: centre of the system [m].
CENTRE_E_M = 10_000.0
CENTRE_N_M = 20_000.0
CORE_Z_M = 1000.0  # elevation of the centre of the potassic core [m]

MINERALS = SCANNED_MINERALS
_IX = {m: i for i, m in enumerate(MINERALS)}

# Lithology codes (invented for the demo).
LITH_CODES = {
    "COL": "transported gravels and colluvium",
    "VCL": "volcaniclastic cover sequence (lithocap host)",
    "AND": "andesite host rock (lavas)",
    "AVB": "andesitic volcanic breccia (beds within the andesite)",
    "TUF": "tuff beds within the volcaniclastic cover",
    "PEP": "early porphyry (main mineralised stock)",
    "PIM": "inter-mineral porphyry (weaker grade)",
    "BXH": "hydrothermal breccia (tourmaline cement in places)",
    "DYK": "late post-mineral dyke (barren)",
}

# Alteration assemblages at full intensity [wt%]; the featureless quartz-feldspar background,
# the Cu minerals, molybdenite and the sulfates are added separately.
ASSEMBLAGES_PCT: dict[str, dict[str, float]] = {
    "fresh": {
        "k_feldspar": 2.0,
        "biotite": 4.0,
        "white_mica": 0.5,
        "illite": 0.5,
        "chlorite": 2.0,
        "epidote": 1.0,
        "actinolite": 4.0,
        "calcite": 0.8,
        "magnetite": 2.0,
        "rutile": 0.3,
        "apatite": 0.4,
        "pyrite": 0.3,
        "hematite": 0.2,
    },
    "propylitic": {
        "k_feldspar": 1.0,
        "biotite": 1.0,
        "white_mica": 1.5,
        "illite": 2.0,
        "smectite": 0.5,
        "chlorite": 11.0,
        "epidote": 7.0,
        "actinolite": 3.0,
        "calcite": 3.5,
        "dolomite": 1.2,
        "ankerite": 1.0,
        "siderite": 0.3,
        "magnetite": 1.0,
        "rutile": 0.4,
        "apatite": 0.3,
        "pyrite": 2.5,
    },
    "phyllic": {
        "white_mica": 24.0,
        "illite": 9.0,
        "kaolinite": 1.0,
        "chlorite": 0.5,
        "ankerite": 0.3,
        "rutile": 0.6,
        "apatite": 0.1,
        "pyrite": 7.0,
        "tourmaline": 0.3,
    },
    "potassic": {
        "k_feldspar": 20.0,
        "biotite": 13.0,
        "white_mica": 2.0,
        "chlorite": 1.0,
        "epidote": 0.3,
        "actinolite": 1.5,
        "calcite": 0.3,
        "magnetite": 3.5,
        "hematite": 0.1,
        "rutile": 0.5,
        "apatite": 0.5,
        "pyrite": 1.0,
    },
    "advanced_argillic": {
        "white_mica": 2.0,
        "illite": 2.0,
        "kaolinite": 9.0,
        "dickite": 7.0,
        "halloysite": 1.2,
        "pyrophyllite": 7.0,
        "alunite": 9.0,
        "hematite": 0.3,
        "tourmaline": 0.2,
        "diaspore": 2.5,
        "rutile": 0.8,
        "pyrite": 4.0,
    },
}
ZONES = tuple(ASSEMBLAGES_PCT)

# Share of acid-soluble copper in each Cu mineral (demo assumption: sulfuric-acid leach
# dissolves oxide copper fully, chalcocite and covellite a little, primary sulfides barely).
ACID_SOLUBLE_SHARE = {
    "malachite": 1.0,
    "chrysocolla": 1.0,
    "chalcocite": 0.08,
    "covellite": 0.03,
    "chalcopyrite": 0.01,
    "bornite": 0.02,
}

# (name, correlation length [m], dims) of every field the model uses.
_FIELD_SPECS = (
    ("topo", 450.0, 2),
    ("shell", (180.0, 180.0, 140.0), 3),
    ("lithocap", 160.0, 3),
    ("lithocap_base", 220.0, 2),
    ("water_table", 260.0, 2),
    ("blanket", 200.0, 2),
    ("sulfate_front", 240.0, 2),
    ("cu", (70.0, 70.0, 45.0), 3),
    ("au", (60.0, 60.0, 40.0), 3),
    ("mo", 80.0, 3),
    ("trace", 50.0, 3),
    ("smectite", (55.0, 55.0, 30.0), 3),
    ("tourmaline", 45.0, 3),
    ("sulfate", (50.0, 50.0, 20.0), 3),
    ("stock", 120.0, 3),
    ("stock_top", 150.0, 2),
    ("breccia", 70.0, 3),
    ("cover", 120.0, 2),
    ("dyke", 90.0, 2),
    ("tex0", 35.0, 3),
    ("tex1", 45.0, 3),
    ("tex2", 30.0, 3),
    ("tex3", 55.0, 3),
    ("tex4", 40.0, 3),
    ("spectral", 60.0, 3),
    ("layers", (400.0, 400.0, 9.0), 3),
)


@dataclass(frozen=True)
class DepositModel:
    """The seeded random fields that make one realisation of the Vellantra system."""

    seed: int
    fields: dict[str, FourierField] = field(repr=False)

    def topography_m(self, x_m, y_m) -> np.ndarray:
        """Ground elevation [m] at grid points: a rolling surface with a silica-cap ridge."""
        x = np.asarray(x_m, dtype=float)
        y = np.asarray(y_m, dtype=float)
        r2 = (x - CENTRE_E_M - 250.0) ** 2 + (y - CENTRE_N_M + 80.0) ** 2
        return (
            1285.0
            + 35.0 * self.fields["topo"](x, y)
            + 40.0 * np.exp(-r2 / (2 * 380.0**2))
            + 0.025 * (y - CENTRE_N_M)
        )


def build_deposit(seed: int = 7) -> DepositModel:
    """Draw the random fields of one Vellantra realisation.

    Parameters
    ----------
    seed : int
        Seed of the geology stream (``numpy.random.default_rng([seed, 1])``).
    """
    rng = np.random.default_rng([int(seed), 1])
    fields = {
        name: FourierField.make(rng, length, dims=dims) for name, length, dims in _FIELD_SPECS
    }
    return DepositModel(int(seed), fields)


def _sig(x):
    return 0.5 * (1.0 + np.tanh(0.5 * x))


@dataclass(frozen=True)
class Geology:
    """The true state of the rock at N points (no measurement noise).

    minerals_pct : (N, 35) wt% in :data:`MINERALS` order, rows summing to 100.
    gypsum_frac : share of the sulfate group that is gypsum (the rest anhydrite).
    zones : membership weights (potassic, phyllic, propylitic, fresh, advanced_argillic,
        leached, oxide, enriched, dyke), each 0-1.
    trace : au_gpt, ag_gpt, as_ppm, zn_ppm, pb_ppm.
    lith_code : (N,) str lithology code.
    """

    minerals_pct: np.ndarray
    gypsum_frac: np.ndarray
    zones: dict[str, np.ndarray]
    trace: dict[str, np.ndarray]
    lith_code: np.ndarray
    porosity_frac: np.ndarray
    white_mica_aloh_nm: np.ndarray
    chlorite_feoh_nm: np.ndarray
    core_distance_idx: np.ndarray
    depth_below_surface_m: np.ndarray
    sulfate_front_z_m: np.ndarray


def lithology_at(model: DepositModel, x_m, y_m, z_m) -> np.ndarray:
    """Lithology code (:data:`LITH_CODES`) at points [m], without the rest of the geology."""
    x = np.asarray(x_m, dtype=float).ravel()
    y = np.asarray(y_m, dtype=float).ravel()
    z = np.asarray(z_m, dtype=float).ravel()
    return _lithology(model, x, y, z, model.topography_m(x, y))


def _lithology(model: DepositModel, x, y, z, topo):
    f = model.fields
    xc = CENTRE_E_M + 0.12 * (z - CORE_Z_M)
    yc = CENTRE_N_M + 0.05 * (z - CORE_Z_M)
    r_st = np.hypot((x - xc) / 300.0, (y - yc) / 250.0) * np.exp(0.12 * f["stock"](x, y, z))
    stock_top = 1150.0 + 30.0 * f["stock_top"](x, y) - 120.0 * r_st**2
    in_stock = (r_st < 1.0) & (z < stock_top)
    in_pim = (r_st < 0.5) & (z < stock_top - 90.0)
    r_bx = (
        np.hypot(x - CENTRE_E_M - 200.0, y - CENTRE_N_M - 150.0)
        / 90.0
        * np.exp(0.2 * f["breccia"](x, y, z))
    )
    in_bx = (r_bx < 1.0) & (z > 930.0) & (z < 1210.0)
    # late dyke: strike 035, dip 80 towards 125, about 14 m wide
    strike = np.radians(35.0)
    dipdir = np.radians(125.0)
    s = np.array([np.sin(strike), np.cos(strike), 0.0])
    dvec = np.array(
        [
            np.cos(np.radians(80.0)) * np.sin(dipdir),
            np.cos(np.radians(80.0)) * np.cos(dipdir),
            -np.sin(np.radians(80.0)),
        ]
    )
    n = np.cross(s, dvec)
    dist = (x - CENTRE_E_M - 80.0) * n[0] + (y - CENTRE_N_M + 60.0) * n[1] + (z - CORE_Z_M) * n[2]
    in_dyke = np.abs(dist) < 7.0 + 2.5 * f["dyke"](x, y)
    cover = np.clip(4.0 + 4.0 * f["cover"](x, y), 0.0, 12.0)
    in_col = (topo - z) < cover
    vcl_base = 1180.0 + 20.0 * f["lithocap_base"](x, y)
    bedded = f["layers"](x, y, z) > 0.55
    code = np.where(
        z > vcl_base, np.where(bedded, "TUF", "VCL"), np.where(bedded, "AVB", "AND")
    ).astype(object)
    code[in_stock] = "PEP"
    code[in_pim] = "PIM"
    code[in_bx] = "BXH"
    code[in_dyke] = "DYK"
    code[in_col] = "COL"
    return code.astype(str)


def _alteration(f, x, y, z, dyke):
    """Zone weights of the hypogene shells and the lithocap (they sum to 1 at every point)."""
    # hypogene shells around the core, telescoped: the phyllic shell climbs inward
    xc = CENTRE_E_M + 0.12 * (z - CORE_Z_M)
    yc = CENTRE_N_M + 0.05 * (z - CORE_Z_M)
    d = np.sqrt(
        ((x - xc) / 330.0) ** 2 + ((y - yc) / 270.0) ** 2 + ((z - CORE_Z_M) / 450.0) ** 2
    ) * np.exp(0.16 * f["shell"](x, y, z))
    up = np.clip((z - CORE_Z_M) / 400.0, 0.0, 1.0)
    s_pot = _sig((0.72 - 0.22 * up - d) / 0.05)
    s_phy = np.maximum(_sig((1.22 + 0.10 * up - d) / 0.07), s_pot)
    s_pro = np.maximum(_sig((2.0 - d) / 0.12), s_phy)
    w = {
        "potassic": s_pot,
        "phyllic": s_phy - s_pot,
        "propylitic": s_pro - s_phy,
        "fresh": 1.0 - s_pro,
    }
    # advanced-argillic lithocap lens, its base rising away from its centre
    r_aa = np.hypot((x - CENTRE_E_M - 250.0) / 480.0, (y - CENTRE_N_M + 80.0) / 400.0) * np.exp(
        0.18 * f["lithocap"](x, y, z)
    )
    z_aa = 1225.0 + 20.0 * f["lithocap_base"](x, y) + 50.0 * r_aa**2
    w_aa = _sig((z - z_aa) / 8.0) * _sig((1.0 - r_aa) / 0.07)
    for k in w:
        w[k] = w[k] * (1.0 - w_aa)
    w["advanced_argillic"] = w_aa
    # the post-mineral dyke is fresh rock
    for k in w:
        w[k] = w[k] * (1.0 - dyke)
    w["fresh"] = w["fresh"] + dyke
    return w, d, up


def _weathering(f, x, y, z, topo):
    """Leached cap over the supergene blanket (oxide top, enriched sulfides below)."""
    z_wt = topo - 42.0 - 14.0 * f["water_table"](x, y)
    w_lc = _sig((z - z_wt) / 2.5)
    z_sgb = z_wt - (38.0 + 12.0 * f["blanket"](x, y))
    w_sg = _sig((z - z_sgb) / 3.0) * (1.0 - w_lc)
    w_ox = w_sg * _sig((z - (z_wt - 18.0)) / 3.0)
    return {
        "leached": w_lc,
        "oxide": w_ox,
        "enriched": w_sg - w_ox,
        "hypogene": np.clip(1.0 - w_lc - w_sg, 0.0, 1.0),
    }


def _base_minerals(f, x, y, z, topo, w, lith, ftex):
    """Alteration assemblages with textural variation, smectite patches and tourmaline."""
    m = np.zeros((len(x), len(MINERALS)))
    tex = [np.exp(0.35 * ft - 0.06) for ft in ftex]
    for zone, assemblage in ASSEMBLAGES_PCT.items():
        wz = w[zone]
        for mineral, pct in assemblage.items():
            j = _IX[mineral]
            m[:, j] += wz * pct * tex[j % 5]
    # smectite patches (late overprint, stronger near surface) and tourmaline in places
    patch = _sig((f["smectite"](x, y, z) - 0.85) / 0.12)
    m[:, _IX["smectite"]] += (
        patch * (3.0 + 9.0 * _sig((z - (topo - 220.0)) / 25.0)) * (1.0 - 0.6 * w["potassic"])
    )
    w_aa = w["advanced_argillic"]
    tour = _sig((f["tourmaline"](x, y, z) - 1.1) / 0.12) * (w["phyllic"] + 0.5 * w_aa) * 5.0
    m[:, _IX["tourmaline"]] += tour + 6.0 * (lith == "BXH") * tex[3]
    return m


def _grades(f, x, y, z, d, up, w, wx, lith, dyke, fert, ftex):
    """Cu, Au and Mo grades (Cu after supergene leaching and enrichment) and trace elements."""
    w_aa = w["advanced_argillic"]
    w_lc, w_ox, w_en = wx["leached"], wx["oxide"], wx["enriched"]
    cu_h = (0.04 + 0.78 * np.exp(-((d / 0.95) ** 2))) * np.exp(0.28 * f["cu"](x, y, z) - 0.04)
    cu_h *= 1.0 - 0.6 * w_aa
    au = (0.02 + 0.85 * np.exp(-((d / 0.62) ** 2))) * np.exp(0.35 * f["au"](x, y, z) - 0.06)
    au *= 1.0 - 0.5 * w_aa
    mo_ppm = (8.0 + 260.0 * np.exp(-(((d - 0.95) / 0.28) ** 2))) * np.exp(0.4 * f["mo"](x, y, z))
    lith_cu = np.select([lith == "PIM", lith == "BXH", lith == "COL"], [0.7, 1.15, 0.5], 1.0)
    lith_au = np.select([lith == "PIM", lith == "COL"], [0.5, 0.6], 1.0)
    cu_h *= lith_cu
    au *= lith_au
    ftr = f["trace"](x, y, z)
    cu_h = np.where(dyke > 0, 0.0011 * np.exp(0.4 * ftr), cu_h)
    au = np.where(dyke > 0, 0.003 * np.exp(0.3 * ftr), au)
    mo_ppm = np.where(dyke > 0, 2.0, mo_ppm)
    # pyritic ground (phyllic, lithocap) generates the acid that leaches copper out of the
    # cap; low-pyrite potassic ground keeps much of its copper as oxide minerals in place
    pyritic = np.clip(w["phyllic"] + w_aa + 0.3 * w["propylitic"], 0.0, 1.0)
    cu = (
        cu_h * (1.0 + 1.7 * fert * w_en + 1.3 * fert * w_ox) * (1.0 - w_lc * (0.2 + 0.75 * pyritic))
    )
    au = au * (1.0 + 0.15 * w_lc)
    ag = (0.25 + 1.8 * cu_h * (1.0 + 0.8 * fert * w_en) * (1.0 - 0.6 * w_lc)) * np.exp(0.3 * ftr)
    as_ppm = (6.0 + 120.0 * w["phyllic"] * up + 300.0 * w_aa) * np.exp(0.4 * ftex[1])
    zn_ppm = (
        (35.0 + 700.0 * np.exp(-(((d - 2.05) / 0.45) ** 2)))
        * (1.0 - 0.8 * w_lc)
        * np.exp(0.4 * ftex[2])
    )
    pb_ppm = (8.0 + 260.0 * np.exp(-(((d - 2.3) / 0.5) ** 2))) * np.exp(0.4 * ftex[4])
    trace = {"au_gpt": au, "ag_gpt": ag, "as_ppm": as_ppm, "zn_ppm": zn_ppm, "pb_ppm": pb_ppm}
    return cu, mo_ppm, trace


def _add_copper_minerals(m, cu, mo_ppm, w, wx):
    """Cu minerals by zone (shares of the Cu grade, converted by stoichiometry) and molybdenite."""
    w_lc, w_ox, w_en = wx["leached"], wx["oxide"], wx["enriched"]
    bn_share = 0.45 * np.clip(w["potassic"], 0.0, 1.0)
    hyp = wx["hypogene"] + 0.25 * w_lc + 0.05 * w_ox + 0.3 * w_en
    shares = {
        "chalcocite": 0.15 * w_ox + 0.5 * w_en,
        "covellite": 0.2 * w_en,
        "malachite": 0.15 * w_lc + 0.35 * w_ox,
        "chrysocolla": 0.6 * w_lc + 0.45 * w_ox,
        "bornite": hyp * bn_share,
        "chalcopyrite": hyp * (1.0 - bn_share),
    }
    cu_frac = {k: chemistry.element_fractions(k)["Cu"] for k in shares}
    for k, share in shares.items():
        m[:, _IX[k]] = cu * share / cu_frac[k]
    mo_frac = chemistry.element_fractions("molybdenite")["Mo"]
    m[:, _IX["molybdenite"]] = mo_ppm * 1e-4 / mo_frac * (1.0 - 0.7 * w_lc)


def _weather_minerals(m, wx):
    """Sulfides to iron oxides, carbonates dissolved, mafic minerals to clays (in place)."""
    w_lc, w_ox, w_en = wx["leached"], wx["oxide"], wx["enriched"]
    fe = {
        k: chemistry.element_fractions(k)["Fe"]
        for k in ("pyrite", "goethite", "hematite", "jarosite", "magnetite")
    }
    py0 = m[:, _IX["pyrite"]].copy()
    m[:, _IX["pyrite"]] = py0 * (1.0 - 0.97 * w_lc) * (1.0 - 0.35 * w_en - 0.5 * w_ox)
    fe_lost = (py0 - m[:, _IX["pyrite"]]) * fe["pyrite"]
    wt = w_lc + 0.5 * w_ox
    for k in ("calcite", "dolomite", "ankerite", "siderite"):
        m[:, _IX[k]] *= 1.0 - 0.95 * wt
    mt_lost = m[:, _IX["magnetite"]] * 0.7 * wt
    m[:, _IX["magnetite"]] -= mt_lost
    m[:, _IX["hematite"]] += mt_lost * fe["magnetite"] / fe["hematite"]
    mafic_lost = np.zeros(len(m))
    for k in ("chlorite", "biotite", "actinolite"):
        lost = m[:, _IX[k]] * 0.6 * wt
        m[:, _IX[k]] -= lost
        mafic_lost += lost
    kfs_lost = m[:, _IX["k_feldspar"]] * 0.3 * wt
    m[:, _IX["k_feldspar"]] -= kfs_lost
    m[:, _IX["kaolinite"]] += 0.35 * mafic_lost + 0.3 * kfs_lost + 3.0 * w_lc
    m[:, _IX["smectite"]] += 0.25 * mafic_lost + 1.0 * w_lc
    m[:, _IX["goethite"]] += 0.55 * fe_lost / fe["goethite"] + 0.6 * w_lc
    m[:, _IX["hematite"]] += 0.20 * fe_lost / fe["hematite"]
    m[:, _IX["jarosite"]] += 0.15 * fe_lost / fe["jarosite"]


def _sulfates(f, x, y, z, topo, w, fert, dyke):
    """Anhydrite below the sulfate front, gypsum horizons in the 55 m above it."""
    z_front = topo - 150.0 - 30.0 * f["sulfate_front"](x, y)
    fs = f["sulfate"](x, y, z)
    anh = (
        (1.5 * w["potassic"] + 3.0 * w["phyllic"] + 0.6 * w["propylitic"])
        * np.exp(0.4 * fs - 0.08)
        * _sig((z_front - z) / 4.0)
        * (1.0 - 0.7 * w["advanced_argillic"])
    )
    band = ((1.0 + np.cos(2.0 * np.pi * (z - z_front) / 13.0 + 1.5 * fs)) / 2.0) ** 6
    gyp = (
        _sig((z - z_front) / 2.0)
        * _sig((z_front + 55.0 - z) / 4.0)
        * band
        * 9.0
        * (0.4 + fert)
        * (1.0 - dyke)
    )
    return anh, gyp, z_front


def sample_geology(model: DepositModel, x_m, y_m, z_m) -> Geology:
    """Evaluate the true Vellantra geology at points.

    Parameters
    ----------
    model : DepositModel
    x_m, y_m, z_m : array_like
        Easting, northing and elevation of the points [m], same shape.

    Returns
    -------
    Geology
        Mineral wt% (rows summing to 100), trace grades, zone weights and lithology.

    Notes
    -----
    Zone weights come from logistic transitions of a noisy distance to the core
    (``core_distance_idx``, 1 at the phyllic shell) and of depths below noisy surfaces
    (water table, blanket base, sulfate front). Minerals are the weight-averaged assemblages
    of :data:`ASSEMBLAGES_PCT`, then overprinted by weathering; the featureless
    quartz-feldspar takes the remainder to 100 wt%.
    """
    x = np.asarray(x_m, dtype=float).ravel()
    y = np.asarray(y_m, dtype=float).ravel()
    z = np.asarray(z_m, dtype=float).ravel()
    f = model.fields
    topo = model.topography_m(x, y)
    lith = _lithology(model, x, y, z, topo)
    dyke = (lith == "DYK").astype(float)
    w, d, up = _alteration(f, x, y, z, dyke)
    wx = _weathering(f, x, y, z, topo)
    w_aa = w["advanced_argillic"]
    fert = np.clip(w["phyllic"] + w_aa + 0.5 * w["potassic"] + 0.2 * w["propylitic"], 0.0, 1.0)
    ftex = [f[f"tex{i}"](x, y, z) for i in range(5)]  # textural fields, shared below
    m = _base_minerals(f, x, y, z, topo, w, lith, ftex)
    cu, mo_ppm, trace = _grades(f, x, y, z, d, up, w, wx, lith, dyke, fert, ftex)
    _add_copper_minerals(m, cu, mo_ppm, w, wx)
    _weather_minerals(m, wx)
    anh, gyp, z_front = _sulfates(f, x, y, z, topo, w, fert, dyke)
    m[:, _IX["gypsum_anhydrite"]] = anh + gyp
    total_sulfate = anh + gyp
    gypsum_frac = np.where(total_sulfate > 0, gyp / np.maximum(total_sulfate, 1e-12), 1.0)

    # featureless quartz-feldspar takes the remainder
    m[:, _IX["quartz_feldspar"]] = 0.0
    others = m.sum(axis=1)
    over = others > 92.0
    if over.any():
        m[over] *= (92.0 / others[over])[:, None]
        others = m.sum(axis=1)
    m[:, _IX["quartz_feldspar"]] = 100.0 - others

    w_lc, w_ox = wx["leached"], wx["oxide"]
    porosity = 0.015 + 0.10 * w_lc + 0.05 * w_aa + 0.03 * w_ox + 0.002 * m[:, _IX["smectite"]]
    fspec = f["spectral"](x, y, z)
    aloh = (
        2207.0 - 6.0 * w["phyllic"] - 9.0 * w_aa - 2.0 * w_lc + 1.5 * w["propylitic"] + 0.8 * fspec
    )
    feoh = 2249.0 + 6.0 * np.exp(-(((d - 1.3) / 0.6) ** 2)) + 1.0 * fspec
    zones = dict(w)
    zones.update(leached=w_lc, oxide=w_ox, enriched=wx["enriched"], dyke=dyke)
    return Geology(m, gypsum_frac, zones, trace, lith, porosity, aloh, feoh, d, topo - z, z_front)


def element_grades(minerals_pct: np.ndarray, gypsum_frac: np.ndarray) -> dict[str, np.ndarray]:
    """Element grades [wt%] implied by mineral abundances [wt%], plus acid-soluble Cu.

    Parameters
    ----------
    minerals_pct : ndarray, shape (N, 35)
        Mineral abundances [wt%] in :data:`MINERALS` order.
    gypsum_frac : ndarray, shape (N,)
        Share of the gypsum-anhydrite group that is gypsum [fraction].

    Returns
    -------
    dict
        ``cu_pct, mo_ppm, fe_pct, s_pct, ca_pct, mg_pct, al_pct, k_pct, cu_asol_pct``.

    Notes
    -----
    c_el = sum_i m_i w_(i,el), with w the mass fractions of :mod:`geomet.demo.chemistry`;
    the sulfate group is split into gypsum and anhydrite by ``gypsum_frac``.
    """
    names = list(MINERALS)
    j = _IX["gypsum_anhydrite"]
    mats = chemistry.element_matrix(tuple(n for n in names if n != "gypsum_anhydrite"))
    others = np.delete(minerals_pct, j, axis=1)
    out = np.zeros((len(minerals_pct), mats.shape[1]))
    for i in range(mats.shape[0]):  # element-wise, not BLAS: the same bits on every machine
        out += others[:, i : i + 1] * mats[i]
    gy = chemistry.element_matrix(("gypsum",))[0]
    an = chemistry.element_matrix(("anhydrite",))[0]
    sulf = minerals_pct[:, j][:, None]
    g = np.asarray(gypsum_frac, dtype=float)[:, None]
    out += sulf * (g * gy + (1.0 - g) * an)
    res = {f"{el.lower()}_pct": out[:, k] for k, el in enumerate(chemistry.ASSAY_ELEMENTS)}
    res["mo_ppm"] = res.pop("mo_pct") * 1e4
    asol = np.zeros(len(minerals_pct))
    for mineral, share in ACID_SOLUBLE_SHARE.items():
        asol += minerals_pct[:, _IX[mineral]] * chemistry.element_fractions(mineral)["Cu"] * share
    res["cu_asol_pct"] = asol
    return res


def bulk_density_t_m3(minerals_pct: np.ndarray, gypsum_frac, porosity_frac) -> np.ndarray:
    """Dry bulk density [t/m3] from mineral abundances and porosity.

    Notes
    -----
    rho_grain = 100 / sum_i (m_i / rho_i) (harmonic mean by mass); rho_bulk = (1 - phi) rho_grain.
    """
    inv = np.zeros(len(minerals_pct))
    for i, name in enumerate(MINERALS):
        if name == "gypsum_anhydrite":
            g = np.asarray(gypsum_frac, dtype=float)
            rho_inv = (
                g / chemistry.GRAIN_DENSITY_G_CM3["gypsum"]
                + (1.0 - g) / chemistry.GRAIN_DENSITY_G_CM3["anhydrite"]
            )
        else:
            rho_inv = 1.0 / chemistry.GRAIN_DENSITY_G_CM3[name]
        inv += minerals_pct[:, i] * rho_inv
    return (1.0 - np.asarray(porosity_frac)) * 100.0 / inv
