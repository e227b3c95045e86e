"""`--budget` and the allocation lines of `rangefold report`: the chance of the base
estimate and of each budget, and where the contingency sits at each level, by group."""

from __future__ import annotations

import argparse
from collections.abc import Sequence
from typing import TextIO

from engine.allocation import Allocation


def add_budget_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--budget",
        action="append",
        metavar="AMOUNT",
        help="a budget to give the confidence level of, e.g. 15.2M or 15,200,000 (repeat for more)",
    )


def parse_budgets(texts: Sequence[str] | None) -> list[float]:
    """Amounts as an estimator types them; a bad one is a usage problem naming the fix."""
    from cli.main import UsageProblem
    from fileio.cells import CellError, parse_number

    amounts = []
    for text in texts or ():
        try:
            amounts.append(parse_number(text))
        except CellError as bad:
            raise UsageProblem(f"--budget {text!r}: {bad.message} Fix: {bad.fix}") from None
    return amounts


def print_allocation(allocation: Allocation, unit: str, out: TextIO) -> None:
    money = f" {unit}" if unit else ""
    for c in [allocation.base_confidence, *allocation.budgets]:
        error = "" if c.standard_error is None else f" (± {100 * c.standard_error:.2f}%)"
        print(
            f"chance the total stays within the {c.label} {c.amount:,.0f}{money}:"
            f" {100 * c.probability:.1f}%{error}",
            file=out,
        )
    levels = allocation.levels
    print("contingency by group (conditional expectation / naive):", file=out)
    header = f"{'group':<32}" + "".join(f"{'P' + format(r.level, 'g'):>24}" for r in levels)
    print(header, file=out)
    for group in levels[0].groups:
        cells = []
        for r in levels:
            naive = "-" if r.naive_groups is None else f"{r.naive_groups[group]:,.0f}"
            cells.append(f"{r.groups[group]:>12,.0f} /{naive:>10}")
        print(f"{group[:32]:<32}" + "".join(f"{c:>24}" for c in cells), file=out)
    for r in levels:
        print(r.note, file=out)
