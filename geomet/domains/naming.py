"""Readable domain names from dominant mineral groups and grade.

The rule is deterministic: for every alteration theme (a mineral group or assemblage of a
porphyry Cu-Au system, textbook geology) compare the domain median with the deposit median
as a log-ratio; the theme with the largest enrichment names
the domain, the next one (if clearly enriched too) is added as a qualifier; Cu (and Au)
median grades are classed against the deposit terciles as low / moderate / high. Names are
made unique by adding further qualifiers and, as a last resort, a roman numeral.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

__all__ = ["THEMES", "Theme", "theme_scores", "name_domains"]


@dataclass(frozen=True)
class Theme:
    """An alteration theme: its name, its short qualifier and the columns it sums.

    ``group_columns`` (mineral groups of the minerals package) are used when all present,
    otherwise the sum of the ``mineral_columns`` that are present.
    """

    label: str
    short: str
    group_columns: tuple[str, ...]
    mineral_columns: tuple[str, ...]


THEMES: tuple[Theme, ...] = (
    Theme("Swelling-clay argillic", "smectite", ("clay_swelling_pct",), ("smectite_pct",)),
    Theme("Kaolinite argillic", "kaolinite", ("clay_kaolin_pct",),
          ("kaolinite_pct", "dickite_pct", "halloysite_pct")),
    Theme("Advanced argillic", "alunite-pyrophyllite", ("advanced_argillic_pct",),
          ("pyrophyllite_pct", "alunite_pct", "diaspore_pct", "dickite_pct")),
    # phyllic alteration is sericite (white mica, illite) with pyrite (textbook geology)
    Theme("Phyllic sericite", "sericite", ("white_mica_illite_pct", "pyrite_pct"),
          ("white_mica_pct", "illite_pct", "pyrite_pct")),
    Theme("Potassic biotite", "biotite", (), ("biotite_pct", "k_feldspar_pct")),
    Theme("Propylitic chlorite", "chlorite-epidote", (),
          ("chlorite_pct", "epidote_pct", "actinolite_pct")),
    Theme("Gypsum-anhydrite", "gypsum", ("sulfate_pct",), ("gypsum_anhydrite_pct",)),
    Theme("Carbonate", "carbonate", ("carbonate_pct",),
          ("calcite_pct", "dolomite_pct", "ankerite_pct", "siderite_pct")),
    Theme("Magnetite-rich", "magnetite", (), ("magnetite_pct",)),
    Theme("Leached iron-oxide", "iron-oxide", (), ("hematite_pct", "goethite_pct", "jarosite_pct")),
    Theme("Supergene chalcocite", "chalcocite", (), ("chalcocite_pct", "covellite_pct")),
    Theme("Oxide copper", "oxide-Cu", (), ("malachite_pct", "chrysocolla_pct")),
    Theme("Pyritic", "pyrite", (), ("pyrite_pct",)),
    Theme("Siliceous", "quartz", ("featureless_pct",), ("quartz_feldspar_pct",)),
)

_ROMAN = ("I", "II", "III", "IV", "V", "VI", "VII", "VIII", "IX", "X", "XI", "XII")


def _theme_values(df: pd.DataFrame, theme: Theme) -> np.ndarray | None:
    if theme.group_columns and all(c in df.columns for c in theme.group_columns):
        cols = list(theme.group_columns)
    else:
        cols = [c for c in theme.mineral_columns if c in df.columns]
    if not cols:
        return None
    values = df.loc[:, cols].to_numpy(dtype=float, na_value=np.nan)
    total = np.nansum(values, axis=1)
    total[np.isnan(values).all(axis=1)] = np.nan
    return total


def theme_scores(
    df: pd.DataFrame, labels, themes: Sequence[Theme] = THEMES, *, offset_pct: float = 2.0
) -> pd.DataFrame:
    """Enrichment of each theme in each domain, as a log-ratio of medians.

    Parameters
    ----------
    df : pandas.DataFrame
        Intervals with mineral and/or group columns [wt%].
    labels : array_like
        Domain of each row.
    themes : sequence of Theme
    offset_pct : float
        Offset added to both medians [wt%], so that a trace mineral going from 0.1 to
        1 wt% does not outrank a major assemblage (an assumption of this naming rule).

    Returns
    -------
    pandas.DataFrame
        Index: domain label; columns: theme labels; values
        ln((median_domain + offset) / (median_deposit + offset)) (dimensionless; > 0 means
        enriched).
    """
    labels = np.asarray(labels)
    uniq = pd.unique(labels)
    out = {}
    for theme in themes:
        v = _theme_values(df, theme)
        if v is None or np.isnan(v).all():
            continue
        med_all = np.nanmedian(v)
        col = {}
        for lab in uniq:
            vd = v[labels == lab]
            col[lab] = (
                np.log((np.nanmedian(vd) + offset_pct) / (med_all + offset_pct))
                if np.isfinite(vd).any() else np.nan
            )
        out[theme.label] = col
    return pd.DataFrame(out, index=pd.Index(uniq, name="domain"))


def _grade_class(med: float, lo: float, hi: float) -> str | None:
    if not np.isfinite(med):
        return None
    if med >= hi:
        return "high"
    if med <= lo:
        return "low"
    return "moderate"


def name_domains(
    df: pd.DataFrame,
    labels,
    *,
    themes: Sequence[Theme] = THEMES,
    qualifier_min_score: float = 0.4,
    offset_pct: float = 2.0,
    cu_column: str = "cu_pct",
    au_column: str = "au_gpt",
) -> dict:
    """Give every domain a readable, unique name.

    Parameters
    ----------
    df : pandas.DataFrame
        Intervals with mineral/group columns [wt%] and optionally ``cu_pct``, ``au_gpt``.
    labels : array_like
        Domain of each row (any hashable labels).
    themes : sequence of Theme
    qualifier_min_score : float
        Enrichment score a second theme needs to be added as a qualifier (0.4: about
        1.5 times the deposit median).
    offset_pct : float
        Offset of the medians in the score [wt%] (see :func:`theme_scores`).
    cu_column, au_column : str
        Grade columns classed against the deposit terciles.

    Returns
    -------
    dict
        label -> name, e.g. ``"Potassic biotite-magnetite, high Cu-Au"``.

    Notes
    -----
    Theme score s = ln((median_domain + c) / (median_deposit + c)), c = ``offset_pct``
    (:func:`theme_scores`); the domain is named by
    argmax s (ties: the order of :data:`THEMES`); a domain with no theme above the deposit
    median is called "Background". Grade class: median ≥ P67 of the deposit "high",
    ≤ P33 "low", else "moderate" (a tercile split; common practice for descriptive
    classes, not a cut-off).
    """
    labels = np.asarray(labels)
    scores = theme_scores(df, labels, themes, offset_pct=offset_pct)
    short = {t.label: t.short for t in themes}
    grade = {}
    for col, tag in ((cu_column, "Cu"), (au_column, "Au")):
        if col in df.columns:
            v = df[col].to_numpy(dtype=float, na_value=np.nan)
            if np.isfinite(v).any():
                lo, hi = np.nanpercentile(v, [100 / 3, 200 / 3])
                grade[tag] = {
                    lab: _grade_class(
                        np.nanmedian(v[labels == lab]) if np.isfinite(v[labels == lab]).any()
                        else np.nan, lo, hi)
                    for lab in scores.index
                }
    ranked = {}
    base = {}
    for lab in scores.index:
        s = scores.loc[lab].dropna()
        order = sorted(s.index, key=lambda t: (-s[t], list(scores.columns).index(t)))
        ranked[lab] = [t for t in order if s[t] > 0]
        if not ranked[lab]:
            head = "Background"
        else:
            head = ranked[lab][0]
            if len(ranked[lab]) > 1 and s[ranked[lab][1]] >= qualifier_min_score:
                head = f"{head}-{short[ranked[lab][1]]}"
        cu = grade.get("Cu", {}).get(lab)
        au = grade.get("Au", {}).get(lab)
        if cu and au:
            tail = f"{cu} Cu-Au" if cu == au else f"{cu} Cu, {au} Au"
        elif cu:
            tail = f"{cu} Cu"
        elif au:
            tail = f"{au} Au"
        else:
            tail = ""
        base[lab] = (head, tail)

    def compose(head, tail, extra=""):
        text = head + (f" with {extra}" if extra else "")
        return f"{text}, {tail}" if tail else text

    names = {lab: compose(*base[lab]) for lab in scores.index}
    # uniqueness: add the next enriched theme, then roman numerals in label order
    counts = pd.Series(list(names.values())).value_counts()
    dups = set(counts[counts > 1].index)
    if dups:
        for lab in scores.index:
            if names[lab] in dups:
                head, tail = base[lab]
                used = head
                extra = next(
                    (short[t] for t in ranked[lab][1:] if short[t] not in used), ""
                )
                if extra:
                    names[lab] = compose(head, tail, extra)
    counts = pd.Series(list(names.values())).value_counts()
    dups = set(counts[counts > 1].index)
    for name in dups:
        labs = sorted(
            (lab for lab in scores.index if names[lab] == name),
            key=lambda x: (0, x, "") if isinstance(x, int | np.integer) else (1, 0, str(x)),
        )
        for i, lab in enumerate(labs):
            names[lab] = f"{name} {_ROMAN[i] if i < len(_ROMAN) else i + 1}"
    return {lab: names[lab] for lab in scores.index}
