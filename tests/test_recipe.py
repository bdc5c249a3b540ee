"""Recipes: parsing, typed options, collected error messages, and the option documentation."""

from __future__ import annotations

import tomllib
from typing import Literal

import pytest
from pydantic import BaseModel, Field
from run_fixtures import write_recipe

from geomet.errors import RecipeError
from geomet.recipe import explain, load_recipe, parse_recipe, section_docs, validate_step_options
from geomet.recipe.explain import allowed_values, toml_value, type_name
from geomet.recipe.loader import RecipeProblem
from geomet.recipe.sections import DetectionSection, RunSection
from geomet.run.registry import Step, StepOptions


class MillLimits(BaseModel):
    model_config = {"extra": "forbid"}
    clay_max_pct: float = Field(6.0, ge=0.0, description="Most swelling clay in mill feed [%].")


class PlanOptions(StepOptions):
    solver: Literal["highs", "simplex"] = Field("highs", description="Solver to use.")
    periods: int = Field(10, ge=1, description="Periods planned.")
    mill: MillLimits = Field(default_factory=MillLimits, description="Mill limits.")


def _plan(ctx, options):
    return {}


REGISTRY = {
    "plan_test": Step(
        name="plan_test",
        func=_plan,
        options=PlanOptions,
        needs=("blocks",),
        produces={"plan_table": "A plan."},
        summary="Plan the feed.",
    ),
}


def parse(text: str, tmp_path, registry=REGISTRY):
    return parse_recipe(text, base_dir=tmp_path, source="t.toml", registry=registry)


def test_typed_options_and_defaults(tmp_path):
    (tmp_path / "blocks.csv").write_text("block_id\nB1\n")
    recipe = parse(
        '[run]\nsteps = ["plan_test"]\nseed = 4\n[inputs.blocks]\npath = "blocks.csv"\n'
        "[plan_test]\nperiods = 3\nmill.clay_max_pct = 4.5\n",
        tmp_path,
    )
    opts = recipe.options["plan_test"]
    assert isinstance(opts, PlanOptions)
    assert opts.periods == 3
    assert opts.mill.clay_max_pct == 4.5  # nested model from the dotted TOML key (TOML 1.0 spec)
    assert opts.solver == "highs"  # default
    assert recipe.run.seed == 4
    assert recipe.run.table_format == "csv"
    assert recipe.detection.rule == "half_limit"
    assert recipe.input_path("blocks") == (tmp_path / "blocks.csv").resolve()
    assert recipe.output_dir == (tmp_path / "output").resolve()
    resolved = recipe.resolved_options()
    assert resolved["plan_test"]["mill"] == {"clay_max_pct": 4.5}
    assert resolved["run"]["steps"] == ["plan_test"]


def test_every_problem_is_collected_with_key_value_and_suggestion(tmp_path):
    text = """
seed = 3
[run]
stpes = ["plan_test"]
table_format = "xls"
[inputs.block]
path = "blocks.csv"
[detection]
rule = "half"
fraction = 2
[plan_tset]
periods = 2
[plan_test]
perods = 2
mill.clay_max_pc = 3
solver = "cplex"
"""
    with pytest.raises(RecipeError) as info:
        parse(text, tmp_path)
    message = str(info.value)
    assert message.startswith("t.toml has 11 problems:")
    expected = [
        "seed: unknown section or key",
        "did you mean to put it under [run] (run.seed)?",
        "run.steps: required, but not given",
        "run.stpes: unknown key; did you mean 'steps'?",
        "run.table_format: got 'xls'; input should be 'csv', 'parquet' or 'both'",
        "inputs.block: unknown input table; did you mean 'blocks'?",
        "detection.rule: got 'half'; input should be 'half_limit'",
        "detection.fraction: got 2; input should be less than or equal to 1",
        "plan_tset: unknown section or key",
        "did you mean 'plan_test'?",
        "plan_test.perods: unknown key; did you mean 'periods'?",
        "plan_test.mill.clay_max_pc: unknown key; did you mean 'clay_max_pct'?",
        "plan_test.solver: got 'cplex'; input should be 'highs' or 'simplex'",
    ]
    for part in expected:
        assert part in message
    assert len(info.value.problems) == 11


