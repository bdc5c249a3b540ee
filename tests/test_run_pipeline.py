"""The run pipeline: step order, missing inputs, tables in and out, the output folder."""

from __future__ import annotations

import hashlib
import json
import warnings

import matplotlib
import numpy as np
import pandas as pd
import pytest
from pydantic import Field
from run_fixtures import lab_assays, write_recipe

from geomet.errors import GeometError, RecipeError, StepInputMissing
from geomet.run import registry as reg
from geomet.run.pipeline import check_step_inputs, order_steps, run_recipe, run_steps
from geomet.run.registry import Step, StepOptions

matplotlib.use("Agg")


class ScaleOptions(StepOptions):
    factor: float = Field(2.0, gt=0, description="Multiplier.")


def _noop(ctx, options):
    return {}


def make_step(
    name,
    func=_noop,
    *,
    needs=(),
    produces=None,
    optional_needs=(),
    order=100,
    options=StepOptions,
    summary="",
):
    return Step(
        name=name,
        func=func,
        options=options,
        needs=tuple(needs),
        produces=dict(produces or {}),
        optional_needs=tuple(optional_needs),
        summary=summary or f"The {name} step.",
        order=order,
    )


@pytest.fixture
def steps(monkeypatch):
    """Register test steps in the global registry for one test only."""

    def add(*items):
        for item in items:
            monkeypatch.setitem(reg.STEPS, item.name, item)
        return reg.STEPS

    return add


