"""The ``geomet`` command, called through ``main([...])``."""

from __future__ import annotations

import hashlib

import openpyxl
import pandas as pd
import pytest
from run_fixtures import lab_assays, write_recipe

from geomet.cli import EPILOG, build_parser, format_report, main
from geomet.run.registry import load_steps


def test_help_lists_commands_and_examples(capsys):
    with pytest.raises(SystemExit) as info:
        main(["--help"])
    assert info.value.code == 0
    out = capsys.readouterr().out
    for command in ("run", "check", "composite", "demo", "recipe", "steps"):
        assert command in out
    assert "examples:" in out
    assert "geomet run recipes/demo.toml" in out
    assert EPILOG.splitlines()[0] in out


def test_each_subcommand_has_help(capsys):
    parser = build_parser()
    for command in ("run", "check", "composite", "demo", "recipe", "steps"):
        with pytest.raises(SystemExit):
            parser.parse_args([command, "--help"])
        assert "example" in capsys.readouterr().out or command == "steps"


def test_no_command_prints_help(capsys):
    assert main([]) == 0
    assert "usage: geomet" in capsys.readouterr().out


def test_steps_lists_needs_and_produces(capsys):
    assert main(["steps"]) == 0
    out = capsys.readouterr().out
    for name, step in load_steps().items():
        assert f"{name}: " in out
        for table in step.produces:
            assert table in out