def test_unknown_step_in_run_steps_is_named_with_suggestion(tmp_path):
    with pytest.raises(
        RecipeError,
        match=r"run\.steps: unknown step 'plan_tst'; did you mean "
        r"'plan_test'\? \(see `geomet steps`\)",
    ):
        parse('[run]\nsteps = ["plan_tst"]\n', tmp_path)


def test_repeated_step_and_bad_workbook_name(tmp_path):
    with pytest.raises(RecipeError) as info:
        parse('[run]\nsteps = ["plan_test", "plan_test"]\nworkbook = "out/r.xls"\n', tmp_path)
    assert (
        "run.steps: got ['plan_test', 'plan_test']; each step may be listed once; repeated: "
        "plan_test" in str(info.value)
    )
    assert "run.workbook: got 'out/r.xls'; expected a plain file name ending in .xlsx" in str(
        info.value
    )


def test_missing_input_file_is_named_with_similar_files(tmp_path):
    (tmp_path / "blocks.csv").write_text("block_id\nB1\n")
    with pytest.raises(
        RecipeError,
        match=r"inputs\.blocks\.path: file not found: 'block.csv' "
        r"\(looked for .*block\.csv\); files there with similar "
        r"names: blocks\.csv",
    ):
        parse('[run]\nsteps = ["plan_test"]\n[inputs.blocks]\npath = "block.csv"\n', tmp_path)


def test_missing_input_folder_is_named(tmp_path):
    with pytest.raises(RecipeError, match=r"the folder .*nowhere does not exist"):
        parse('[run]\nsteps = ["plan_test"]\n[inputs.blocks]\npath = "nowhere/b.csv"\n', tmp_path)


def test_missing_run_section_and_non_table_section(tmp_path):
    with pytest.raises(RecipeError) as info:
        parse("plan_test = 3\n", tmp_path)
    assert "plan_test: expected a section [plan_test]; got 3" in str(info.value)
    assert "run: missing section [run]" in str(info.value)


def test_toml_syntax_error_names_the_line(tmp_path):
    text = '[run]\nsteps = ["plan_test"]\nseed = = 2\n'
    with pytest.raises(tomllib.TOMLDecodeError) as reference:  # what tomllib itself reports
        tomllib.loads(text)
    with pytest.raises(RecipeError, match=r"t\.toml is not valid TOML: .*line \d+") as info:
        parse(text, tmp_path)
    assert str(reference.value) in str(info.value)


def test_load_recipe_reports_missing_file(tmp_path):
    with pytest.raises(RecipeError, match=r"recipe file not found: .*nope\.toml"):
        load_recipe(tmp_path / "nope.toml")


def test_load_recipe_rejects_non_utf8(tmp_path):
    path = tmp_path / "latin.toml"
    path.write_bytes('[run]\ntitle = "Caf\xe9"\n'.encode("latin-1"))
    with pytest.raises(RecipeError, match=r"recipe latin\.toml is not UTF-8 text"):
        load_recipe(path)


def test_load_recipe_with_registered_steps(tmp_path):
    path = write_recipe(tmp_path)
    recipe = load_recipe(path)
    assert recipe.run.steps == ["check", "composite"]
    assert recipe.options["composite"].length_m == 4.0
    assert recipe.inputs["assays"].units == {"au_gpt": "ppb"}
    assert recipe.inputs["assays"].columns["Cu_%"] == "cu_pct"
    assert recipe.text == path.read_text()
    assert recipe.path == path.resolve()


def test_model_level_error_has_no_value_dump(tmp_path):
    path = write_recipe(tmp_path, extra='method = "by_category"\n')
    with pytest.raises(
        RecipeError,
        match=r"  - composite: composite method 'by_category' needs "
        r"category_column",
    ):
        load_recipe(path)


