"""`rangefold compare BEFORE AFTER`: two estimates analysed with the same settings and seed,
side by side, as text, JSON or a report file."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import TextIO

from engine import analyze
from engine.allocation import allocate
from engine.comparison import compare


def add_compare_parser(commands) -> None:
    from cli.main import add_analysis_options  # main imports this module: not at the top

    parser = commands.add_parser(
        "compare", help="an estimate before and after a revision, side by side"
    )
    parser.add_argument("before", help="the estimate before (e.g. before a risk response plan)")
    parser.add_argument("after", help="the estimate after")
    parser.add_argument("-o", "--output", help="comparison file: .xlsx, .pdf or .json")
    parser.add_argument("--json", action="store_true", help="print the comparison as JSON")
    add_analysis_options(parser)  # the same settings for both files, the first file's


def compare_command(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    from cli.main import OK, read, settings_for
    from reports.comparison_report import comparison_json, write_comparison
    from reports.provenance import provenance

    paths = (Path(args.before), Path(args.after))
    estimates = [read(p) for p in paths]
    if args.accept_repair:
        for estimate in estimates:
            estimate.correlation.accept_repair = True
    # One set of settings for both, the first file's, so the difference is the revision's.
    settings = settings_for(args, estimates[0])
    analyses = [analyze(e, **settings.analyze_kwargs()) for e in estimates]
    allocations = [allocate(e, a) for e, a in zip(estimates, analyses, strict=True)]
    result = compare(
        estimates[0], analyses[0], allocations[0], estimates[1], analyses[1], allocations[1]
    )
    for estimate, path in zip(estimates, paths, strict=True):
        if not estimate.title:
            estimate.title = path.stem
    result.before_title, result.after_title = estimates[0].title, estimates[1].title
    about = {
        "before": provenance(estimates[0], settings, paths[0]),
        "after": provenance(estimates[1], settings, paths[1]),
    }
    about.update(
        {k: about["before"][k] for k in ("unit", "created", "caution", "rangefold_version")}
    )
    if args.output:
        written = write_comparison(args.output, result, about, paper=args.paper)
        print(f"comparison written: {written}", file=err if args.json else out)
    if args.json:
        print(comparison_json(result, about), file=out)
    elif not args.output:
        print_comparison(result, about["unit"], out)
    return OK


def print_comparison(result, unit: str, out: TextIO) -> None:
    from charts import numbers
    from reports.caution import CAUTION

    print(result.summary, file=out)
    print(
        f"{'level':>6} {'before':>14} {'after':>14} {'difference':>14} {'contingency':>24}",
        file=out,
    )
    decimals = numbers.decimals_for(v for r in result.levels for v in (r.before, r.after))

    def amount(x: float, sign: bool = False) -> str:
        return numbers.money(x, decimals=decimals, sign=sign)

    for r in result.levels:
        print(
            f"{numbers.level(r.level):>6} {amount(r.before):>14} {amount(r.after):>14}"
            f" {amount(r.difference, sign=True):>14} {amount(r.contingency_before):>11}"
            f" → {amount(r.contingency_after)}",
            file=out,
        )
    b, a = result.before_allocation.base_confidence, result.after_allocation.base_confidence
    print(
        f"chance of the base estimate: {numbers.percent(b.probability)} → "
        f"{numbers.percent(a.probability)}",
        file=out,
    )
    for change in result.changes:
        print(f"  {change.kind:<8} {change.name} [{change.group}]: {change.describe()}", file=out)
    print(CAUTION, file=out)