def test_recipe_explain(capsys):
    assert main(["recipe", "--explain", "composite"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("[composite]")
    assert "composite.length_m" in out
    assert "default: 2.0" in out
    assert main(["recipe", "--explain"]) == 0
    assert "[run]" in capsys.readouterr().out


def test_recipe_explain_unknown_section_exits_2(capsys):
    assert main(["recipe", "--explain", "compsite"]) == 2
    err = capsys.readouterr().err
    assert err.startswith(
        "geomet: error: unknown recipe section 'compsite'; did you mean 'composite'?"
    )
    assert "Traceback" not in err


def test_recipe_validate(tmp_path, capsys):
    path = write_recipe(tmp_path)
    assert main(["recipe", "--validate", str(path)]) == 0
    assert (
        "valid; steps: check, composite; inputs: collars, surveys, assays"
        in capsys.readouterr().out
    )


def test_run_writes_the_output_folder(tmp_path, capsys):
    path = write_recipe(tmp_path)
    assert main(["run", str(path), "--out", str(tmp_path / "res"), "--quiet"]) == 0
    assert capsys.readouterr().out == ""
    wb = openpyxl.load_workbook(tmp_path / "res" / "vellantra_test.xlsx")
    assert wb.sheetnames[:3] == ["About this run", "Validation report", "Composites"]
    ws = wb["Composites"]
    table = pd.read_csv(tmp_path / "res" / "tables" / "composites.csv")
    assert [c.value for c in ws[3]] == list(table.columns)
    assert [c.value for c in ws[4]][:4] == ["-", "m", "m", "m"]
    values = [c.value for c in ws[5]]
    assert values[7] == pytest.approx(table["cu_pct"].iloc[0])


def test_run_messages_when_not_quiet(tmp_path, capsys):
    path = write_recipe(tmp_path)
    assert main(["run", str(path)]) == 0
    captured = capsys.readouterr()
    assert "Wrote " in captured.out
    assert "composites: 14 rows" in captured.out
    assert "geomet: step 2/2 composite: started" in captured.err


def test_recipe_error_exits_2_without_traceback(tmp_path, capsys):
    path = write_recipe(tmp_path)
    path.write_text(path.read_text().replace("length_m = 4.0", "lenght_m = 4.0"))
    assert main(["run", str(path)]) == 2
    err = capsys.readouterr().err
    assert (
        "geomet: error: test.toml has 1 problem:\n  - composite.lenght_m: unknown key; did "
        "you mean 'length_m'?" in err
    )
    assert "Traceback" not in err
    assert not (tmp_path / "out").exists()


def _plant_errors(tmp_path):
    bad = lab_assays()
    bad.loc[4, "To"] = bad.loc[4, "From"]  # from_m = to_m: data row 5 is file line 6
    bad.to_csv(tmp_path / "data" / "assays.csv", index=False)


def test_check_reports_by_file_and_line_and_exits_1(tmp_path, capsys):
    path = write_recipe(tmp_path)
    assert main(["check", str(path)]) == 0
    assert "No problems found." in capsys.readouterr().out
    _plant_errors(tmp_path)
    before = hashlib.sha256((tmp_path / "data" / "assays.csv").read_bytes()).hexdigest()
    assert main(["check", str(path)]) == 1
    out = capsys.readouterr().out
    assert "assays.csv (assays): " in out
    assert "line 6  error" in out
    assert out.rstrip().splitlines()[-1].endswith("in 1 file.")
    assert before == hashlib.sha256((tmp_path / "data" / "assays.csv").read_bytes()).hexdigest()
    assert not (tmp_path / "out").exists()


def test_run_with_data_errors_exits_2(tmp_path, capsys):
    path = write_recipe(tmp_path)
    _plant_errors(tmp_path)
    assert main(["run", str(path), "--quiet"]) == 2
    assert "geomet: error: input tables have" in capsys.readouterr().err


def test_format_report_groups_and_counts():
    report = pd.DataFrame(
        {
            "severity": ["error", "warning", "error"],
            "rule": ["a", "b", "c"],
            "message": ["bad from", "gap", "no collar"],
            "table": ["assays", "assays", "scan"],
            "file": ["assays.csv", "assays.csv", ""],
            "line": [12, None, 3],
        }
    )
    text, errors = format_report(report, max_lines=1)
    assert errors == 2
    assert text.splitlines()[:3] == [
        "assays.csv (assays): 1 error, 1 warning",
        "      line 12  error    bad from",
        "  ... and 1 more in this file",
    ]
    assert "scan: 1 error, 0 warnings" in text
    assert text.endswith("2 errors, 1 warning in 2 files.")
    assert format_report(pd.DataFrame(), max_lines=5) == ("No problems found.", 0)
    text, errors = format_report(report, errors_only=True)
    assert errors == 2
    assert "gap" not in text
    assert "assays.csv (assays): 1 error, 1 warning" in text


def test_composite_writes_one_file(tmp_path, capsys):
    path = write_recipe(tmp_path)
    out = tmp_path / "comps.parquet"
    assert main(["composite", str(path), "--out", str(out), "--quiet"]) == 0
    frame = pd.read_parquet(out)
    assert len(frame) == 14
    assert {"x_m", "cu_pct", "coverage_frac"} <= set(frame.columns)
    assert main(["composite", str(path), "--out", str(tmp_path / "c.csv")]) == 0
    assert "Wrote 14 composites" in capsys.readouterr().out
    pd.testing.assert_frame_equal(pd.read_csv(tmp_path / "c.csv"), frame, check_dtype=False)


def test_composite_refuses_other_formats(tmp_path, capsys):
    path = write_recipe(tmp_path)
    assert main(["composite", str(path), "--out", str(tmp_path / "c.xlsx")]) == 2
    assert (
        "geomet: error: --out must end in .csv or .parquet; got 'c.xlsx'" in capsys.readouterr().err
    )


def test_demo_refuses_nonpositive_holes(tmp_path, capsys):
    pytest.importorskip("geomet.io.demo_files")
    assert main(["demo", "--out", str(tmp_path / "d"), "--holes", "0"]) == 2
    assert "--holes must be a positive number of drill holes; got 0" in capsys.readouterr().err


@pytest.mark.slow
def test_demo_writes_files(tmp_path, capsys):
    pytest.importorskip("geomet.io.demo_files")
    assert main(["demo", "--out", str(tmp_path / "d"), "--seed", "3", "--holes", "4"]) == 0
    assert "Wrote the Vellantra demo data set (seed 3)" in capsys.readouterr().out
    assert (tmp_path / "d" / "collars.csv").is_file()
    assert pd.read_csv(tmp_path / "d" / "collars.csv")["hole_id"].nunique() == 4


# --- the bundled demo, end to end ------------------------------------------------------
def _demo_recipe(repo_root):
    import tomllib

    recipe = repo_root / "recipes" / "demo.toml"
    if not (repo_root / "demo_data" / "collars.csv").is_file():
        pytest.skip("demo_data/ is not there")
    wanted = tomllib.loads(recipe.read_text())["run"]["steps"]
    missing = [s for s in wanted if s not in load_steps()]
    if missing:
        pytest.skip(f"steps not registered yet: {', '.join(missing)}")
    return recipe


def test_demo_check_finds_the_planted_errors(repo_root, capsys):
    import json

    recipe = _demo_recipe(repo_root)
    assert main(["check", str(recipe)]) == 1
    out = capsys.readouterr().out
    planted = json.loads((repo_root / "demo_data" / "truth" / "planted_errors.json").read_text())
    for error in planted["planted_errors"]:
        section = out.split(f"{error['file']} (")[1]
        assert f"line {error['line']}  error" in section.split("\n\n")[0]


@pytest.mark.slow
def test_demo_run_end_to_end(repo_root, tmp_path, capsys):
    recipe = _demo_recipe(repo_root)
    out = tmp_path / "demo-run"
    demo_before = {
        p.name: hashlib.sha256(p.read_bytes()).hexdigest()
        for p in (repo_root / "demo_data").glob("*.csv")
    }
    assert main(["run", str(recipe), "--out", str(out), "--quiet"]) == 0
    books = list(out.glob("*.xlsx"))
    assert len(books) == 1
    wb = openpyxl.load_workbook(books[0], read_only=True)
    assert wb.sheetnames[0] == "About this run"
    tables = sorted(p.stem for p in (out / "tables").glob("*.csv"))
    for name in (
        "composites",
        "domain_summary",
        "block_forecasts",
        "blend_schedule",
        "testwork_selection",
        "validation_report",
    ):
        assert name in tables
    ws = wb["Domain summary"]
    header = next(ws.iter_rows(min_row=3, max_row=3, values_only=True))
    assert list(header) == list(pd.read_csv(out / "tables" / "domain_summary.csv").columns)
    wb.close()
    assert (out / "run.log").read_text().count("finished in") >= 8
    assert demo_before == {
        p.name: hashlib.sha256(p.read_bytes()).hexdigest()
        for p in (repo_root / "demo_data").glob("*.csv")
    }


def test_recipe_template_round_trip(tmp_path, capsys):
    assert main(["recipe", "--template"]) == 0
    text = capsys.readouterr().out
    assert text.startswith("# geomet recipe.")
    path = tmp_path / "starter.toml"
    path.write_text(text)
    assert main(["recipe", "--validate", str(path)]) == 0
    assert "valid; steps: check, composite" in capsys.readouterr().out