def test_validate_step_options_for_the_python_api():
    opts = validate_step_options({"plan_test": {"periods": 2}}, ["plan_test"], registry=REGISTRY)
    assert opts["plan_test"].periods == 2
    ready = PlanOptions(periods=5)
    assert (
        validate_step_options({"plan_test": ready}, ["plan_test"], registry=REGISTRY)["plan_test"]
        is ready
    )
    with pytest.raises(
        RecipeError,
        match=r"plan_test\.periods: got 0; input should be greater "
        r"than or equal to 1",
    ):
        validate_step_options({"plan_test": {"periods": 0}}, ["plan_test"], registry=REGISTRY)
    with pytest.raises(
        RecipeError,
        match=r"plan_tes: unknown step 'plan_tes'; did you mean "
        r"'plan_test'\?",
    ):
        validate_step_options({"plan_tes": {}}, ["plan_test"], registry=REGISTRY)
    with pytest.raises(
        RecipeError,
        match=r"plan_test: expected a dict of options or a "
        r"PlanOptions; got 3",
    ):
        validate_step_options({"plan_test": 3}, ["plan_test"], registry=REGISTRY)


def test_error_list_is_capped():
    from geomet.recipe.loader import RecipeProblem, raise_recipe_problems

    problems = [RecipeProblem(f"k{i}", "bad") for i in range(60)]
    with pytest.raises(RecipeError, match=r"x has 60 problems:(.|\n)*\.\.\. and 10 more$"):
        raise_recipe_problems(problems, "x")


# --- explain ---------------------------------------------------------------------------------
def test_explain_lists_every_option_with_type_default_allowed_and_description():
    docs = section_docs(registry=REGISTRY)
    names = [d.name for d in docs]
    assert names == ["run", "inputs", "detection", "plan_test"]
    plan = {o.key: o for o in docs[-1].options}
    assert set(plan) == {"plan_test.solver", "plan_test.periods", "plan_test.mill.clay_max_pct"}
    assert plan["plan_test.solver"].allowed == ('"highs"', '"simplex"')
    assert plan["plan_test.solver"].default == '"highs"'
    assert plan["plan_test.periods"].type == "integer"
    assert plan["plan_test.periods"].limits == ">= 1"
    assert plan["plan_test.mill.clay_max_pct"].description == "Most swelling clay in mill feed [%]."
    run = {o.key: o for o in docs[0].options}
    assert run["run.steps"].default == "required"
    assert set(run) == {f"run.{k}" for k in RunSection.model_fields}
    detection = {o.key for o in docs[2].options}
    assert detection == {f"detection.{k}" for k in DetectionSection.model_fields}


def test_explain_text_and_narrowing():
    text = explain("plan_test", registry=REGISTRY)
    assert text.startswith("[plan_test]\n  Plan the feed. Needs: blocks. Produces: plan_table.")
    assert "  plan_test.mill.clay_max_pct\n      type: number; default: 6.0; limits: >= 0.0" in text
    narrowed = section_docs("plan_test.mill", registry=REGISTRY)
    assert [o.key for o in narrowed[0].options] == ["plan_test.mill.clay_max_pct"]
    assert "[inputs.<table>]" in explain(registry=REGISTRY)


def test_explain_unknown_section_and_key():
    with pytest.raises(
        RecipeError,
        match=r"unknown recipe section 'detektion'; did you mean "
        r"'detection'\?; sections: run, inputs, detection",
    ):
        section_docs("detektion", registry=REGISTRY)
    with pytest.raises(
        RecipeError,
        match=r"section \[plan_test\] has no option "
        r"'plan_test.perods'; did you mean 'plan_test.periods'",
    ):
        section_docs("plan_test.perods", registry=REGISTRY)


def test_explain_covers_registered_steps():
    from geomet.run.registry import load_steps

    docs = {d.name: d for d in section_docs()}
    for name, step in load_steps().items():
        assert name in docs
        for field in step.options.model_fields:
            assert any(o.key.startswith(f"{name}.{field}") for o in docs[name].options)


