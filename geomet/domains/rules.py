"""Rule-based domains from ordered threshold rules, site domain codes, and comparison of
domainings by cross-tabulation.

Rules are plain data - a column, an operator from a fixed set and a number - never code:
nothing is evaluated. A rule may hold several conditions joined by "and". The first rule
that matches a row gives its domain (ordered rules, as a logging geologist applies them).

Text form accepted by :func:`parse_rule`::

    "clay_swelling_pct >= 5 -> Swelling clay"
    "sulfate_pct > 2 and cu_pct < 0.2 -> Gypsum front, low Cu"
"""

from __future__ import annotations

import operator
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from sklearn.metrics import adjusted_rand_score

from geomet.errors import InputDataError, RecipeError

__all__ = [
    "OPERATORS",
    "Condition",
    "Rule",
    "parse_rule",
    "parse_rules",
    "apply_rules",
    "site_domains_at_midpoints",
    "compare_domains",
]

OPERATORS = {
    ">=": operator.ge,
    ">": operator.gt,
    "<=": operator.le,
    "<": operator.lt,
    "==": operator.eq,
    "!=": operator.ne,
}

_COLUMN_RE = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")
_CONDITION_RE = re.compile(
    r"^\s*(?P<column>[A-Za-z_][A-Za-z0-9_]*)\s*(?P<op>>=|<=|==|!=|>|<)\s*"
    r"(?P<value>[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*$"
)


@dataclass(frozen=True)
class Condition:
    """``column op value``: a test on one numeric column. Missing values never match."""

    column: str
    op: str
    value: float

    def __post_init__(self):
        if not isinstance(self.column, str) or not _COLUMN_RE.match(self.column):
            msg = f"a rule column must be a plain column name; got {self.column!r}"
            raise RecipeError(msg)
        if self.op not in OPERATORS:
            msg = f"a rule operator must be one of {list(OPERATORS)}; got {self.op!r}"
            raise RecipeError(msg)
        try:
            value = float(self.value)
        except (TypeError, ValueError):
            msg = f"a rule value must be a number; got {self.value!r} for {self.column}"
            raise RecipeError(msg) from None
        if not np.isfinite(value):
            msg = f"a rule value must be finite; got {self.value!r} for {self.column}"
            raise RecipeError(msg)
        object.__setattr__(self, "value", value)

    def __str__(self) -> str:
        return f"{self.column} {self.op} {self.value:g}"


@dataclass(frozen=True)
class Rule:
    """All ``conditions`` true -> ``domain``."""

    domain: str
    conditions: tuple[Condition, ...]

    def __post_init__(self):
        if not isinstance(self.domain, str) or not self.domain.strip():
            msg = f"a rule needs a non-empty domain name; got {self.domain!r}"
            raise RecipeError(msg)
        if not self.conditions:
            msg = f"rule for domain {self.domain!r} has no condition"
            raise RecipeError(msg)

    def __str__(self) -> str:
        return " and ".join(map(str, self.conditions)) + f" -> {self.domain}"


def _parse_condition(text: str, where: str) -> Condition:
    m = _CONDITION_RE.match(text)
    if not m:
        msg = (
            f"cannot read rule condition {text.strip()!r} in {where}: write "
            f"'<column> <operator> <number>' with an operator from {list(OPERATORS)}"
        )
        raise RecipeError(msg)
    return Condition(m["column"], m["op"], float(m["value"]))


def parse_rule(spec: str | Mapping) -> Rule:
    """Read one rule from text or plain data.

    Parameters
    ----------
    spec : str or mapping
        ``"col >= 5 and col2 < 1 -> Domain name"``; or a mapping with ``domain`` and either
        ``when`` (condition text joined by "and"), ``conditions`` (list of mappings with
        ``column``, ``op``, ``value``) or ``column``, ``op``, ``value`` for one condition.

    Examples
    --------
    >>> str(parse_rule("clay_swelling_pct >= 5 -> Swelling clay"))
    'clay_swelling_pct >= 5 -> Swelling clay'
    """
    if isinstance(spec, str):
        if "->" not in spec:
            msg = f"rule {spec!r} needs '-> <domain name>' after its conditions"
            raise RecipeError(msg)
        when, domain = spec.rsplit("->", 1)
        parts = re.split(r"\s+and\s+", when.strip(), flags=re.IGNORECASE)
        return Rule(domain.strip(), tuple(_parse_condition(p, f"rule {spec!r}") for p in parts))
    if isinstance(spec, Mapping):
        domain = spec.get("domain")
        where = f"rule for domain {domain!r}"
        if "when" in spec and spec["when"] is not None:
            parts = re.split(r"\s+and\s+", str(spec["when"]).strip(), flags=re.IGNORECASE)
            conds = tuple(_parse_condition(p, where) for p in parts)
        elif spec.get("conditions"):
            conds = tuple(
                Condition(c.get("column"), c.get("op"), c.get("value")) for c in spec["conditions"]
            )
        elif "column" in spec:
            conds = (Condition(spec.get("column"), spec.get("op"), spec.get("value")),)
        else:
            msg = f"{where} needs 'when', 'conditions' or 'column'/'op'/'value'"
            raise RecipeError(msg)
        return Rule(str(domain) if domain is not None else "", conds)
    msg = f"a rule must be text or a table of fields; got {type(spec).__name__}"
    raise RecipeError(msg)


def parse_rules(specs: Sequence[str | Mapping | Rule]) -> list[Rule]:
    """Read an ordered list of rules (see :func:`parse_rule`)."""
    return [s if isinstance(s, Rule) else parse_rule(s) for s in specs]


