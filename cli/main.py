"""`rangefold report|check|gui`: exit 0 when all went well, 2 for problems in the input or the
options (listed on stderr, one line each). Never a traceback: the user gets a message
saying what to fix."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from dataclasses import replace
from pathlib import Path
from typing import TextIO

from charts.numbers import count
from cli.allocation_text import (
    add_budget_option,
    parse_budgets,
    print_allocation,
    print_schedule_budgets,
)
from cli.compare import add_compare_parser, compare_command
from engine import Estimate, InputError, Settings, analyze
from engine.allocation import allocate, shares_add_up
from engine.settings_check import settings_problems

OK, INTERNAL_ERROR, INPUT_PROBLEM = 0, 1, 2
GUIDE_POINTER = (
    "What each figure means, how to read the verdict, the input formats and the limits: "
    "the user guide, docs/user_guide.md (also under Help > User guide in the window)."
)


class UsageProblem(Exception):
    """An option the user gave cannot be used; the message says how to fix it."""


class OneLineParser(argparse.ArgumentParser):
    """argparse, but a usage error becomes one line on stderr instead of a usage block."""

    def error(self, message: str):
        raise UsageProblem(f"{self.prog}: {message}. Fix: see '{self.prog} --help'.")


def add_analysis_options(parser: argparse.ArgumentParser) -> None:
    """The settings an analysis takes, shared by `report` and `compare`."""
    parser.add_argument("--levels", help="confidence levels in percent, e.g. 50,80,90")
    parser.add_argument("--method", choices=("auto", "exact", "simulation"))
    parser.add_argument("--trials", type=int, help="simulation trials (default 100000)")
    parser.add_argument("--seed", type=int, help="simulation seed")
    parser.add_argument("--tolerance", type=float, help="verdict tolerance, e.g. 0.01 for 1%%")
    parser.add_argument("--sampling", choices=("lhs", "random"))
    parser.add_argument("--paper", choices=("a4", "letter"), default="a4", help="PDF paper")
    parser.add_argument(
        "--unit", help="currency or unit of the amounts, e.g. EUR or 'working days'"
    )
    parser.add_argument(
        "--accept-repair",
        action="store_true",
        help="use the nearest valid correlation matrix when the stated one is not valid",
    )


def build_parser() -> argparse.ArgumentParser:
    parser = OneLineParser(
        prog="rangefold",
        description="Totals of uncertain line items beside the normal shortcut, "
        "and a contingency report.",
        epilog=GUIDE_POINTER,
    )
    commands = parser.add_subparsers(dest="command")

    report = commands.add_parser(
        "report", help="analyse an estimate and write the report", epilog=GUIDE_POINTER
    )
    report.add_argument("input", help="estimate: .csv, .tsv, .txt, .xlsx, .xlsm or .rangefold")
    add_sheet_option(report)
    report.add_argument("-o", "--output", help="report file: .xlsx, .pdf or .json")
    report.add_argument("--json", action="store_true", help="print the analysis as JSON")
    report.add_argument("--title", help="the estimate's name in the report (default: the file's)")
    add_analysis_options(report)
    add_budget_option(report)
    add_compare_parser(commands)

    check = commands.add_parser("check", help="validate an estimate and list its problems")
    check.add_argument("input")
    add_sheet_option(check)

    gui = commands.add_parser("gui", help="open the window")
    gui.add_argument("file", nargs="?")
    gui.add_argument("--screenshot", help="save a PNG of the window and quit")
    add_sheet_option(gui)
    return parser


def add_sheet_option(command: argparse.ArgumentParser) -> None:
    command.add_argument(
        "--sheet",
        action="append",
        metavar="NAME",
        help="workbook sheet to read (repeat for several; 'all' for every sheet of items); "
        "default: the first sheet of items and every risk register",
    )


def main(argv: Sequence[str] | None = None) -> int:
    args_list = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser()
    try:
        args = parser.parse_args(args_list)
    except UsageProblem as bad:
        return _problems([str(bad)], sys.stderr)
    if args.command in (None, "gui"):
        return _gui(
            getattr(args, "file", None),
            getattr(args, "screenshot", None),
            getattr(args, "sheet", None),
        )
    try:
        if args.command == "check":
            return check(Path(args.input), sys.stdout, sys.stderr, args.sheet)
        if args.command == "compare":
            return compare_command(args, sys.stdout, sys.stderr)
        return report(args, sys.stdout, sys.stderr)
    except InputError as bad:
        return _problems([str(p) for p in bad.problems], sys.stderr)
    except (UsageProblem, ValueError, OSError) as bad:
        return _problems([_one_line(bad)], sys.stderr)
    except Exception as bad:  # a defect, not the user's doing: still no traceback
        print(
            f"rangefold: internal error ({type(bad).__name__}: {_one_line(bad)}); "
            "please report it with the input file.",
            file=sys.stderr,
        )
        return INTERNAL_ERROR


def _one_line(error: BaseException) -> str:
    if isinstance(error, OSError) and error.filename:
        return f"{error.filename}: {error.strerror or error}"
    return " ".join(str(error).split())


def _problems(lines: Sequence[str], err: TextIO) -> int:
    for line in lines:
        print(" ".join(line.split()), file=err)
    return INPUT_PROBLEM


def _gui(path: str | None, screenshot: str | None, sheets: list[str] | None = None) -> int:
    from gui.app import run  # lazily: report and check must work without a display

    return run(path, screenshot, sheets)


def read(path: Path, sheets: list[str] | None = None) -> Estimate:
    from fileio.readers import WORKBOOK_SUFFIXES, read_estimate

    if not path.is_file():
        raise UsageProblem(f"{path}: no such file. Check the path and the file name.")
    if sheets and path.suffix.lower() not in WORKBOOK_SUFFIXES:
        raise UsageProblem(f"--sheet: {path.name} is not a workbook. Fix: leave --sheet out.")
    return read_estimate(path, sheet=sheets)


def check(path: Path, out: TextIO, err: TextIO, sheets: list[str] | None = None) -> int:
    """Print the import summary; list every problem on stderr (exit 2 if there are any)."""
    from fileio.import_summary import summary_lines

    estimate = read(path, sheets)
    print(f"{path.name}: {count(len(estimate.items), 'line item')}", file=out)
    for line in summary_lines(estimate.summary):
        print(f"  {line}", file=out)
    problems = [str(p) for p in estimate.problems] + _correlation_problems(estimate)
    problems += [str(p) for p in settings_problems(estimate, stored_settings(estimate))]
    if problems:
        print(f"  {count(len(problems), 'problem')}, listed on stderr", file=out)
        return _problems(problems, err)
    print("  no problems found", file=out)
    return OK


def _correlation_problems(estimate: Estimate) -> list[str]:
    """A stated matrix that contradicts itself is a problem until its repair is accepted."""
    from engine.dependence.correlation import repair_preview

    if estimate.correlation.is_independent or estimate.correlation.accept_repair:
        return []
    preview = repair_preview(estimate)
    if preview is None:
        return []
    return [preview.message() + " Fix: correct the coefficients, or accept the repair."]


def stored_settings(estimate: Estimate) -> Settings:
    """A project file's settings, or the defaults for a spreadsheet."""
    base = estimate.summary.get("settings")
    return base if isinstance(base, Settings) else Settings(unit=estimate.unit)