@pytest.mark.parametrize(
    ("annotation", "expected"),
    [
        (int, "integer"),
        (float, "number"),
        (bool, "true/false"),
        (str, "text"),
        (list[str], "list of text"),
        (dict[str, float], "table text -> number"),
        (str | None, "text (optional)"),
        (Literal["a", "b"], "text"),
        (tuple[float, ...], "list of number"),
    ],
)
def test_type_names(annotation, expected):
    assert type_name(annotation) == expected


def test_toml_values_and_allowed():
    # Rendered as TOML 1.0 writes them (toml.io spec: lowercase booleans, double-quoted strings).
    assert toml_value(True) == "true"
    assert toml_value("a b") == '"a b"'
    assert toml_value([1, "x"]) == '[1, "x"]'
    assert toml_value({"Cu_%": "cu_pct"}) == '{ "Cu_%" = "cu_pct" }'
    assert tomllib.loads("x = " + toml_value({"Cu_%": "cu_pct", "a": [1.5, True]})) == {
        "x": {"Cu_%": "cu_pct", "a": [1.5, True]}
    }
    assert allowed_values(dict[str, Literal["below_detection", "missing"]] | None) == (
        '"below_detection"',
        '"missing"',
    )


class Threshold(BaseModel):
    model_config = {"extra": "forbid"}
    alert: float = Field(5.0, description="Alert level.")


class Scenario(BaseModel):
    model_config = {"extra": "forbid"}
    name: str = Field(..., min_length=1, description="Scenario name.")


class WatchOptions(StepOptions):
    thresholds: dict[str, Threshold] = Field(default_factory=dict, description="By flag.")
    scenarios: list[Scenario] = Field(default_factory=list, description="Variants.")


WATCH = {
    "watch_test": Step(
        name="watch_test", func=_plan, options=WatchOptions, needs=(), produces={}, summary="Watch."
    ),
}


def test_models_inside_tables_and_lists_are_explained_and_checked(tmp_path):
    docs = {o.key: o for o in section_docs("watch_test", registry=WATCH)[0].options}
    assert docs["watch_test.thresholds"].type == "table text -> section"
    assert docs["watch_test.thresholds.<name>.alert"].default == "5.0"
    assert docs["watch_test.scenarios[].name"].limits == "at least 1 character(s)"
    assert [o.key for o in section_docs("watch_test.scenarios", registry=WATCH)[0].options] == [
        "watch_test.scenarios",
        "watch_test.scenarios[].name",
    ]
    text = (
        '[run]\nsteps = ["watch_test"]\n[watch_test.thresholds.clay]\nalret = 3\n'
        '[[watch_test.scenarios]]\nnmae = "x"\n'
    )
    with pytest.raises(RecipeError) as info:
        parse(text, tmp_path, registry=WATCH)
    message = str(info.value)
    assert "watch_test.thresholds.clay.alret: unknown key; did you mean 'alert'?" in message
    assert "watch_test.scenarios.0.nmae: unknown key; did you mean 'name'?" in message
    assert "watch_test.scenarios.0.name: required, but not given" in message


def test_inputs_shape_errors(tmp_path):
    with pytest.raises(RecipeError) as info:
        parse('inputs = "blocks.csv"\n[run]\nsteps = ["plan_test"]\n', tmp_path)
    assert "inputs: expected sections [inputs.<table>]; got 'blocks.csv'" in str(info.value)
    with pytest.raises(RecipeError) as info:
        parse('[run]\nsteps = ["plan_test"]\n[inputs]\nblocks = "b.csv"\nzzz = 1\n', tmp_path)
    message = str(info.value)
    assert (
        "inputs.blocks: expected a section [inputs.blocks] with path = ...; got 'b.csv'" in message
    )
    assert "inputs.zzz: unknown input table (known tables: assays, blocks, collars" in message


