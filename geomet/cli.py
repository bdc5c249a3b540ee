"""The ``geomet`` command: a thin layer over :mod:`geomet.run.pipeline` and the public API.

Every geomet error (:class:`geomet.errors.GeometError`) is printed as one clear message, without a
traceback, and the command exits with status 2. ``geomet check`` exits with 1 when the input data
has errors and 0 otherwise.
"""

from __future__ import annotations

import argparse
import contextlib
import logging
import sys
import textwrap
from collections.abc import Sequence
from pathlib import Path

import pandas as pd

import geomet
from geomet.errors import GeometError

EXIT_OK = 0
EXIT_DATA_ERRORS = 1
EXIT_GEOMET_ERROR = 2

DESCRIPTION = """\
geomet turns drill-core data (scanned mineral abundances, multi-element assays) into ore domains,
process forecasts (throughput lost to clay, flotation recovery, acid consumption), blend plans and
testwork selections, and hands the results over as a formatted workbook.

A run is described by a recipe: a TOML file naming the input files, the steps to run and their
options. `geomet recipe --explain` lists every option; `geomet steps` lists the steps."""

EPILOG = """\
examples:
  geomet demo --out vellantra_demo          write the invented Vellantra demo data set
  geomet check recipes/demo.toml            check the input files, report problems by file and line
  geomet run recipes/demo.toml              run every step; results go to the recipe's output folder
  geomet run recipes/demo.toml --out results/june --quiet
  geomet composite recipes/demo.toml --out composites.csv
  geomet recipe --explain composite         every option of the [composite] section
  geomet steps                              the steps a recipe can run, with the tables they use

exit status: 0 success; 1 `geomet check` found errors in the data; 2 a problem with the recipe,
the inputs or a step (the message says which)."""