def settings_for(args: argparse.Namespace, estimate: Estimate) -> Settings:
    """The project file's settings (or the defaults), overridden by the options given."""
    settings = stored_settings(estimate)
    changes = {
        name: getattr(args, name)
        for name in ("method", "trials", "seed", "tolerance", "sampling", "unit")
        if getattr(args, name, None) is not None
    }
    if args.levels:
        changes["levels"] = parse_levels(args.levels)
    return replace(settings, **changes)


def parse_levels(text: str) -> tuple[float, ...]:
    try:
        levels = tuple(float(part) for part in text.replace(";", ",").split(",") if part.strip())
    except ValueError:
        raise UsageProblem(
            f"--levels {text!r} is not a list of numbers. Fix: write them like 50,80,90."
        ) from None
    if not levels:
        raise UsageProblem("--levels is empty. Fix: write them like 50,80,90.")
    return levels


def report(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    path = Path(args.input)
    if args.output:
        from fileio.output_guard import refuse_overwriting_inputs

        refuse_overwriting_inputs(args.output, [path])
    estimate = read(path, args.sheet)
    if args.accept_repair:
        estimate.correlation.accept_repair = True
    if args.title is not None:
        estimate.title = args.title
    settings = settings_for(args, estimate)
    budgets = parse_budgets(args.budget)
    unusable = estimate.problems + settings_problems(estimate, settings)
    if unusable:
        raise InputError(unusable)
    analysis = analyze(estimate, **settings.analyze_kwargs())
    allocation = allocate(estimate, analysis, budgets=budgets) if shares_add_up(analysis) else None
    if allocation is None and budgets:
        unit = settings.unit or estimate.unit
        print_schedule_budgets(analysis, budgets, unit, err if args.json else out)
    if args.output:
        from reports import write_report

        written = write_report(
            args.output,
            estimate,
            analysis,
            settings,
            source_path=path,
            paper=args.paper,
            allocation=allocation,
        )
        print(f"report written: {written}", file=err if args.json else out)
    if args.json:
        from reports.json_report import dumps
        from reports.provenance import provenance

        print(dumps(analysis, provenance(estimate, settings, path), allocation), file=out)
    elif not args.output:
        from fileio.import_summary import brief_lines

        for line in brief_lines(estimate.summary):
            print(line, file=out)
        print_summary(analysis, settings.unit or estimate.unit, out, allocation)
    return OK


def print_summary(analysis, unit: str, out: TextIO, allocation=None) -> None:
    """The levels as a terminal table, for a quick look without writing a file."""
    from charts import numbers
    from reports.caution import CAUTION, NORMAL_SHORTCUT_GLOSS

    print(analysis.summary, file=out)
    print(f"method: {analysis.method} ({analysis.method_reason})", file=out)
    print(f"base estimate: {numbers.compact(analysis.base_estimate, unit)}", file=out)
    figures = [v for r in analysis.levels for v in (r.value, r.contingency, r.normal)]
    decimals = numbers.decimals_for(figures)
    header = (
        f"{'level':>6} {'total':>14} {'contingency':>14} {'normal shortcut':>16} "
        f"{'gap %':>7}  verdict"
    )
    print(header, file=out)
    for r in analysis.levels:
        total, contingency, normal = (
            numbers.money(v, decimals=decimals) for v in (r.value, r.contingency, r.normal)
        )
        gap = numbers.percent(r.gap_pct / 100, sign=True)
        print(
            f"{numbers.level(r.level):>6} {total:>14} {contingency:>14} {normal:>16} "
            f"{gap:>7}  {r.verdict}",
            file=out,
        )
    print(NORMAL_SHORTCUT_GLOSS, file=out)
    if allocation is not None:
        print_allocation(allocation, unit, out)
    print(CAUTION, file=out)