def test_unknown_key_without_close_match_lists_valid_keys(tmp_path):
    with pytest.raises(
        RecipeError,
        match=r"plan_test\.xyz: unknown key \(valid keys: solver, "
        r"periods, mill\)",
    ):
        parse('[run]\nsteps = ["plan_test"]\n[plan_test]\nxyz = 1\n', tmp_path)


def test_template_is_a_recipe_whose_commented_defaults_are_the_defaults(tmp_path):
    import re

    from geomet.recipe.explain import template
    from geomet.run.pipeline import order_steps
    from geomet.run.registry import load_steps

    text = template()
    recipe = parse_recipe(text, base_dir=tmp_path, source="template")  # valid as it is
    steps = load_steps()
    assert recipe.run.steps == [s.name for s in order_steps(list(steps), steps)]
    # Un-comment every option line after [detection]: the values written are the defaults.
    head, tail = text.split("[detection]", 1)
    tail, count = re.subn(r"(?m)^# ([A-Za-z_][\w.]* = )", r"\1", tail)
    assert count > 20
    full = parse_recipe(head + "[detection]" + tail, base_dir=tmp_path, source="template")
    assert full.detection == recipe.detection
    assert set(full.options) == set(recipe.options) == set(steps)
    for name in steps:
        assert full.options[name].model_dump() == recipe.options[name].model_dump()


def test_template_of_a_small_registry(tmp_path):
    from geomet.recipe.explain import template

    text = template(registry=REGISTRY)
    assert "[plan_test]\n" in text
    assert '# solver = "highs"' in text
    assert "# mill.clay_max_pct = 6.0" in text
    assert tomllib.loads(text)["run"]["steps"] == ["plan_test"]


def test_sheets_must_be_tables_the_steps_produce(tmp_path):
    path = write_recipe(tmp_path, extra="")
    path.write_text(
        path.read_text().replace(
            'workbook = "vellantra_test.xlsx"', 'workbook = "v.xlsx"\nsheets = ["composite"]'
        )
    )
    with pytest.raises(
        RecipeError,
        match=r"run\.sheets: table 'composite' is not produced by the "
        r"steps in run\.steps; did you mean 'composites'\? \(they "
        r"produce: validation_report, composites\)",
    ):
        load_recipe(path)


def test_units_the_reader_cannot_convert_are_recipe_errors(tmp_path):
    path = write_recipe(tmp_path)
    path.write_text(
        path.read_text().replace(
            'units = { au_gpt = "ppb" }', 'units = { au_gpt = "ppbb", hole_id = "m" }'
        )
    )
    with pytest.raises(RecipeError) as info:
        load_recipe(path)
    message = str(info.value)
    assert "inputs.assays.units.au_gpt: got 'ppbb'; cannot convert unit 'ppbb' to 'g/t'" in message
    assert "inputs.assays.units.hole_id: column 'hole_id' has no unit suffix" in message


def test_misspelt_column_map_target_is_caught(tmp_path):
    path = write_recipe(tmp_path)
    path.write_text(path.read_text().replace('"Cu_%" = "cu_pct"', '"Cu_%" = "cu_ptc"'))
    with pytest.raises(
        RecipeError,
        match=r"inputs\.assays\.columns: maps 'Cu_%' to 'cu_ptc', "
        r"which is not a canonical column; did you mean "
        r"'cu_pct'\?",
    ):
        load_recipe(path)
    # A new column that carries a unit suffix is the user's own, not a misspelling.
    path.write_text(path.read_text().replace('"cu_ptc"', '"cu_fire_assay_pct"'))
    assert load_recipe(path).inputs["assays"].columns["Cu_%"] == "cu_fire_assay_pct"


def test_missing_run_section_is_one_problem(tmp_path):
    with pytest.raises(RecipeError) as info:
        parse('[detection]\nrule = "zero"\n', tmp_path)
    assert info.value.problems == [
        RecipeProblem("run", "missing section [run] (it gives at least steps = [...])")
    ]