def _para(text: str) -> str:
    """A help paragraph wrapped to 96 columns (the raw formatter keeps line breaks as given)."""
    return textwrap.fill(text, 96)


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``geomet`` command."""
    parser = argparse.ArgumentParser(
        prog="geomet",
        description=DESCRIPTION,
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"geomet {geomet.__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    run = sub.add_parser(
        "run",
        help="run a recipe and write its output folder",
        description=_para(
            "Read the recipe's input files, run its steps and write the output folder: "
            "the workbook, tables/ (CSV or Parquet copies of every produced table), plots/, "
            "models/, run.log, a copy of the recipe and provenance.json. The folder is "
            "replaced only when the whole run succeeds."
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog="example:\n  geomet run recipes/demo.toml --out results/vellantra_q3",
    )
    run.add_argument("recipe", type=Path, help="recipe file (TOML)")
    run.add_argument("--out", type=Path, help="output folder (default: the recipe's run.output)")
    run.add_argument("--quiet", action="store_true", help="no progress or step messages")
    run.set_defaults(handler=_cmd_run)

    check = sub.add_parser(
        "check",
        help="check the recipe's input files and report every problem",
        description=_para(
            "Read the recipe's input files and run only the check step (with "
            'on_error = "warn"). Problems are printed grouped by file, with line numbers. '
            "Exit status 1 when there are errors, 0 when there are none (warnings allowed)."
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=(
            "examples:\n  geomet check recipes/demo.toml\n"
            "  geomet check recipes/demo.toml --errors-only"
        ),
    )
    check.add_argument("recipe", type=Path, help="recipe file (TOML)")
    check.add_argument(
        "--max-lines",
        type=int,
        default=50,
        metavar="N",
        help="problems shown per file (default 50; all are counted)",
    )
    check.add_argument(
        "--errors-only", action="store_true", help="list errors only (warnings are still counted)"
    )
    check.set_defaults(handler=_cmd_check)

    comp = sub.add_parser(
        "composite",
        help="check and composite the drill-hole data into one file",
        description=_para(
            "Run the check and composite steps of the recipe (with their recipe options) "
            "and write the composites to a .csv or .parquet file."
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog="example:\n  geomet composite recipes/demo.toml --out vellantra_composites.parquet",
    )
    comp.add_argument("recipe", type=Path, help="recipe file (TOML)")
    comp.add_argument("--out", type=Path, required=True, help="output file, .csv or .parquet")
    comp.add_argument("--quiet", action="store_true", help="no progress or step messages")
    comp.set_defaults(handler=_cmd_composite)

    demo = sub.add_parser(
        "demo",
        help="write the invented Vellantra demo data set",
        description=_para(
            "Write the input files of the invented Vellantra porphyry Cu-Au deposit "
            "(Orrin Vale Resources): collars, surveys, assays, scan, lithology, density, "
            "testwork, blocks, schedule and plant limits. Same seed, same files."
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog="example:\n  geomet demo --out vellantra_demo --seed 7 --holes 60",
    )
    demo.add_argument("--out", type=Path, required=True, help="folder to write the files in")
    demo.add_argument(
        "--seed", type=int, default=7, help="random seed (default 7, the bundled demo)"
    )
    demo.add_argument("--holes", type=int, default=None, help="number of drill holes")
    demo.set_defaults(handler=_cmd_demo)

    recipe = sub.add_parser(
        "recipe",
        help="explain the recipe options, write a starter recipe, or validate one",
        description=_para(
            "--explain prints every recipe option: key path, type, default, allowed values and "
            "meaning. Give a section (run, inputs, detection, or a step name) or a key "
            "path inside one (e.g. blend.mill) to narrow the list. --template prints a "
            "starter recipe with every option and its default; --validate checks a recipe "
            "without running it."
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=(
            "examples:\n  geomet recipe --explain\n  geomet recipe --explain detection\n"
            "  geomet recipe --template > vellantra.toml\n"
            "  geomet recipe --validate vellantra.toml"
        ),
    )
    recipe.add_argument(
        "--explain",
        nargs="?",
        const="",
        default=None,
        metavar="SECTION",
        help="section or key path to explain (default: all)",
    )
    recipe.add_argument(
        "--validate", type=Path, metavar="RECIPE", help="validate a recipe file without running it"
    )
    recipe.add_argument(
        "--template", action="store_true", help="print a starter recipe with every option"
    )
    recipe.set_defaults(handler=_cmd_recipe)

    steps = sub.add_parser(
        "steps",
        help="list the registered steps with their needs and products",
        description=_para(
            "List every step a recipe can run, in run order, with the tables it needs and produces."
        ),
    )
    steps.set_defaults(handler=_cmd_steps)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run ``geomet`` with ``argv`` (default: ``sys.argv[1:]``) and return the exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if getattr(args, "handler", None) is None:
        parser.print_help()
        return EXIT_OK
    try:
        return args.handler(args)
    except GeometError as exc:
        print(f"geomet: error: {exc}", file=sys.stderr)
        return EXIT_GEOMET_ERROR
    except KeyboardInterrupt:
        print("geomet: interrupted; nothing was moved into the output folder", file=sys.stderr)
        return 130


# --- commands ------------------------------------------------------------------------------------
@contextlib.contextmanager
def _stderr_messages(quiet: bool):
    """Show the run's step messages on stderr while a command runs (unless quiet)."""
    if quiet:
        yield
        return
    from geomet.run.pipeline import log_to

    with log_to(logging.StreamHandler(sys.stderr), prefix="geomet: "):
        yield


def _cmd_run(args) -> int:
    from geomet.run.pipeline import run_recipe

    show = False if args.quiet else None
    with _stderr_messages(args.quiet):
        result = run_recipe(args.recipe, out=args.out, show_progress=show)
    if not args.quiet:
        print(f"Wrote {result.out_dir}")
        for name, frame in result.outputs.items():
            print(f"  {name}: {len(frame):,} rows")
        if result.warnings:
            print(f"  {len(result.warnings)} warning(s): see {result.out_dir / 'run.log'}")
    return EXIT_OK


def _cmd_check(args) -> int:
    from geomet.recipe import load_recipe
    from geomet.run.pipeline import run_loaded_recipe

    recipe = load_recipe(args.recipe)
    result = run_loaded_recipe(recipe, steps=["check"], overrides={"check": {"on_error": "warn"}})
    report = result.tables.get("validation_report", pd.DataFrame())
    text, errors = format_report(report, max_lines=args.max_lines, errors_only=args.errors_only)
    print(text)
    return EXIT_DATA_ERRORS if errors else EXIT_OK


