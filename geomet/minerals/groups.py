"""Mineral groups that matter to the plant, and the columns geomet derives from them.

:data:`DEFAULT_GROUPS` maps each group column to the scanned minerals it sums. The column names
are fixed in ``docs/contracts.md`` (other packages read them); their membership can be changed
or groups added from a recipe (step option ``groups``), validated by :func:`validate_groups`.

Dickite is counted twice on purpose: as a kaolin-group clay (``clay_kaolin_pct``, it behaves
like kaolinite in a pulp) and as an advanced argillic mineral (``advanced_argillic_pct``, it
marks the high-temperature acid alteration of the lithocap). Group columns therefore do not add
up to the mineral total.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd

from geomet.errors import RecipeError
from geomet.minerals._frame import numeric_columns
from geomet.minerals.clay import clay_severity_index
from geomet.minerals.reference import MINERALS, unknown_mineral_message

DEFAULT_GROUPS: dict[str, tuple[str, ...]] = {
    "clay_swelling_pct": ("smectite",),
    "clay_kaolin_pct": ("kaolinite", "dickite", "halloysite"),
    "white_mica_illite_pct": ("white_mica", "illite"),
    "advanced_argillic_pct": ("pyrophyllite", "alunite", "diaspore", "dickite"),
    "sulfate_pct": ("gypsum_anhydrite",),
    "carbonate_pct": ("calcite", "dolomite", "ankerite", "siderite"),
    "femg_silicate_pct": ("chlorite", "biotite", "actinolite"),
    "iron_oxide_pct": ("magnetite", "hematite", "goethite"),
    "featureless_pct": ("quartz_feldspar",),
    "clay_total_pct": ("smectite", "kaolinite", "dickite", "halloysite", "illite"),
    "sulfide_pct": ("pyrite", "chalcopyrite", "bornite", "chalcocite", "covellite", "molybdenite"),
    "cu_oxide_pct": ("malachite", "chrysocolla"),
}
"""Group column -> member minerals (keys of :data:`geomet.minerals.reference.MINERALS`)."""

OXIDE_RATIO_COLUMN = "oxide_ratio_frac"
SEVERITY_COLUMN = "clay_severity_idx"


def validate_groups(
    groups: Mapping[str, Sequence[str]] | None, *, merge_defaults: bool = True
) -> dict[str, tuple[str, ...]]:
    """Check user-defined groups and merge them over :data:`DEFAULT_GROUPS`.

    Parameters
    ----------
    groups : mapping or None
        Group column name -> member mineral keys (``"smectite"`` or ``"smectite_pct"``). A name
        without the ``_pct`` suffix gets it. ``None`` returns the defaults.
    merge_defaults : bool, default True
        When True, the given groups replace or add to the defaults; when False they are the
        only groups.

    Returns
    -------
    dict[str, tuple[str, ...]]
        Group column -> member mineral keys.

    Raises
    ------
    geomet.errors.RecipeError
        On an unknown mineral (with the closest known names), an empty group, a member listed
        twice or a group name that is not a plain identifier.
    """
    out = dict(DEFAULT_GROUPS) if merge_defaults or groups is None else {}
    if groups is None:
        return out
    problems = []
    for raw_name, members in groups.items():
        name = raw_name if raw_name.endswith("_pct") else f"{raw_name}_pct"
        if not name.isidentifier() or name != name.lower():
            problems.append(
                f"group name {raw_name!r} must be lower-case letters, digits and underscores"
            )
            continue
        if isinstance(members, str):
            members = [members]
        keys = [str(m).removesuffix("_pct") for m in members]
        if not keys:
            problems.append(f"group {raw_name!r} has no member minerals")
            continue
        bad = [k for k in keys if k not in MINERALS]
        for k in bad:
            problems.append(unknown_mineral_message(k, where=f"mineral in group {raw_name!r}"))
        dupes = sorted({k for k in keys if keys.count(k) > 1})
        if dupes:
            problems.append(f"group {raw_name!r} lists {dupes} more than once")
        if not bad and not dupes:
            out[name] = tuple(keys)
    if problems:
        msg = "; ".join(problems)
        raise RecipeError(msg)
    return out


def group_totals(
    df: pd.DataFrame, groups: Mapping[str, Sequence[str]] | None = None
) -> pd.DataFrame:
    """Sum the ``<mineral>_pct`` columns of each group.

    Parameters
    ----------
    df : pandas.DataFrame
        Table with ``<mineral>_pct`` columns [wt%].
    groups : mapping, optional
        Group column -> member minerals; validated and merged over :data:`DEFAULT_GROUPS`.

    Returns
    -------
    pandas.DataFrame
        One column per group [wt%], indexed like ``df``. In a row, missing members (NaN) are
        skipped; the group is NaN when every member is missing. Members without a column in
        ``df`` are left out; a group none of whose members has a column is all NaN.
    """
    spec = validate_groups(groups)
    out = {}
    for name, members in spec.items():
        cols = [f"{m}_pct" for m in members if f"{m}_pct" in df.columns]
        if not cols:
            out[name] = np.full(len(df), np.nan)
            continue
        values = numeric_columns(df, cols)
        present = ~np.isnan(values)
        total = np.where(present, values, 0.0).sum(axis=1)
        total[~present.any(axis=1)] = np.nan
        out[name] = total
    return pd.DataFrame(out, index=df.index)


def oxide_ratio(cu_asol_pct, cu_pct, *, cu_min_pct: float = 1e-3):
    """Oxide copper ratio ``oxide_ratio_frac`` = acid-soluble Cu / total Cu.

    Parameters
    ----------
    cu_asol_pct : float, array-like or pandas.Series
        Acid-soluble copper [%].
    cu_pct : float, array-like or pandas.Series
        Total copper [%].
    cu_min_pct : float, default 0.001
        Total Cu at or below which the ratio is undefined (NaN) [%]; 10 ppm, about a four-acid
        detection limit for Cu (common practice).

    Returns
    -------
    float, numpy.ndarray or pandas.Series
        Ratio clipped to [0, 1] [fraction] (acid-soluble above total is analytical error); NaN
        where either assay is missing or total Cu is at most ``cu_min_pct``. Same type as
        ``cu_pct``.

    Notes
    -----
    r = min(max(Cu_asol / Cu_total, 0), 1).

    Examples
    --------
    >>> oxide_ratio(0.2, 0.8)
    0.25
    """
    asol = np.asarray(cu_asol_pct, dtype=float)
    total = np.asarray(cu_pct, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(total > cu_min_pct, asol / total, np.nan)
    ratio = np.clip(ratio, 0.0, 1.0)
    if isinstance(cu_pct, pd.Series):
        return pd.Series(ratio, index=cu_pct.index, name=OXIDE_RATIO_COLUMN)
    if np.ndim(ratio) == 0:
        return float(ratio)
    return ratio


def add_mineralogy_columns(
    df: pd.DataFrame,
    groups: Mapping[str, Sequence[str]] | None = None,
    severity_weights: Mapping[str, float] | None = None,
) -> pd.DataFrame:
    """Add group totals, ``clay_severity_idx`` and ``oxide_ratio_frac`` to a table.

    Parameters
    ----------
    df : pandas.DataFrame
        Composites, blocks or any table with ``<mineral>_pct`` columns [wt%]; ``cu_pct`` and
        ``cu_asol_pct`` [%] give the oxide ratio when present.
    groups : mapping, optional
        Group overrides and additions (see :func:`validate_groups`).
    severity_weights : mapping, optional
        Clay severity weights (see :func:`geomet.minerals.clay.validate_severity_weights`).

    Returns
    -------
    pandas.DataFrame
        A copy of ``df`` with the group columns, ``clay_severity_idx`` and, when both Cu assays
        are present, ``oxide_ratio_frac``. Existing columns of the same names are replaced;
        other columns (``white_mica_aloh_nm``, ``chlorite_feoh_nm``, ...) are kept unchanged.

    Examples
    --------
    >>> t = pd.DataFrame({"smectite_pct": [2.0], "kaolinite_pct": [10.0], "dickite_pct": [1.0]})
    >>> out = add_mineralogy_columns(t)
    >>> float(out["clay_kaolin_pct"].iloc[0]), float(out["advanced_argillic_pct"].iloc[0])
    (11.0, 1.0)
    """
    totals = group_totals(df, groups)
    totals[SEVERITY_COLUMN] = clay_severity_index(df, severity_weights)
    if "cu_pct" in df.columns and "cu_asol_pct" in df.columns:
        totals[OXIDE_RATIO_COLUMN] = oxide_ratio(df["cu_asol_pct"], df["cu_pct"])
    kept = df.drop(columns=[c for c in totals.columns if c in df.columns])
    return pd.concat([kept, totals], axis=1)