def apply_rules(
    df: pd.DataFrame, rules: Sequence[Rule], default: str = "Other", *, table: str = "table"
) -> pd.Series:
    """Domain of each row by the first matching rule (``default`` when none matches).

    Parameters
    ----------
    df : pandas.DataFrame
    rules : sequence of Rule
        In priority order.
    default : str
        Domain of rows no rule matches.
    table : str
        Table name for error messages.

    Returns
    -------
    pandas.Series of str, index of ``df``, name ``rule_domain``.
    """
    missing = sorted({c.column for r in rules for c in r.conditions} - set(df.columns))
    if missing:
        msg = f"domain rules use columns that {table} does not have: {missing}"
        raise InputDataError(msg)
    out = np.full(len(df), default, dtype=object)
    done = np.zeros(len(df), dtype=bool)
    for rule in rules:
        hit = ~done
        for c in rule.conditions:
            values = df[c.column].to_numpy(dtype=float, na_value=np.nan)
            hit &= OPERATORS[c.op](values, c.value) & np.isfinite(values)
        out[hit] = rule.domain
        done |= hit
    return pd.Series(out, index=df.index, name="rule_domain")


def site_domains_at_midpoints(composites: pd.DataFrame, site: pd.DataFrame) -> pd.Series:
    """Site domain code of the site interval holding each composite's mid-point.

    Parameters
    ----------
    composites : pandas.DataFrame
        ``hole_id``, ``from_m``, ``to_m``.
    site : pandas.DataFrame
        ``site_domains`` table: ``hole_id``, ``from_m``, ``to_m``, ``site_domain``.

    Returns
    -------
    pandas.Series (object, NaN where no site interval covers the mid-point), index of
    ``composites``, name ``site_domain``.
    """
    need = ["hole_id", "from_m", "to_m", "site_domain"]
    missing = [c for c in need if c not in site.columns]
    if missing:
        msg = f"site_domains table is missing columns {missing}"
        raise InputDataError(msg)
    out = pd.Series(np.nan, index=composites.index, dtype=object, name="site_domain")
    mid = (composites["from_m"].to_numpy(float) + composites["to_m"].to_numpy(float)) / 2
    rows_of = pd.Series(np.arange(len(composites))).groupby(
        composites["hole_id"].to_numpy(), sort=False).indices
    for hole, grp in site.sort_values(["hole_id", "from_m"]).groupby("hole_id", sort=False):
        rows = rows_of.get(hole)
        if rows is None:
            continue
        f = grp["from_m"].to_numpy(float)
        t = grp["to_m"].to_numpy(float)
        pos = np.searchsorted(f, mid[rows], side="right") - 1
        ok = (pos >= 0) & (mid[rows] < t[np.clip(pos, 0, None)])
        vals = grp["site_domain"].to_numpy(dtype=object)
        out.iloc[rows[ok]] = vals[pos[ok]]
    return out


def compare_domains(
    domain, reference, length_m, *, reference_name: str = "site_domain"
) -> tuple[pd.DataFrame, dict]:
    """Cross-tabulate two domainings of the same intervals.

    Parameters
    ----------
    domain, reference : array_like
        Domain labels of each interval (rows with a missing reference are left out).
    length_m : array_like of float
        Interval lengths [m].
    reference_name : str
        What the reference is (``site_domain``, ``rule_domain``), written in the table.

    Returns
    -------
    table : pandas.DataFrame
        One row per (domain, reference domain) pair that occurs: ``reference``, ``domain``,
        ``reference_domain``, ``intervals``, ``length_m``, ``domain_share_frac`` (share of the
        domain's metres), ``reference_share_frac`` (share of the reference domain's metres).
    stats : dict
        ``adjusted_rand_idx`` (Hubert & Arabie 1985, on intervals), ``agreement_frac``:
        metres of each reference domain in its best-matching domain, summed, over all metres
        (1 when every reference domain lies inside one domain), and ``intervals``, ``length_m``.
    """
    d = pd.Series(np.asarray(domain, dtype=object))
    r = pd.Series(np.asarray(reference, dtype=object))
    length = pd.Series(np.asarray(length_m, dtype=float))
    keep = r.notna().to_numpy() & d.notna().to_numpy()
    frame = pd.DataFrame({"domain": d[keep], "reference_domain": r[keep], "length_m": length[keep]})
    frame["domain"] = frame["domain"].astype(str)
    frame["reference_domain"] = frame["reference_domain"].astype(str)
    if frame.empty:
        table = pd.DataFrame(
            columns=["reference", "domain", "reference_domain", "intervals", "length_m",
                     "domain_share_frac", "reference_share_frac"]
        )
        return table, {"adjusted_rand_idx": np.nan, "agreement_frac": np.nan,
                       "intervals": 0, "length_m": 0.0}
    tab = (
        frame.groupby(["domain", "reference_domain"], sort=True)
        .agg(intervals=("length_m", "size"), length_m=("length_m", "sum"))
        .reset_index()
    )
    tab["domain_share_frac"] = tab["length_m"] / tab.groupby("domain")["length_m"].transform("sum")
    tab["reference_share_frac"] = tab["length_m"] / tab.groupby("reference_domain")[
        "length_m"
    ].transform("sum")
    tab.insert(0, "reference", reference_name)
    total = float(tab["length_m"].sum())
    best = tab.groupby("reference_domain")["length_m"].max().sum()
    stats = {
        "adjusted_rand_idx": float(
            adjusted_rand_score(frame["reference_domain"], frame["domain"])
        ),
        "agreement_frac": float(best / total) if total > 0 else np.nan,
        "intervals": len(frame),
        "length_m": total,
    }
    return tab, stats
