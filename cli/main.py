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

from engine import Estimate, InputError, Settings, analyze
from engine.settings_check import settings_problems
from engine.shortcut.verdict import compact

OK, INTERNAL_ERROR, INPUT_PROBLEM = 0, 1, 2


class UsageProblem(Exception):
    """An option the user gave cannot be used; the message says how to fix it."""


class OneLineParser(argparse.ArgumentParser):
    """argparse, but a usage error becomes one line on stderr instead of a usage block."""

    def error(self, message: str):
        raise UsageProblem(f"{self.prog}: {message}. Fix: see '{self.prog} --help'.")


def build_parser() -> argparse.ArgumentParser:
    parser = OneLineParser(
        prog="rangefold",
        description="Totals of uncertain line items beside the normal shortcut, "
        "and a contingency report.",
    )
    commands = parser.add_subparsers(dest="command")

    report = commands.add_parser("report", help="analyse an estimate and write the report")
    report.add_argument("input", help="estimate: .csv, .tsv, .txt, .xlsx, .xlsm or .rangefold")
    report.add_argument("-o", "--output", help="report file: .xlsx, .pdf or .json")
    report.add_argument("--json", action="store_true", help="print the analysis as JSON")
    report.add_argument("--levels", help="confidence levels in percent, e.g. 50,80,90")
    report.add_argument("--method", choices=("auto", "exact", "simulation"))
    report.add_argument("--trials", type=int, help="simulation trials (default 100000)")
    report.add_argument("--seed", type=int, help="simulation seed")
    report.add_argument("--tolerance", type=float, help="verdict tolerance, e.g. 0.01 for 1%%")
    report.add_argument("--sampling", choices=("lhs", "random"))
    report.add_argument("--paper", choices=("a4", "letter"), default="a4", help="PDF paper")
    report.add_argument(
        "--accept-repair",
        action="store_true",
        help="use the nearest valid correlation matrix when the stated one is not valid",
    )

    check = commands.add_parser("check", help="validate an estimate and list its problems")
    check.add_argument("input")

    gui = commands.add_parser("gui", help="open the window")
    gui.add_argument("file", nargs="?")
    gui.add_argument("--screenshot", help="save a PNG of the window and quit")
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    args_list = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser()
    try:
        args = parser.parse_args(args_list)
    except UsageProblem as bad:
        return _problems([str(bad)], sys.stderr)
    if args.command in (None, "gui"):
        return _gui(getattr(args, "file", None), getattr(args, "screenshot", None))
    try:
        if args.command == "check":
            return check(Path(args.input), sys.stdout, sys.stderr)
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


def _gui(path: str | None, screenshot: str | None) -> int:
    from gui.app import run  # lazily: report and check must work without a display

    return run(path, screenshot)


def read(path: Path) -> Estimate:
    from fileio.readers import read_estimate

    if not path.is_file():
        raise UsageProblem(f"{path}: no such file. Check the path and the file name.")
    return read_estimate(path)


def check(path: Path, out: TextIO, err: TextIO) -> int:
    """Print the import summary; list every problem on stderr (exit 2 if there are any)."""
    estimate = read(path)
    summary = estimate.summary
    print(f"{path.name}: {len(estimate.items)} line item(s)", file=out)
    for key, label in (
        ("sheet", "sheet"),
        ("header_row", "header row"),
        ("rows_read", "rows read"),
        ("items_taken", "items taken"),
        ("drafts", "drafts (rows with problems, kept)"),
    ):
        if summary.get(key) is not None:
            print(f"  {label}: {summary[key]}", file=out)
    for skipped in summary.get("rows_skipped", []):
        print(f"  row {skipped['row']} skipped: {skipped['reason']}", file=out)
    problems = [str(p) for p in estimate.problems] + _correlation_problems(estimate)
    problems += [str(p) for p in settings_problems(estimate, stored_settings(estimate))]
    if problems:
        print(f"  {len(problems)} problem(s), listed on stderr", file=out)
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
        for name in ("method", "trials", "seed", "tolerance", "sampling")
        if getattr(args, name) is not None
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
    estimate = read(path)
    if args.accept_repair:
        estimate.correlation.accept_repair = True
    settings = settings_for(args, estimate)
    unusable = estimate.problems + settings_problems(estimate, settings)
    if unusable:
        raise InputError(unusable)
    analysis = analyze(estimate, **settings.analyze_kwargs())
    if args.output:
        from reports import write_report

        written = write_report(
            args.output, estimate, analysis, settings, source_path=path, paper=args.paper
        )
        print(f"report written: {written}", file=err if args.json else out)
    if args.json:
        from reports.json_report import dumps
        from reports.provenance import provenance

        print(dumps(analysis, provenance(estimate, settings, path)), file=out)
    elif not args.output:
        print_summary(analysis, settings.unit or estimate.unit, out)
    return OK


def print_summary(analysis, unit: str, out: TextIO) -> None:
    """The levels as a terminal table, for a quick look without writing a file."""
    from reports.caution import CAUTION

    print(analysis.summary, file=out)
    print(f"method: {analysis.method} ({analysis.method_reason})", file=out)
    print(f"base estimate: {compact(analysis.base_estimate)} {unit}".rstrip(), file=out)
    header = f"{'level':>6} {'total':>12} {'contingency':>12} {'normal':>12} {'gap %':>7}  verdict"
    print(header, file=out)
    for r in analysis.levels:
        print(
            f"{'P' + format(r.level, 'g'):>6} {r.value:>12,.0f} {r.contingency:>12,.0f} "
            f"{r.normal:>12,.0f} {r.gap_pct:>6.1f}%  {r.verdict}",
            file=out,
        )
    print(CAUTION, file=out)
