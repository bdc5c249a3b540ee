"""Property tests (hypothesis) for step ordering, sheet names, recipe values and workbook values."""

from __future__ import annotations

import string
import tomllib

import numpy as np
import openpyxl
import pandas as pd
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from geomet.io.workbook import MAX_SHEET_NAME, RESERVED_SHEETS, unique_sheet_titles, write_workbook
from geomet.recipe.explain import toml_value
from geomet.run.pipeline import RunResult, order_steps
from geomet.run.registry import Step, StepOptions


def _noop(ctx, options):
    return {}


@st.composite
def dags(draw):
    """Random step graphs without cycles: step i may use tables of steps j < i."""
    n = draw(st.integers(1, 8))
    registry = {}
    for i in range(n):
        uses = draw(st.sets(st.integers(0, max(i - 1, 0)), max_size=i)) if i else set()
        optional = draw(st.booleans())
        needs = [f"t{j}" for j in sorted(uses)]
        registry[f"s{i}"] = Step(
            name=f"s{i}",
            func=_noop,
            options=StepOptions,
            needs=() if optional else tuple(needs),
            optional_needs=tuple(needs) if optional else (),
            produces={f"t{i}": ""},
            order=draw(st.integers(0, 3)),
        )
    names = draw(st.permutations(list(registry)))
    return registry, names


@given(dags())
def test_every_step_runs_after_the_steps_whose_tables_it_uses(case):
    registry, asked = case
    ordered = [s.name for s in order_steps(asked, registry)]
    assert sorted(ordered) == sorted(asked)
    position = {name: i for i, name in enumerate(ordered)}
    for name in ordered:
        step = registry[name]
        for table in (*step.needs, *step.optional_needs):
            maker = "s" + table[1:]
            assert position[maker] < position[name]


@given(st.lists(st.text(min_size=1, max_size=60), min_size=1, max_size=12, unique=True))
def test_sheet_names_are_short_unique_and_legal(tables):
    names = unique_sheet_titles(tables)
    values = list(names.values())
    assert all(0 < len(v) <= MAX_SHEET_NAME for v in values)  # Excel's limit: 31 characters
    lowered = [v.lower() for v in values]
    assert len(set(lowered)) == len(lowered)
    assert not set(lowered) & {r.lower() for r in RESERVED_SHEETS}
    assert not any(set(v) & set("[]:*?/\\") for v in values)
    assert all(v == v.strip() and not v.startswith("'") for v in values)


_keys = st.text(alphabet=string.ascii_letters + "_%", min_size=1, max_size=8)
_scalars = (
    st.booleans()
    | st.integers(-(2**40), 2**40)
    | st.floats(allow_nan=False, allow_infinity=False)
    | st.text(alphabet=st.characters(blacklist_categories=("Cs", "Cc")), max_size=12)
)
_values = st.recursive(
    _scalars,
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(_keys, inner, max_size=3),
    max_leaves=6,
)


@given(_values)
def test_option_values_render_as_toml_that_reads_back(value):
    # The TOML 1.0 grammar, as implemented by the standard library's tomllib, is the reference.
    assert tomllib.loads("x = " + toml_value(value))["x"] == value


_finite = st.floats(allow_nan=False, allow_infinity=False, width=64)


@settings(
    max_examples=15, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    st.lists(
        st.tuples(_finite, st.one_of(st.none(), _finite), st.text(max_size=20)),
        min_size=1,
        max_size=30,
    )
)
@example(rows=[(0.1, None, "line\r\nbreak"), (1e-300, 5e-324, " x "), (-0.0, 1e300, "=SUM(A1)")])
def test_workbook_values_read_back_exactly(tmp_path_factory, rows):
    frame = pd.DataFrame(
        {
            "cu_pct": [r[0] for r in rows],
            "au_gpt": [np.nan if r[1] is None else r[1] for r in rows],
            "lith_code": [r[2] for r in rows],
        }
    )
    path = tmp_path_factory.mktemp("wb") / "p.xlsx"
    write_workbook(path, RunResult(tables={"t": frame}, produced={"t": "Test table."}))
    ws = openpyxl.load_workbook(path)["T"]
    body = list(ws.iter_rows(min_row=5, values_only=True))
    assert len(body) == len(frame)
    for (cu, au, text), row in zip(rows, body, strict=True):
        assert row[0] == cu  # exact: shortest round-trip decimals
        assert (row[1] is None) if au is None else (row[1] == au)
        cleaned = "".join(ch for ch in text if not _illegal(ch))
        assert (row[2] or "") == cleaned


def _illegal(ch: str) -> bool:
    """Characters XML 1.0 cannot hold (control characters other than tab, LF, CR)."""
    code = ord(ch)
    return (code < 32 and ch not in "\t\n\r") or 0xFFFE <= code <= 0xFFFF
