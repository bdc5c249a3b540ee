"""Normative speciation: assays to sulfide, sulfate and oxide-copper minerals.

Assays (Cu, S, Fe, Mo, acid-soluble Cu, Ca, optionally As) become normative minerals, vectorised
over any number of intervals or blocks.

The calculation follows a stated order, every step a mass balance on what the earlier ones left:

1. **Oxide Cu.** Acid-soluble Cu measures oxide copper; it is assigned to one oxide Cu mineral
   (option ``cu_oxide_mineral``, default chrysocolla), capped at total Cu. Sulfide Cu is the rest.
   (A sulfuric-acid leach also dissolves part of any chalcocite; that Cu is counted as oxide.)
2. **Molybdenite** from Mo, which sits in no other common mineral; its S is set aside.
   Optionally (``arsenic_mineral``) an As mineral from As, after the sulfate of step 3: enargite
   or tennantite take Cu and S, arsenopyrite Fe and S.
3. **Sulfate S**: the S of scanned alunite and jarosite (``scanned_sulfates``), and the
   S of gypsum-anhydrite by rule ``sulfate_source``:

   - ``"scan"`` (default): from the scanned ``gypsum_anhydrite_pct`` and the S fraction of the
     sulfate mineral (``sulfate_mineral``: anhydrite, which dominates by mass where sulfate is
     abundant, below the sulfate front; or gypsum, for ore above it); rows without a scan
     value get no sulfate (noted in ``balance_flag``);
   - ``"ca"``: Ca is an upper bound (it also sits in carbonates, epidote and plagioclase), so
     sulfate S = min(``ca_sulfate_frac`` × Ca × M(S)/M(Ca), S left after the Cu and Mo
     sulfides). Priority rule: Cu and Mo sulfides before sulfate, sulfate before pyrite;
   - ``"auto"``: ``"scan"`` where the row has a scan value, else ``"ca"``;
   - ``"none"``: all S is sulfide S.
4. **Cu sulfides and pyrite.** Four Cu sulfides (chalcopyrite, bornite, chalcocite, covellite)
   and pyrite against two balances (sulfide Cu, sulfide S) have no unique answer, so the
   proportions of the Cu sulfides are tied to a hint h (mass shares summing to 1): the scanned
   Cu-sulfide abundances of the row (``sulfide_hint="scan"``; rows with none use the fixed
   proportions) or fixed proportions (``"fixed"``, default all chalcopyrite, the hypogene
   assumption). Each row solves the non-negative least-squares problem

   min [(Cu_sulfide − Σ_k c_k x_k)/σ_Cu]² + [(S_sulfide − Σ_k s_k x_k − s_py x_py)/σ_S]²
       + (λ/σ_Cu)² Σ_k (x_k − h_k Σ_j x_j)²,   x ≥ 0,

   with c_k, s_k the Cu and S mass fractions of mineral k, σ the assay precision
   (``abs_tol_pct`` + ``rel_tol_frac`` × assay) so that both balances count in units of their
   precision, and λ = ``hint_weight``. When the
   sulfide S suffices for the hinted assemblage, the answer is exact and closed-form: the Cu
   sulfides in the hinted proportions take all sulfide Cu and pyrite takes the remaining S
   (pyrite is balanced on S, never on Fe, which silicates and oxides also carry). When S is
   short, the batched NNLS (:func:`geomet.minerals.nnls.nnls_batched`) shifts the assemblage to
   S-poorer Cu sulfides, as far as needed, and leaves a residual only if even that cannot
   balance.
5. **Residuals and flags.** ``resid_<el>_pct`` = assay − element in the normative minerals, for
   Cu, S, Fe (positive: Fe in silicates and oxides) and Ca (positive: Ca in carbonates and
   silicates). ``balance_flag`` lists what went wrong or was assumed; ``balance_ok`` is False
   where an assay could not be balanced.

References
----------
.. [1] Lawson, C. L. & Hanson, R. J. (1974). *Solving Least Squares Problems*. Prentice-Hall.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from geomet.errors import InputDataError, RecipeError
from geomet.minerals._frame import numeric_columns
from geomet.minerals.nnls import nnls_batched
from geomet.minerals.reference import MINERALS, unknown_mineral_message

CU_SULFIDES = ("chalcopyrite", "bornite", "chalcocite", "covellite")
SULFATE_SOURCES = ("scan", "ca", "auto", "none")
SULFATE_MINERALS = ("anhydrite", "gypsum")
SULFIDE_HINTS = ("scan", "fixed")
CU_OXIDE_MINERALS = ("chrysocolla", "malachite", "cuprite", "tenorite")
ARSENIC_MINERALS = ("none", "enargite", "tennantite", "arsenopyrite")
DEFAULT_CU_SULFIDE_PROPORTIONS: dict[str, float] = {"chalcopyrite": 1.0}

NORM_COLUMNS = (
    "norm_chalcopyrite_pct",
    "norm_bornite_pct",
    "norm_chalcocite_pct",
    "norm_covellite_pct",
    "norm_pyrite_pct",
    "norm_molybdenite_pct",
    "norm_cu_oxide_pct",
    "norm_gypsum_anhydrite_pct",
)

# Balance flags: bit -> (text, counts as a failure to balance)
_FLAGS: dict[int, tuple[str, bool]] = {
    1: ("missing cu_pct or s_pct assay", True),
    2: ("acid-soluble Cu exceeds total Cu (capped)", True),
    4: ("sulfate S exceeds total S (capped)", True),
    8: ("Mo needs more S than assayed", True),
    16: ("Cu without enough sulfide S: Cu left unbalanced", True),
    32: ("more S than the Fe allows: sulfides need more Fe than assayed", True),
    64: ("sulfate needs more Ca than assayed", True),
    128: ("S left unbalanced", True),
    256: ("too little S for the hinted Cu sulfides: shifted to S-poorer ones", False),
    512: ("no cu_asol_pct: all Cu taken as sulfide", False),
    1024: ("no sulfate value: no sulfate S removed", False),
    2048: ("no mo_ppm: no molybdenite", False),
    4096: ("no fe_pct: Fe not checked", False),
    8192: ("As exceeds what the Cu, Fe or S allow for the As mineral (capped)", False),
}
_FAIL_MASK = sum(bit for bit, (_, fail) in _FLAGS.items() if fail)
FAILURE_FLAGS = frozenset(text for text, fail in _FLAGS.values() if fail)
"""Flag texts that mean a row could not be balanced (the others are notes on assumptions)."""
SHIFT_FLAG = _FLAGS[256][0]


def _frac(mineral: str, element: str) -> float:
    return MINERALS[mineral].fraction(element)


def _column(df: pd.DataFrame, name: str, scale: float = 1.0) -> np.ndarray:
    if name not in df.columns:
        return np.full(len(df), np.nan)
    return numeric_columns(df, [name])[:, 0] * scale


def _check_choice(name: str, value: str, allowed: tuple[str, ...]) -> None:
    if value not in allowed:
        msg = f"{name} must be one of {list(allowed)}; got {value!r}"
        raise RecipeError(msg)


def validate_cu_sulfide_proportions(proportions: Mapping[str, float] | None) -> np.ndarray:
    """Check fixed Cu-sulfide proportions and return them as shares in :data:`CU_SULFIDES` order.

    Parameters
    ----------
    proportions : mapping or None
        Cu sulfide -> relative mass share (any positive scale); ``None`` gives
        :data:`DEFAULT_CU_SULFIDE_PROPORTIONS`.

    Returns
    -------
    numpy.ndarray
        Mass shares [fraction], summing to 1.

    Raises
    ------
    geomet.errors.RecipeError
        On a mineral that is not one of the four Cu sulfides, a negative share or an all-zero
        mapping.
    """
    props = DEFAULT_CU_SULFIDE_PROPORTIONS if proportions is None else proportions
    shares = np.zeros(len(CU_SULFIDES))
    for key, value in props.items():
        mineral = key.removesuffix("_pct")
        if mineral not in CU_SULFIDES:
            if mineral in MINERALS:
                msg = f"Cu-sulfide proportions may name only {list(CU_SULFIDES)}; got {key!r}"
            else:
                msg = unknown_mineral_message(key, where="mineral in Cu-sulfide proportions")
            raise RecipeError(msg)
        share = float(value)
        if not np.isfinite(share) or share < 0:
            msg = f"Cu-sulfide proportion of {key!r} must be finite and >= 0; got {value!r}"
            raise RecipeError(msg)
        shares[CU_SULFIDES.index(mineral)] = share
    if shares.sum() <= 0:
        msg = f"Cu-sulfide proportions must have a positive total; got {dict(props)!r}"
        raise RecipeError(msg)
    return shares / shares.sum()


def _hint_shares(df: pd.DataFrame, rule: str, fixed: np.ndarray) -> np.ndarray:
    n = len(df)
    shares = np.broadcast_to(fixed, (n, len(CU_SULFIDES))).copy()
    if rule == "fixed":
        return shares
    cols = [f"{m}_pct" for m in CU_SULFIDES]
    if not any(c in df.columns for c in cols):
        return shares
    scan = np.column_stack([_column(df, c) for c in cols])
    scan = np.where(np.isnan(scan) | (scan < 0), 0.0, scan)
    total = scan.sum(axis=1)
    has = total > 0
    shares[has] = scan[has] / total[has, None]
    return shares


def _flag_text(codes: np.ndarray) -> np.ndarray:
    size = 2 * max(_FLAGS)
    texts = np.empty(size, dtype=object)
    for code in np.flatnonzero(np.bincount(codes, minlength=size)):
        parts = [text for bit, (text, _) in _FLAGS.items() if code & bit]
        texts[code] = "; ".join(parts) if parts else "ok"
    return texts[codes]


def speciation_nnls_system(
    cu_sulfide_pct: np.ndarray,
    s_sulfide_pct: np.ndarray,
    shares: np.ndarray,
    sigma_cu_pct: np.ndarray,
    sigma_s_pct: np.ndarray,
    hint_weight: float,
) -> tuple[np.ndarray, np.ndarray]:
    """Weighted design matrices and right-hand sides of the Cu-sulfide/pyrite NNLS (step 4).

    Parameters
    ----------
    cu_sulfide_pct, s_sulfide_pct : numpy.ndarray
        Sulfide Cu and sulfide S left for the Cu sulfides and pyrite [%], shape (n,).
    shares : numpy.ndarray
        Hinted mass shares of :data:`CU_SULFIDES`, shape (n, 4), rows summing to 1.
    sigma_cu_pct, sigma_s_pct : numpy.ndarray
        Assay precision [%] that scales each balance (rows weighted by 1/σ), shape (n,).
    hint_weight : float
        λ; the hint rows are weighted λ/σ_Cu.

    Returns
    -------
    a : numpy.ndarray
        Shape (n, 6, 5); columns chalcopyrite, bornite, chalcocite, covellite, pyrite; rows the
        Cu balance, the S balance and four hint rows (x_k − h_k Σ_j x_j).
    b : numpy.ndarray
        Shape (n, 6).
    """
    n, k = shares.shape
    c_cu = np.array([_frac(m, "Cu") for m in CU_SULFIDES])
    c_s = np.array([_frac(m, "S") for m in CU_SULFIDES])
    w_cu = 1.0 / np.asarray(sigma_cu_pct, dtype=float)
    w_s = 1.0 / np.asarray(sigma_s_pct, dtype=float)
    a = np.zeros((n, 2 + k, k + 1))
    a[:, 0, :k] = c_cu * w_cu[:, None]
    a[:, 1, :k] = c_s * w_s[:, None]
    a[:, 1, k] = _frac("pyrite", "S") * w_s
    a[:, 2:, :k] = (hint_weight * w_cu)[:, None, None] * (np.eye(k)[None] - shares[:, :, None])
    b = np.zeros((n, 2 + k))
    b[:, 0] = cu_sulfide_pct * w_cu
    b[:, 1] = s_sulfide_pct * w_s
    return a, b


def normative_speciation(
    df: pd.DataFrame,
    *,
    sulfate_source: str = "scan",
    sulfate_mineral: str = "anhydrite",
    ca_sulfate_frac: float = 1.0,
    sulfide_hint: str = "scan",
    cu_sulfide_proportions: Mapping[str, float] | None = None,
    cu_oxide_mineral: str = "chrysocolla",
    scanned_sulfates: bool = True,
    arsenic_mineral: str = "none",
    hint_weight: float = 0.01,
    abs_tol_pct: float = 0.005,
    rel_tol_frac: float = 0.02,
) -> pd.DataFrame:
    """Normative sulfide, sulfate and oxide-Cu minerals of each row from its assays.

    Parameters
    ----------
    df : pandas.DataFrame
        Rows with ``cu_pct`` and ``s_pct`` [%] (required columns), and where available
        ``cu_asol_pct``, ``fe_pct``, ``ca_pct`` [%], ``mo_ppm`` [ppm], ``gypsum_anhydrite_pct``
        and the scanned Cu sulfides ``chalcopyrite_pct``, ``bornite_pct``, ``chalcocite_pct``,
        ``covellite_pct`` [wt%].
    sulfate_source : {"scan", "ca", "auto", "none"}, default "scan"
        Rule for sulfate S (see the module notes).
    sulfate_mineral : {"anhydrite", "gypsum"}, default "anhydrite"
        Mineral the sulfate is expressed as (S 23.55 % or 18.62 %).
    ca_sulfate_frac : float, default 1.0
        Share of the assayed Ca that the ``"ca"`` rule lets sulfate take [fraction].
    sulfide_hint : {"scan", "fixed"}, default "scan"
        Where the Cu-sulfide proportions come from.
    cu_sulfide_proportions : mapping, optional
        Fixed Cu-sulfide mass proportions (default all chalcopyrite).
    cu_oxide_mineral : {"chrysocolla", "malachite", "cuprite", "tenorite"}, default "chrysocolla"
        Mineral that oxide (acid-soluble) Cu is expressed as.
    scanned_sulfates : bool, default True
        Also remove the sulfate S of scanned alunite and jarosite (``alunite_pct``,
        ``jarosite_pct``) with the gypsum-anhydrite, whatever ``sulfate_source`` (except
        ``"none"``); alunite holds 15.5 % S and is abundant in advanced argillic ore.
    arsenic_mineral : {"none", "enargite", "tennantite", "arsenopyrite"}, default "none"
        Mineral that assayed As (``as_ppm``) is put into before the Cu sulfides, taking its Cu
        (or Fe) and S; adds ``norm_<mineral>_pct``. As also sits in pyrite, so this is an upper
        bound; capped where Cu, Fe or S run short (noted).
    hint_weight : float, default 0.01
        λ, the weight of the hint rows against the element balances [dimensionless]; small values
        honour the assays first.
    abs_tol_pct, rel_tol_frac : float, default 0.005 and 0.02
        A residual counts as a failure to balance when |resid| > abs_tol_pct + rel_tol_frac ×
        assay [%]; 0.005 % is half a 0.01 % detection limit and 2 % about assay precision
        (common practice).

    Returns
    -------
    pandas.DataFrame
        Indexed like ``df``: :data:`NORM_COLUMNS` [wt%] (``norm_cu_oxide_pct`` as the chosen
        oxide mineral, ``norm_gypsum_anhydrite_pct`` as the chosen sulfate mineral),
        ``s_sulfide_pct`` and ``s_sulfate_pct`` (gypsum-anhydrite, alunite and jarosite) [%],
        ``resid_cu_pct``, ``resid_s_pct``,
        ``resid_fe_pct``, ``resid_ca_pct`` [%], ``balance_flag`` (text, ``"ok"`` when clean) and
        ``balance_ok`` (bool). Rows without Cu or S assays get NaN minerals.

    Raises
    ------
    geomet.errors.InputDataError
        When ``cu_pct`` or ``s_pct`` is not a column.
    geomet.errors.RecipeError
        On an option outside its allowed values.

    Notes
    -----
    See the module docstring for the order of the mass balances and the least-squares problem
    of step 4 (Lawson & Hanson 1974).

    Examples
    --------
    >>> t = pd.DataFrame({"cu_pct": [0.3463], "s_pct": [0.3494 + 0.5345], "fe_pct": [3.0]})
    >>> out = normative_speciation(t, sulfate_source="none", sulfide_hint="fixed")
    >>> out[["norm_chalcopyrite_pct", "norm_pyrite_pct"]].round(3).iloc[0].tolist()
    [1.0, 1.0]
    """
    missing = [c for c in ("cu_pct", "s_pct") if c not in df.columns]
    if missing:
        msg = (
            f"normative speciation needs columns {missing}; the table has "
            f"{len(df.columns)} columns ({', '.join(map(str, df.columns[:12]))}...)"
        )
        raise InputDataError(msg)
    _check_choice("sulfate_source", sulfate_source, SULFATE_SOURCES)
    _check_choice("sulfate_mineral", sulfate_mineral, SULFATE_MINERALS)
    _check_choice("sulfide_hint", sulfide_hint, SULFIDE_HINTS)
    _check_choice("cu_oxide_mineral", cu_oxide_mineral, CU_OXIDE_MINERALS)
    _check_choice("arsenic_mineral", arsenic_mineral, ARSENIC_MINERALS)
    if not 0.0 <= ca_sulfate_frac <= 1.0:
        msg = f"ca_sulfate_frac must be between 0 and 1; got {ca_sulfate_frac!r}"
        raise RecipeError(msg)
    if not 0.0 < hint_weight < np.inf:
        msg = (
            "hint_weight must be positive and finite (0 leaves the answer not unique); "
            f"got {hint_weight!r}"
        )
        raise RecipeError(msg)
    for name, value in (("abs_tol_pct", abs_tol_pct), ("rel_tol_frac", rel_tol_frac)):
        if not 0.0 <= value < np.inf:
            msg = f"{name} must be finite and >= 0; got {value!r}"
            raise RecipeError(msg)
    fixed = validate_cu_sulfide_proportions(cu_sulfide_proportions)

    n = len(df)
    code = np.zeros(n, dtype=np.int64)
    cu = _column(df, "cu_pct")
    s = _column(df, "s_pct")
    fe = _column(df, "fe_pct")
    ca = _column(df, "ca_pct")
    mo = _column(df, "mo_ppm", 1e-4)
    asol = _column(df, "cu_asol_pct")
    gyp = _column(df, "gypsum_anhydrite_pct")
    valid = np.isfinite(cu) & np.isfinite(s)
    code[~valid] |= 1
    cu0 = np.where(valid, np.maximum(cu, 0.0), 0.0)
    s0 = np.where(valid, np.maximum(s, 0.0), 0.0)

    def tol(assay):
        return abs_tol_pct + rel_tol_frac * np.abs(np.nan_to_num(assay))

    tol_cu, tol_s = tol(cu0), tol(s0)

    # 1. oxide Cu
    has_asol = np.isfinite(asol)
    code[valid & ~has_asol & (cu0 > 0)] |= 512
    asol0 = np.where(has_asol, np.maximum(asol, 0.0), 0.0)
    code[valid & (asol0 > cu0 + tol_cu)] |= 2
    cu_ox = np.minimum(asol0, cu0)
    norm_cu_oxide = cu_ox / _frac(cu_oxide_mineral, "Cu")
    norm_cu_oxide[~has_asol] = np.nan
    cu_sulf = cu0 - cu_ox

    # 2. molybdenite
    has_mo = np.isfinite(mo)
    code[valid & ~has_mo] |= 2048
    mos2 = np.where(has_mo, np.maximum(mo, 0.0), 0.0) / _frac("molybdenite", "Mo")
    s_mo = mos2 * _frac("molybdenite", "S")
    code[valid & (s_mo > s0 + tol_s)] |= 8

    # 3. sulfate S (scan part; the Ca part comes after the sulfides)
    w_s_sulfate = _frac(sulfate_mineral, "S")
    w_ca_sulfate = _frac(sulfate_mineral, "Ca")
    has_gyp = np.isfinite(gyp)
    use_scan = has_gyp & (sulfate_source in ("scan", "auto"))
    use_ca = np.isfinite(ca) & ((sulfate_source == "ca") | ((sulfate_source == "auto") & ~has_gyp))
    if sulfate_source in ("scan", "auto"):
        code[valid & ~use_scan & ~use_ca] |= 1024
    s_gyp = np.where(use_scan, np.maximum(gyp, 0.0) * w_s_sulfate, 0.0)
    if scanned_sulfates and sulfate_source != "none":
        alunite = np.maximum(np.nan_to_num(_column(df, "alunite_pct")), 0.0)
        jarosite = np.maximum(np.nan_to_num(_column(df, "jarosite_pct")), 0.0)
    else:
        alunite = jarosite = np.zeros(n)
    s_alu = alunite * _frac("alunite", "S")
    s_jar = jarosite * _frac("jarosite", "S")
    s_scan = s_gyp + s_alu + s_jar
    code[valid & (s_scan > s0 + tol_s)] |= 4
    cap = np.ones(n)  # scale every scanned sulfate down alike where they exceed total S
    np.divide(s0, s_scan, out=cap, where=s_scan > s0)
    s_gyp, jarosite = s_gyp * cap, jarosite * cap
    s_sulfate = s_scan * cap
    s_avail = s0 - s_sulfate - s_mo
    s_avail = np.maximum(s_avail, 0.0)

    # 3c. arsenic mineral from As (option): takes its Cu (or Fe) and S before the Cu sulfides
    as_mass = np.zeros(n)
    if arsenic_mineral != "none":
        arsenic = np.maximum(np.nan_to_num(_column(df, "as_ppm", 1e-4)), 0.0)
        limit = arsenic / _frac(arsenic_mineral, "As")
        limit_s = s_avail / _frac(arsenic_mineral, "S")
        limit_metal = (
            cu_sulf / _frac(arsenic_mineral, "Cu")
            if arsenic_mineral != "arsenopyrite"
            else np.where(np.isfinite(fe), np.maximum(fe, 0.0), np.inf)
            / _frac(arsenic_mineral, "Fe")
        )
        as_mass = np.where(valid, np.minimum(limit, np.minimum(limit_s, limit_metal)), 0.0)
        code[valid & (as_mass < limit * (1 - 1e-9) - 1e-12)] |= 8192
        cu_sulf = cu_sulf - as_mass * _frac(arsenic_mineral, "Cu")
        cu_sulf = np.maximum(cu_sulf, 0.0)
        s_avail = np.maximum(s_avail - as_mass * _frac(arsenic_mineral, "S"), 0.0)
    as_cu = as_mass * (_frac(arsenic_mineral, "Cu") if arsenic_mineral != "none" else 0.0)
    as_s = as_mass * (_frac(arsenic_mineral, "S") if arsenic_mineral != "none" else 0.0)
    as_fe = as_mass * (_frac(arsenic_mineral, "Fe") if arsenic_mineral != "none" else 0.0)

    # 4. Cu sulfides + pyrite: closed form where S suffices, batched NNLS where it does not
    shares = _hint_shares(df, sulfide_hint, fixed)
    c_cu = np.array([_frac(m, "Cu") for m in CU_SULFIDES])
    c_s = np.array([_frac(m, "S") for m in CU_SULFIDES])
    c_fe = np.array([_frac(m, "Fe") for m in CU_SULFIDES])
    py_s, py_fe = _frac("pyrite", "S"), _frac("pyrite", "Fe")
    mix_mass = cu_sulf / (shares @ c_cu)
    x = shares * mix_mass[:, None]
    s_left = s_avail - x @ c_s
    py = s_left / py_s
    short = valid & (s_left < -1e-12 * np.maximum(1.0, s_avail))
    idx = np.flatnonzero(short)
    if idx.size:
        code[idx] |= 256
        k = len(CU_SULFIDES)
        a, b = speciation_nnls_system(
            cu_sulf[idx], s_avail[idx], shares[idx], tol_cu[idx], tol_s[idx], hint_weight
        )
        # warm start: all Cu sulfides free, pyrite at zero (S is short, so pyrite rarely stays)
        sol, _ = nnls_batched(a, b, passive_init=np.array([True] * k + [False]))
        x[idx] = sol[:, :k]
        py[idx] = sol[:, k]
    py = np.maximum(py, 0.0)

    # 3b. sulfate from Ca takes S from the pyrite share (Cu and Mo sulfides keep priority)
    if use_ca.any():
        s_ca = np.where(use_ca, ca_sulfate_frac * np.maximum(ca, 0.0), 0.0) * (
            w_s_sulfate / w_ca_sulfate
        )
        s_from_py = np.minimum(s_ca, py * py_s)
        s_sulfate = s_sulfate + s_from_py
        s_gyp = s_gyp + s_from_py
        py = np.maximum(py - s_from_py / py_s, 0.0)
    norm_sulfate = s_gyp / w_s_sulfate
    norm_sulfate[~(use_scan | use_ca)] = np.nan if sulfate_source != "none" else 0.0

    # 5. residuals and flags
    cu_norm = x @ c_cu + cu_ox + as_cu
    s_sulfide = x @ c_s + py * py_s + s_mo + as_s
    resid_cu = cu - cu_norm
    resid_s = s - s_sulfide - s_sulfate
    fe_norm = x @ c_fe + py * py_fe + jarosite * _frac("jarosite", "Fe") + as_fe
    resid_fe = fe - fe_norm
    resid_ca = np.where(np.isnan(norm_sulfate), ca, ca - norm_sulfate * w_ca_sulfate)
    code[valid & (np.abs(resid_cu) > tol_cu) & ~(code & 2).astype(bool)] |= 16
    code[valid & (np.abs(resid_s) > tol_s) & ~(code & (4 | 8)).astype(bool)] |= 128
    has_fe = np.isfinite(fe)
    code[valid & ~has_fe] |= 4096
    code[valid & has_fe & (resid_fe < -tol(fe))] |= 32
    code[valid & np.isfinite(ca) & (resid_ca < -tol(ca))] |= 64

    out = {
        "norm_chalcopyrite_pct": x[:, 0],
        "norm_bornite_pct": x[:, 1],
        "norm_chalcocite_pct": x[:, 2],
        "norm_covellite_pct": x[:, 3],
        "norm_pyrite_pct": py,
        "norm_molybdenite_pct": np.where(has_mo, mos2, np.nan),
        "norm_cu_oxide_pct": norm_cu_oxide,
        "norm_gypsum_anhydrite_pct": norm_sulfate,
        "s_sulfide_pct": s_sulfide,
        "s_sulfate_pct": s_sulfate,
        "resid_cu_pct": resid_cu,
        "resid_s_pct": resid_s,
        "resid_fe_pct": resid_fe,
        "resid_ca_pct": resid_ca,
    }
    if arsenic_mineral != "none":
        out[f"norm_{arsenic_mineral}_pct"] = as_mass
    result = pd.DataFrame(out, index=df.index)
    result.loc[~valid, list(out)] = np.nan
    result["balance_flag"] = _flag_text(code)
    result["balance_ok"] = (code & _FAIL_MASK) == 0
    return result


def flag_counts(balance_flag: pd.Series, *, failures_only: bool = False) -> dict[str, int]:
    """Count rows per individual flag text in a ``balance_flag`` column (``"ok"`` excluded).

    With ``failures_only``, only the flags of :data:`FAILURE_FLAGS` are counted.
    """
    counts: dict[str, int] = {}
    for text, count in balance_flag.value_counts().items():
        if text == "ok":
            continue
        for part in str(text).split("; "):
            if failures_only and part not in FAILURE_FLAGS:
                continue
            counts[part] = counts.get(part, 0) + int(count)
    return counts


__all__ = [
    "CU_SULFIDES",
    "FAILURE_FLAGS",
    "SHIFT_FLAG",
    "NORM_COLUMNS",
    "flag_counts",
    "normative_speciation",
    "speciation_nnls_system",
    "validate_cu_sulfide_proportions",
]
