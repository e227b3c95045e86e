"""Which rows can be analysed, checked once per item and shareable with the recompute worker.

A 100,000-row paste means 100,000 distributions to build before anything can be totalled:
seconds of work. `ItemChecks` caches each item's check by identity (items are frozen; an edit
makes a new object), and `usable_estimate` builds the estimate of usable rows; neither
touches Qt, so the window runs them in the recompute worker when many rows are unchecked.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass, field, replace

from engine import Cancelled, Estimate, LineItem, Problem, build_distribution
from engine.families.distributions import Distribution
from engine.validation import ItemInvalid
from fileio.safety import MAX_ITEM_ROWS
from gui.item_text import EDIT_COLUMNS

# Room for a full estimate and an edited copy of it, so one recompute never evicts itself.
CACHE_LIMIT = 2 * MAX_ITEM_ROWS
CANCEL_EVERY = 1_000  # items checked between looks at the cancel flag


@dataclass(frozen=True)
class ItemCheck:
    """What the table needs to know about one item, computed once."""

    distribution: Distribution | None
    problems: tuple[Problem, ...] = ()
    by_column: dict[str, list[str]] = field(default_factory=dict)


def check_item(item: LineItem) -> ItemCheck:
    problems: tuple[Problem, ...] = tuple(item.read_problems)
    dist = None
    if not problems:
        try:
            dist = build_distribution(item)
        except ItemInvalid as bad:
            problems = tuple(bad.problems)
    by_column: dict[str, list[str]] = {}
    for p in problems:
        column = p.column if p.column in EDIT_COLUMNS else "Item"
        by_column.setdefault(column, []).append(f"{p.message} Fix: {p.fix}")
    return ItemCheck(dist, problems, by_column)


class ItemChecks:
    """Checks by item identity. Read and filled from the GUI thread and the worker: single
    dict reads and writes are atomic in CPython, and a lost entry is only checked again."""

    def __init__(self) -> None:
        self._checks: dict[int, tuple[LineItem, ItemCheck]] = {}

    def __len__(self) -> int:
        return len(self._checks)

    def clear(self) -> None:
        self._checks.clear()

    def of(self, item: LineItem) -> ItemCheck:
        cached = self._checks.get(id(item))
        if cached is not None and cached[0] is item:
            return cached[1]
        if len(self._checks) > CACHE_LIMIT:
            self._checks.clear()
        result = check_item(item)
        self._checks[id(item)] = (item, result)
        return result

    def unchecked(self, items: Iterable[LineItem]) -> int:
        get = self._checks.get
        return sum(1 for i in items if (c := get(id(i))) is None or c[0] is not i)


@dataclass(frozen=True)
class UsableEstimate:
    """The estimate made of the usable rows, and how many rows and pairs were left out."""

    estimate: Estimate
    left_out: int
    pairs_left_out: int


def usable_estimate(
    full: Estimate,
    checks: ItemChecks,
    cancel: Callable[[], bool] = lambda: False,
    progress: Callable[[float], None] = lambda _fraction: None,
) -> UsableEstimate:
    """The estimate of the rows without problems, `full`'s unit and source kept.

    Correlation pairs naming a left-out row are left out with it (and counted in the
    notice); a pair naming no row at all stays, so the engine flags the misspelt name.
    Raises `engine.Cancelled` when `cancel()` turns true."""
    valid = []
    for k, item in enumerate(full.items):
        if k % CANCEL_EVERY == 0:
            if cancel():
                raise Cancelled()
            progress(k / len(full.items))
        if not checks.of(item).problems:
            valid.append(item)
    summary = dict(full.summary)
    left_out = len(full.items) - len(valid)
    summary["drafts"] = left_out
    drafts = {i.name.strip().casefold() for i in full.items} - {
        i.name.strip().casefold() for i in valid
    }
    pairs = [
        p
        for p in full.correlation.pairs
        if not {p.item_a.strip().casefold(), p.item_b.strip().casefold()} & drafts
    ]
    pairs_left_out = len(full.correlation.pairs) - len(pairs)
    correlation = replace(full.correlation, pairs=pairs) if pairs_left_out else full.correlation
    estimate = Estimate(
        items=valid,
        title=full.title,
        unit=full.unit,
        source=full.source,
        read_problems=[],
        summary=summary,
        correlation=correlation,
    )
    return UsableEstimate(estimate, left_out, pairs_left_out)
