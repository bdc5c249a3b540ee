"""Rule-based domains, site domain codes and domain comparison."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.metrics import adjusted_rand_score

from geomet.domains.rules import (
    Condition,
    Rule,
    apply_rules,
    compare_domains,
    parse_rule,
    parse_rules,
    site_domains_at_midpoints,
)
from geomet.errors import InputDataError, RecipeError


def test_parse_text_and_data_forms():
    a = parse_rule("clay_swelling_pct >= 5 -> Swelling clay")
    b = parse_rule({"domain": "Swelling clay", "when": "clay_swelling_pct >= 5"})
    c = parse_rule({"domain": "Swelling clay", "column": "clay_swelling_pct", "op": ">=",
                    "value": 5})
    d = parse_rule({"domain": "Swelling clay",
                    "conditions": [{"column": "clay_swelling_pct", "op": ">=", "value": "5"}]})
    assert a == b == c == d == Rule("Swelling clay", (Condition("clay_swelling_pct", ">=", 5.0),))
    two = parse_rule("sulfate_pct > 2 AND cu_pct < 0.2 -> Gypsum front, low Cu")
    assert [str(x) for x in two.conditions] == ["sulfate_pct > 2", "cu_pct < 0.2"]
    assert two.domain == "Gypsum front, low Cu"
    assert parse_rule("cu_pct >= 1e-1 -> X").conditions[0].value == 0.1


def test_first_matching_rule_wins_and_missing_never_matches():
    df = pd.DataFrame({"clay_swelling_pct": [8.0, 1.0, np.nan, 0.0],
                       "cu_pct": [0.5, 0.5, 0.5, 0.1]})
    rules = parse_rules(["clay_swelling_pct >= 5 -> Swelling clay",
                         "cu_pct >= 0.3 -> Higher grade"])
    out = apply_rules(df, rules, default="Other")
    assert out.tolist() == ["Swelling clay", "Higher grade", "Higher grade", "Other"]
    only_clay = apply_rules(df, rules[:1])
    assert only_clay.tolist() == ["Swelling clay", "Other", "Other", "Other"]


@pytest.mark.parametrize(
    "spec",
    [
        "__import__('os').system('echo') >= 1 -> X",
        "cu_pct >= 0.2; import os -> X",
        "cu_pct >= abs(0.2) -> X",
        "cu_pct => 0.2 -> X",
    ],
)
def test_code_is_never_accepted(spec):
    with pytest.raises(RecipeError, match="cannot read rule condition"):
        parse_rule(spec)


def test_rule_errors():
    with pytest.raises(RecipeError, match="needs '-> <domain name>'"):
        parse_rule("cu_pct >= 0.2")
    with pytest.raises(RecipeError, match="operator must be one of"):
        Condition("cu_pct", "~", 1)
    with pytest.raises(RecipeError, match="must be a number"):
        Condition("cu_pct", ">", "high")
    with pytest.raises(RecipeError, match="must be finite"):
        Condition("cu_pct", ">", float("inf"))
    with pytest.raises(RecipeError, match="plain column name"):
        Condition("cu pct", ">", 1)
    with pytest.raises(RecipeError, match="non-empty domain name"):
        parse_rule("cu_pct > 1 ->  ")
    with pytest.raises(RecipeError, match="has no condition"):
        Rule("X", ())
    with pytest.raises(RecipeError, match="needs 'when', 'conditions'"):
        parse_rule({"domain": "X"})
    with pytest.raises(RecipeError, match="text or a table"):
        parse_rule(42)
    df = pd.DataFrame({"cu_pct": [1.0]})
    with pytest.raises(InputDataError, match=r"does not have: \['zn_ppm'\]"):
        apply_rules(df, parse_rules(["zn_ppm > 1 -> Zinc"]), table="mineralogy")


def test_site_domains_at_midpoints():
    comps = pd.DataFrame({"hole_id": ["A", "A", "A", "B", "C"],
                          "from_m": [0.0, 10.0, 20.0, 0.0, 0.0],
                          "to_m": [10.0, 20.0, 30.0, 10.0, 10.0]})
    site = pd.DataFrame({"hole_id": ["A", "A", "B"], "from_m": [0.0, 12.0, 20.0],
                         "to_m": [12.0, 40.0, 30.0], "site_domain": ["OX", "SUL", "SUL"]})
    out = site_domains_at_midpoints(comps, site)
    # mid-points 5, 15, 25 in A -> OX, SUL, SUL; B mid 5 is not covered; C has no codes
    assert out.iloc[:3].tolist() == ["OX", "SUL", "SUL"]
    assert out.iloc[3:].isna().all()
    with pytest.raises(InputDataError, match=r"missing columns \['site_domain'\]"):
        site_domains_at_midpoints(comps, site.drop(columns="site_domain"))


def test_compare_domains_counts_metres_and_ari():
    dom = np.array([1, 1, 1, 2, 2, 2])
    ref = np.array(["X", "X", "Y", "Y", "Y", None], dtype=object)
    length = np.array([1.0, 2.0, 3.0, 4.0, 5.0, 6.0])
    tab, stats = compare_domains(dom, ref, length, reference_name="site_domain")
    got = tab.set_index(["domain", "reference_domain"])
    assert got.loc[("1", "X"), "length_m"] == 3.0
    assert got.loc[("1", "Y"), "intervals"] == 1
    assert got.loc[("2", "Y"), "length_m"] == 9.0
    assert np.isclose(got.loc[("1", "X"), "domain_share_frac"], 0.5)
    assert np.isclose(got.loc[("1", "Y"), "reference_share_frac"], 0.25)
    # reference: sklearn adjusted_rand_score on the 5 rows with a reference
    assert np.isclose(stats["adjusted_rand_idx"],
                      adjusted_rand_score(["X", "X", "Y", "Y", "Y"], [1, 1, 1, 2, 2]))
    # best match: X -> 3 m in domain 1, Y -> 9 m in domain 2, of 15 m
    assert np.isclose(stats["agreement_frac"], 12 / 15)
    empty, st = compare_domains(dom, [None] * 6, length)
    assert empty.empty
    assert np.isnan(st["adjusted_rand_idx"])
