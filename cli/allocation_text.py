"""`--budget` and the allocation lines of `rangefold report`: the chance of the base
estimate and of each budget, and where the contingency sits at each level, by group."""

from __future__ import annotations

import argparse
from collections.abc import Sequence
from typing import TextIO

from charts import numbers
from engine import Analysis
from engine.allocation import NOT_A_SUM, Allocation
from engine.allocation.confidence import confidence_of


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


def print_schedule_budgets(analysis: Analysis, budgets: Sequence[float], unit: str, out: TextIO):
    """A schedule is not shared out (engine.allocation.NOT_A_SUM), but the budgets typed
    still get their chance: nothing the user asked for is dropped silently."""
    decimals = numbers.decimals_for([analysis.base_estimate])
    for amount in budgets:
        said = confidence_of(analysis.total, amount, analysis.base_estimate, "budget")
        print(
            f"chance the finish stays within the budget {numbers.money(amount, unit, decimals)}:"
            f" {numbers.percent(said.probability)}",
            file=out,
        )
    print(NOT_A_SUM, file=out)


def print_allocation(allocation: Allocation, unit: str, out: TextIO) -> None:
    levels = allocation.levels
    said = [allocation.base_confidence, *allocation.budgets]
    # The total's decimals for every amount, as in the level table printed above.
    decimals = numbers.decimals_for([allocation.base_confidence.amount])
    for c in said:
        error = "" if c.standard_error is None else f" (± {numbers.percent(c.standard_error, 2)})"
        print(
            f"chance the total stays within the {c.label} {numbers.money(c.amount, unit, decimals)}:"
            f" {numbers.percent(c.probability)}{error}",
            file=out,
        )
    print("contingency by group (conditional expectation / naive):", file=out)
    header = f"{'group':<32}" + "".join(f"{numbers.level(r.level):>24}" for r in levels)
    print(header, file=out)
    for group in levels[0].groups:
        cells = []
        for r in levels:
            naive = (
                "-"
                if r.naive_groups is None
                else numbers.money(r.naive_groups[group], decimals=decimals)
            )
            cells.append(f"{numbers.money(r.groups[group], decimals=decimals):>12} /{naive:>10}")
        print(f"{group[:32]:<32}" + "".join(f"{c:>24}" for c in cells), file=out)
    for r in levels:
        print(r.note, file=out)
