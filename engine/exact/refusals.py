"""The exact total, or a refusal naming the items it cannot combine and the way out."""

from __future__ import annotations

from collections.abc import Sequence

from engine.exact.convolution import exact_total
from engine.exact.grid_plan import TooWideForOneGrid
from engine.exact.totals import Cumulants, Total
from engine.families.distributions import Distribution
from engine.items import InputError, LineItem, Problem
from engine.progress import Progress


def exact_total_or_refusal(
    items: Sequence[LineItem],
    dists: Sequence[Distribution],
    progress: Progress,
    cumulants: Cumulants,
    *,
    refuse: bool = True,
) -> Total | str:
    """exact_total; with two items too wide for one grid, an InputError naming them when
    `refuse` (the exact method was chosen), else the reason to simulate instead."""
    try:
        return exact_total(dists, progress=progress, cumulants=cumulants)
    except TooWideForOneGrid as both:
        if not refuse:
            return too_wide_words(items, both) + ", so the total is simulated"
        raise too_wide_refusal(
            items, both, "narrow one of the two ranges, or choose the simulation method."
        ) from None


def too_wide_words(items: Sequence[LineItem], both: TooWideForOneGrid) -> str:
    first, second = items[both.first], items[both.second]
    return (
        f"'{second.name}' and '{first.name}' each spread over more orders of magnitude than"
        " one exact grid can hold with the other beside it"
    )


def too_wide_refusal(items: Sequence[LineItem], both: TooWideForOneGrid, fix: str) -> InputError:
    second = items[both.second]
    return InputError(
        [
            Problem(
                too_wide_words(items, both) + ".",
                fix,
                item=second.name,
                row=second.row,
                column="High",
                sheet=second.sheet,
            )
        ]
    )