def format_report(
    report: pd.DataFrame, *, max_lines: int = 50, errors_only: bool = False
) -> tuple[str, int]:
    """The validation report as text grouped by file, and the number of errors in it.

    With ``errors_only`` the warnings are counted but not listed.
    """
    if report is None or report.empty:
        return "No problems found.", 0
    frame = report.copy()
    for col, default in (
        ("file", ""),
        ("table", ""),
        ("severity", "error"),
        ("line", None),
        ("message", ""),
        ("rule", ""),
    ):
        if col not in frame.columns:
            frame[col] = default
    frame["_where"] = frame["file"].fillna("").astype(str)
    empty = frame["_where"] == ""
    frame.loc[empty, "_where"] = frame.loc[empty, "table"].fillna("").astype(str)
    frame.loc[frame["_where"] == "", "_where"] = "(no file)"
    lines = []
    errors = int((frame["severity"] == "error").sum())
    warnings_ = int((frame["severity"] != "error").sum())
    for where, group in frame.groupby("_where", sort=True):
        n_err = int((group["severity"] == "error").sum())
        n_warn = len(group) - n_err
        tables = sorted({str(t) for t in group["table"].dropna() if str(t)})
        label = f"{where} ({', '.join(tables)})" if tables and tables != [where] else where
        lines.append(f"{label}: {_count(n_err, 'error')}, {_count(n_warn, 'warning')}")
        ordered = group.assign(_sev=(group["severity"] != "error").astype(int)).sort_values(
            ["_sev", "line"], kind="stable", na_position="first"
        )
        if errors_only:
            ordered = ordered[ordered["severity"] == "error"]
        for _, row in ordered.head(max_lines).iterrows():
            line = row["line"]
            at = f"line {int(line)}" if pd.notna(line) else "file"
            lines.append(f"  {at:>11}  {row['severity']:<7}  {row['message']}")
        if len(ordered) > max_lines:
            lines.append(f"  ... and {len(ordered) - max_lines} more in this file")
    lines.append("")
    lines.append(
        f"{_count(errors, 'error')}, {_count(warnings_, 'warning')} in "
        f"{_count(frame['_where'].nunique(), 'file')}."
    )
    return "\n".join(lines), errors


def _count(n: int, word: str) -> str:
    return f"{n} {word}{'' if n == 1 else 's'}"


def _cmd_composite(args) -> int:
    from geomet.io.writers import write_table
    from geomet.recipe import load_recipe
    from geomet.run.pipeline import run_loaded_recipe

    suffix = args.out.suffix.lower()
    if suffix not in (".csv", ".parquet"):
        message = f"--out must end in .csv or .parquet; got {args.out.name!r}"
        raise GeometError(message)
    recipe = load_recipe(args.recipe)
    with _stderr_messages(args.quiet):
        result = run_loaded_recipe(
            recipe,
            steps=["check", "composite"],
            show_progress=not args.quiet and sys.stderr.isatty(),
        )
    composites = result.tables["composites"]
    write_table(composites, args.out)
    if not args.quiet:
        print(f"Wrote {len(composites):,} composites to {args.out}")
    return EXIT_OK


def _cmd_demo(args) -> int:
    from geomet.io.demo_files import write_demo

    if args.holes is not None and args.holes < 1:
        message = f"--holes must be a positive number of drill holes; got {args.holes}"
        raise GeometError(message)
    written = write_demo(args.out, seed=args.seed, holes=args.holes)
    print(f"Wrote the Vellantra demo data set (seed {args.seed}) to {args.out}:")
    for name, path in (written or {}).items():
        print(f"  {name}: {path}")
    return EXIT_OK


def _cmd_recipe(args) -> int:
    from geomet.recipe import explain, load_recipe, template

    if args.template:
        print(template(), end="")
        return EXIT_OK
    if args.validate is not None:
        recipe = load_recipe(args.validate)
        print(
            f"{args.validate}: valid; steps: {', '.join(recipe.run.steps)}; inputs: "
            f"{', '.join(recipe.inputs) or 'none'}"
        )
        if args.explain is None:
            return EXIT_OK
    print(explain(args.explain or None), end="")
    return EXIT_OK


def _cmd_steps(args) -> int:
    from geomet.run.pipeline import order_steps
    from geomet.run.registry import load_steps

    registry = load_steps()
    if not registry:
        print("No steps are registered.")
        return EXIT_OK
    for step in order_steps(list(registry), registry):
        print(f"{step.name}: {step.summary}")
        print(f"    needs:    {', '.join(step.needs) or '-'}")
        if step.optional_needs:
            print(f"    optional: {', '.join(step.optional_needs)}")
        print(f"    produces: {', '.join(step.produces) or '-'}")
    return EXIT_OK


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