def sha(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def tree_hashes(folder):
    return {str(p.relative_to(folder)): sha(p) for p in sorted(folder.rglob("*")) if p.is_file()}


# --- ordering --------------------------------------------------------------------------------
def test_order_follows_needs_whatever_the_listed_order():
    registry = {
        "c": make_step("c", needs=["t_b"], produces={"t_c": ""}),
        "a": make_step("a", produces={"t_a": ""}),
        "b": make_step("b", needs=["t_a"], produces={"t_b": ""}),
    }
    assert [s.name for s in order_steps(["c", "b", "a"], registry)] == ["a", "b", "c"]


def test_order_tie_break_by_step_order_then_listing():
    registry = {
        "late": make_step("late", order=50),
        "early": make_step("early", order=10),
        "x": make_step("x"),
        "y": make_step("y"),
        "uses": make_step("uses", optional_needs=["t_y"]),
        "makes": make_step("makes", produces={"t_y": ""}, order=200),
    }
    names = [s.name for s in order_steps(["y", "x", "uses", "late", "makes", "early"], registry)]
    assert names == ["early", "late", "y", "x", "makes", "uses"]  # optional needs order too


def test_order_refuses_unknown_steps_and_cycles():
    registry = {
        "a": make_step("a", needs=["t_b"], produces={"t_a": ""}),
        "b": make_step("b", needs=["t_a"], produces={"t_b": ""}),
    }
    with pytest.raises(
        RecipeError,
        match=r"unknown step 'aa'; did you mean 'a'\?; registered "
        r"steps: a, b",
    ):
        order_steps(["aa"], registry)
    with pytest.raises(RecipeError, match=r"steps a, b need each other's tables"):
        order_steps(["a", "b"], registry)


def test_missing_table_says_which_input_or_step_provides_it():
    registry = {
        "domains": make_step("domains", needs=["mineralogy", "site_plan"], produces={"dom": ""}),
        "mineralogy": make_step("mineralogy", needs=["composites"], produces={"mineralogy": ""}),
    }
    ordered = order_steps(["domains"], registry)
    with pytest.raises(StepInputMissing) as info:
        check_step_inputs(ordered, [], registry)
    message = str(info.value)
    assert (
        "step 'domains' needs table 'mineralogy'; it is produced by step 'mineralogy': add "
        "'mineralogy' to run.steps" in message
    )
    assert (
        "step 'domains' needs table 'site_plan'; no step produces it: give it as an input "
        "([inputs.site_plan] with path = ...)" in message
    )
    check_step_inputs(
        order_steps(["mineralogy", "domains"], registry), ["composites", "site_plan"], registry
    )


# --- run_steps -----------------------------------------------------------------------------------
def test_run_steps_tables_in_tables_out(steps):
    seen = {}

    def clean(ctx, options):
        frame = ctx.tables["assays"]
        ctx.note("clean: dropped the last row")
        return {"assays": frame.iloc[:-1], "report": pd.DataFrame({"n": [len(frame)]})}

    def scale(ctx, options):
        seen["rows"] = len(ctx.tables["assays"])
        seen["seed"] = ctx.seed
        out = ctx.tables["assays"].assign(cu_pct=ctx.tables["assays"]["cu_pct"] * options.factor)
        warnings.warn("scaled copper", UserWarning, stacklevel=1)
        return {"scaled": out}

    steps(
        make_step("clean_test", clean, needs=["assays"], produces={"report": "Report."}, order=10),
        make_step(
            "scale_test",
            scale,
            needs=["assays"],
            produces={"scaled": "Scaled."},
            options=ScaleOptions,
        ),
    )
    assays = pd.DataFrame({"hole_id": ["A", "A", "B"], "cu_pct": [0.1, 0.2, 0.3]})
    result = run_steps(
        {"assays": assays}, ["scale_test", "clean_test"], {"scale_test": {"factor": 3}}, seed=5
    )
    assert [r.name for r in result.steps] == ["clean_test", "scale_test"]
    assert seen == {"rows": 2, "seed": 5}  # the cleaned assays replaced the input
    assert list(result.outputs) == ["report", "scaled"]
    np.testing.assert_allclose(result["scaled"]["cu_pct"], [0.3, 0.6])
    assert len(result.tables["assays"]) == 2
    assert result.steps[0].replaced == ["assays"]
    assert result.steps[0].notes == ["clean: dropped the last row"]
    assert result.notes == ["clean: dropped the last row"]
    assert result.warnings == ["step scale_test: UserWarning: scaled copper"]
    assert result.provenance["seed"] == 5
    assert result.provenance["parameters"]["scale_test"] == {"factor": 3.0}
    assert result.provenance["steps"] == ["clean_test", "scale_test"]
    assert len(assays) == 3  # the caller's table is untouched


def test_run_steps_validates_options_and_inputs(steps):
    steps(make_step("scale_test", needs=["assays"], produces={"scaled": ""}, options=ScaleOptions))
    with pytest.raises(
        RecipeError,
        match=r"scale_test\.factor: got -1; input should be "
        r"greater than 0",
    ):
        run_steps({"assays": pd.DataFrame()}, ["scale_test"], {"scale_test": {"factor": -1}})
    with pytest.raises(
        StepInputMissing,
        match=r"step 'scale_test' needs table 'assays'; no "
        r"step produces it",
    ):
        run_steps({}, ["scale_test"])


def test_step_returning_wrong_type_is_named(steps):
    steps(make_step("bad_test", lambda ctx, o: [1, 2]))
    with pytest.raises(
        GeometError,
        match=r"step 'bad_test' returned list; a step must return a "
        r"dict of table name -> pandas DataFrame",
    ):
        run_steps({}, ["bad_test"])


def test_step_bug_keeps_its_traceback_with_step_name(steps):
    def broken(ctx, options):
        return {"x": 1 / 0}

    steps(make_step("broken_test", broken))
    with pytest.raises(ZeroDivisionError) as info:
        run_steps({}, ["broken_test"])
    assert "(raised in run step 'broken_test')" in info.value.__notes__


def test_declared_table_not_returned_fails_the_step_that_needs_it(steps, caplog):
    steps(make_step("lazy_test", produces={"t_lazy": ""}), make_step("user_test", needs=["t_lazy"]))
    with pytest.raises(
        StepInputMissing,
        match=r"step 'user_test' needs table 't_lazy', which an "
        r"earlier step declared but did not return",
    ):
        run_steps({}, ["user_test", "lazy_test"])
    assert "step lazy_test did not return its table 't_lazy'" in caplog.text


# --- run_recipe: the output folder ----------------------------------------------------------------
def _plot_step(ctx, options):
    import matplotlib.pyplot as plt

    comps = ctx.tables["composites"]
    fig, ax = plt.subplots(figsize=(3, 2))
    ax.plot(comps["cu_pct"].to_numpy())
    ctx.add_plot("cu_downhole", fig, "Copper by composite", table="cu_summary")
    ctx.extras.setdefault("json_files", {})["cu_model"] = {
        "mean_cu_pct": float(comps["cu_pct"].mean()),
        "missing": float("nan"),
    }
    summary = comps.groupby("hole_id", as_index=False)["cu_pct"].mean()
    return {"cu_summary": summary}


@pytest.fixture
def plot_step(steps):
    steps(
        make_step(
            "summary_test",
            _plot_step,
            needs=["composites"],
            produces={"cu_summary": "Mean copper by hole."},
        )
    )


def test_run_recipe_writes_a_complete_output_folder(tmp_path, plot_step):
    recipe = write_recipe(
        tmp_path, steps=("check", "composite", "summary_test"), table_format="both"
    )
    inputs_before = tree_hashes(tmp_path / "data")
    result = run_recipe(recipe, show_progress=False)
    out = tmp_path / "out"
    assert result.out_dir == out.resolve()
    names = {p.name for p in out.iterdir()}
    assert {
        "vellantra_test.xlsx",
        "tables",
        "plots",
        "models",
        "run.log",
        "test.toml",
        "provenance.json",
    } <= names
    assert not list(tmp_path.glob(".out.*"))  # no temporary folder left behind
    for table in ("validation_report", "composites", "cu_summary"):
        assert (out / "tables" / f"{table}.csv").is_file()
        assert (out / "tables" / f"{table}.parquet").is_file()
    csv = pd.read_csv(out / "tables" / "composites.csv")
    pd.testing.assert_frame_equal(
        csv, result["composites"].reset_index(drop=True), check_dtype=False
    )
    parquet = pd.read_parquet(out / "tables" / "cu_summary.parquet")
    np.testing.assert_allclose(parquet["cu_pct"], result["cu_summary"]["cu_pct"])
    assert not (out / "tables" / "assays.csv").exists()  # inputs are not products
    assert (out / "plots" / "cu_downhole.png").is_file()
    assert result.plots[0].path == out.resolve() / "plots" / "cu_downhole.png"
    model = json.loads((out / "models" / "cu_model.json").read_text())
    assert model["missing"] is None  # NaN written as JSON null (RFC 8259 has no NaN)
    assert model["mean_cu_pct"] == pytest.approx(result["composites"]["cu_pct"].mean())
    assert (out / "test.toml").read_text() == recipe.read_text()
    log = (out / "run.log").read_text()
    for text in (
        "Vellantra test run: recipe test.toml, geomet",
        "step 1/3 check: started",
        "step composite: finished in",
        "composite: 14 composites",
        "run finished: 3 tables, 1 plots",
    ):
        assert text in log
    assert tree_hashes(tmp_path / "data") == inputs_before


def test_au_converted_from_ppb(tmp_path):
    # 1 g/t = 1 ppm = 1000 ppb (definition of parts per million / billion by mass).
    result = run_recipe(write_recipe(tmp_path), show_progress=False)
    first = result["composites"].iloc[0]
    raw = lab_assays()
    expected = raw.loc[raw["HoleID"].eq("VL-001") & raw["To"].le(4), "Au_ppb"].mean() / 1000
    assert first["au_gpt"] == pytest.approx(expected)


def test_provenance_records_versions_hashes_and_options(tmp_path):
    recipe = write_recipe(tmp_path)
    run_recipe(recipe, show_progress=False)
    prov = json.loads((tmp_path / "out" / "provenance.json").read_text())
    import geomet

    assert prov["geomet_version"] == geomet.__version__
    assert prov["seed"] == 11
    assert prov["steps"] == ["check", "composite"]
    assert prov["recipe"]["text"] == recipe.read_text()
    assert prov["recipe"]["sha256"] == hashlib.sha256(recipe.read_bytes()).hexdigest()
    by_table = {rec["table"]: rec for rec in prov["inputs"]}
    assert by_table["assays"]["sha256"] == sha(tmp_path / "data" / "assays.csv")
    assert by_table["assays"]["file"] == "data/assays.csv"
    assert by_table["assays"]["rows"] == len(lab_assays())
    assert prov["parameters"]["composite"]["length_m"] == 4.0
    assert prov["parameters"]["check"]["on_error"] == "stop"
    assert prov["parameters"]["detection"]["rule"] == "half_limit"
    assert prov["packages"]["pandas"] == pd.__version__
    assert prov["python"].count(".") == 2
    assert prov["started_utc"].endswith("Z")
    assert prov["finished_utc"].endswith("Z")


def test_same_recipe_same_bytes(tmp_path, plot_step):
    recipe = write_recipe(tmp_path, steps=("check", "composite", "summary_test"))
    run_recipe(recipe, out=tmp_path / "run1", show_progress=False)
    run_recipe(recipe, out=tmp_path / "run2", show_progress=False)
    first = tree_hashes(tmp_path / "run1" / "tables")
    assert first
    assert first == tree_hashes(tmp_path / "run2" / "tables")
    assert sha(tmp_path / "run1" / "models" / "cu_model.json") == sha(
        tmp_path / "run2" / "models" / "cu_model.json"
    )


def test_failed_run_leaves_old_output_and_inputs_as_they_were(tmp_path, steps, plot_step):
    def explode(ctx, options):
        import matplotlib.pyplot as plt

        ctx.add_plot("half_done", plt.figure(), "Written before the failure")
        message = "blend failed midway"
        raise GeometError(message)

    steps(make_step("explode_test", explode, needs=["cu_summary"]))
    good = write_recipe(tmp_path, steps=("check", "composite", "summary_test"))
    run_recipe(good, show_progress=False)
    out = tmp_path / "out"
    before = tree_hashes(out)
    inputs_before = tree_hashes(tmp_path / "data")
    text = good.read_text().replace('"summary_test"]', '"summary_test", "explode_test"]')
    good.write_text(text)
    with pytest.raises(GeometError, match="blend failed midway"):
        run_recipe(good, show_progress=False)
    assert tree_hashes(out) == before
    assert tree_hashes(tmp_path / "data") == inputs_before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["data", "out", "test.toml"]


def test_data_error_stops_before_anything_is_written(tmp_path):
    recipe = write_recipe(tmp_path)
    bad = lab_assays()
    bad.loc[2, "To"] = bad.loc[2, "From"] - 1.0  # from_m >= to_m on file line 4
    bad.to_csv(tmp_path / "data" / "assays.csv", index=False)
    from geomet.errors import InputDataError

    with pytest.raises(InputDataError, match=r"input tables have \d+ errors"):
        run_recipe(recipe, show_progress=False)
    assert not (tmp_path / "out").exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["data", "test.toml"]


def test_output_folder_safety(tmp_path):
    recipe = write_recipe(tmp_path)
    foreign = tmp_path / "notes"
    foreign.mkdir()
    (foreign / "mine_plan.docx").write_text("not geomet's")
    with pytest.raises(
        RecipeError,
        match=r"output folder .*notes already exists and was not "
        r"written by geomet \(no provenance\.json\)",
    ):
        run_recipe(recipe, out=foreign, show_progress=False)
    assert (foreign / "mine_plan.docx").read_text() == "not geomet's"
    with pytest.raises(
        RecipeError,
        match=r"output folder .*data contains "
        r"(collars|surveys|assays)\.csv",
    ):
        run_recipe(recipe, out=tmp_path / "data", show_progress=False)
    with pytest.raises(
        RecipeError,
        match=r"output folder .* contains \w+\.(csv|toml), which the "
        r"run reads",
    ):
        run_recipe(recipe, out=tmp_path, show_progress=False)
    (tmp_path / "afile").write_text("x")
    with pytest.raises(RecipeError, match=r"output .*afile exists and is a file, not a folder"):
        run_recipe(recipe, out=tmp_path / "afile", show_progress=False)


def test_existing_geomet_output_is_replaced(tmp_path):
    recipe = write_recipe(tmp_path)
    run_recipe(recipe, show_progress=False)
    stale = tmp_path / "out" / "tables" / "stale.csv"
    stale.write_text("old")
    run_recipe(recipe, show_progress=False)
    assert not stale.exists()
    assert (tmp_path / "out" / "tables" / "composites.csv").is_file()


def test_model_names_must_be_plain_file_names(tmp_path, steps):
    def sneaky(ctx, options):
        ctx.extras.setdefault("json_files", {})["../../escaped"] = {"a": 1}
        return {}

    steps(make_step("sneaky_test", sneaky))
    recipe = write_recipe(tmp_path, steps=("check", "sneaky_test"))
    with pytest.raises(
        GeometError,
        match=r"a step asked to save model '\.\./\.\./escaped'; model "
        r"names must be plain file names",
    ):
        run_recipe(recipe, show_progress=False)
    assert not (tmp_path.parent / "escaped.json").exists()
    assert not (tmp_path / "out").exists()


def test_options_of_steps_not_run_are_logged(tmp_path, caplog):
    import logging

    recipe = write_recipe(tmp_path, steps=("check",))
    with caplog.at_level(logging.INFO, logger="geomet.run"):
        run_recipe(recipe, show_progress=False)
    assert "options given for steps not run this time: composite" in caplog.text


def test_detection_section_reaches_the_reader(tmp_path):
    from geomet.recipe import load_recipe
    from geomet.run.pipeline import detection_rule, run_loaded_recipe

    recipe_path = write_recipe(tmp_path, extra='[detection]\nrule = "fraction"\nfraction = 0.25\n')
    raw = lab_assays().astype({"Cu_%": object})
    raw.loc[0, "Cu_%"] = "<0.04"
    raw.to_csv(tmp_path / "data" / "assays.csv", index=False)
    recipe = load_recipe(recipe_path)
    rule = detection_rule(recipe)
    assert (rule.rule, rule.fraction) == ("fraction", 0.25)
    result = run_loaded_recipe(recipe, steps=[])
    assays = result.tables["assays"]
    # Substitution by a fraction of the detection limit: 0.25 x 0.04 = 0.01 (the rule's definition).
    assert assays.loc[0, "cu_pct"] == pytest.approx(0.01)
    assert bool(assays.loc[0, "cu_pct_censored"])
    assert result.extras["sources"]["assays"].file.endswith("assays.csv")
    assert [r["table"] for r in result.provenance["inputs"]] == ["collars", "surveys", "assays"]


def test_progress_flag_reaches_the_steps(steps):
    seen = []

    def look(ctx, options):
        seen.append(ctx.show_progress)
        seen.append(list(ctx.progress(range(3), "counting")))
        return {}

    steps(make_step("look_test", look))
    run_steps({}, ["look_test"], show_progress=True)
    run_steps({}, ["look_test"])
    assert seen == [True, [0, 1, 2], False, [0, 1, 2]]


def test_missing_table_when_the_producer_is_listed_after():
    registry = {
        "a": make_step("a", produces={"t_a": ""}),
        "b": make_step("b", needs=["t_a"]),
    }
    with pytest.raises(
        StepInputMissing,
        match=r"step 'b' needs table 't_a'; step 'a' produces it "
        r"but runs later",
    ):
        check_step_inputs([registry["b"], registry["a"]], [], registry)


def test_writers_refuse_unknown_formats(tmp_path):
    from geomet.io.writers import write_table, write_tables

    frame = pd.DataFrame({"a": [1]})
    with pytest.raises(
        GeometError,
        match=r"cannot write a table to 't\.xlsx': the file name must "
        r"end in \.csv or \.parquet",
    ):
        write_table(frame, tmp_path / "t.xlsx")
    with pytest.raises(
        GeometError,
        match=r"table_format must be one of csv, parquet, both; got "
        r"'feather'",
    ):
        write_tables({"t": frame}, tmp_path, "feather")
    assert list(tmp_path.iterdir()) == []


def test_parquet_copies_hold_mixed_text_columns(tmp_path):
    from geomet.io.writers import write_table

    frame = pd.DataFrame({"value": ["12.5", 3, None], "n": [1, 2, 3]}, dtype=object)
    write_table(frame, tmp_path / "mixed.parquet")
    back = pd.read_parquet(tmp_path / "mixed.parquet")
    assert back["value"].tolist()[:2] == ["12.5", "3"]
    assert pd.isna(back["value"].iloc[2])


def test_result_repr_is_short(steps):
    steps(
        make_step(
            "one_test",
            lambda ctx, o: {"t_one": pd.DataFrame({"a": range(5000)})},
            produces={"t_one": "One."},
        )
    )
    text = repr(run_steps({}, ["one_test"]))
    assert text == "RunResult(steps=[one_test], outputs=[t_one (5,000 rows)], plots=0, warnings=0)"


def test_sheets_option_chooses_workbook_sheets(tmp_path):
    import openpyxl

    recipe = write_recipe(tmp_path)
    recipe.write_text(
        recipe.read_text().replace(
            'workbook = "vellantra_test.xlsx"', 'workbook = "v.xlsx"\nsheets = ["composites"]'
        )
    )
    run_recipe(recipe, show_progress=False)
    names = openpyxl.load_workbook(tmp_path / "out" / "v.xlsx", read_only=True).sheetnames
    assert names == ["About this run", "Composites", "Column guide", "Recipe"]
    assert (tmp_path / "out" / "tables" / "validation_report.csv").is_file()


def test_save_result_writes_a_run_of_steps(tmp_path, steps, plot_step):
    from geomet.run.pipeline import save_result

    recipe = write_recipe(tmp_path)
    from geomet.recipe import load_recipe
    from geomet.run.pipeline import read_inputs

    tables, _, _ = read_inputs(load_recipe(recipe))
    result = run_steps(tables, ["composite", "summary_test"], plot_dir=tmp_path / "pngs")
    out = save_result(result, tmp_path / "saved", table_format="parquet", workbook="s.xlsx")
    assert out == (tmp_path / "saved").resolve() == result.out_dir
    assert sorted(p.name for p in (out / "tables").iterdir()) == [
        "composites.parquet",
        "cu_summary.parquet",
    ]
    assert (out / "plots" / "cu_downhole.png").is_file()
    assert result.plots[0].path == out / "plots" / "cu_downhole.png"
    assert (out / "models" / "cu_model.json").is_file()
    assert json.loads((out / "provenance.json").read_text())["steps"] == [
        "composite",
        "summary_test",
    ]
    import openpyxl

    names = openpyxl.load_workbook(out / "s.xlsx", read_only=True).sheetnames
    assert names == ["About this run", "Composites", "Cu summary", "Plots", "Column guide"]
