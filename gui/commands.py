"""Edits of the item list as small command objects, each returning its inverse.

Qt-free (engine only) so undo and redo can be tested without a window; gui.undo wraps them
in QUndoCommand. Applying a command mutates the list in place and returns the command that
takes it back, so undo is `inverse.apply(items)` and redo is applying the inverse's inverse.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Protocol

from engine import LineItem


class Command(Protocol):
    def apply(self, items: list[LineItem]) -> Command: ...


@dataclass(frozen=True)
class ReplaceItems:
    """Put new items at given rows (a cell edit, a paste over rows)."""

    changes: tuple[tuple[int, LineItem], ...]

    def apply(self, items: list[LineItem]) -> ReplaceItems:
        old = tuple((row, items[row]) for row, _ in self.changes)
        for row, item in self.changes:
            items[row] = item
        return ReplaceItems(old)

    @property
    def rows(self) -> list[int]:
        return sorted({row for row, _ in self.changes})


@dataclass(frozen=True)
class InsertItems:
    """Insert items so that each ends at its given row."""

    placed: tuple[tuple[int, LineItem], ...]

    def apply(self, items: list[LineItem]) -> RemoveItems:
        for row, item in sorted(self.placed, key=lambda p: p[0]):
            items.insert(row, item)
        return RemoveItems(tuple(row for row, _ in self.placed))

    @property
    def rows(self) -> list[int]:
        return sorted(row for row, _ in self.placed)


@dataclass(frozen=True)
class RemoveItems:
    rows: tuple[int, ...]

    def apply(self, items: list[LineItem]) -> InsertItems:
        placed = tuple((row, items[row]) for row in sorted(set(self.rows)))
        for row in sorted(set(self.rows), reverse=True):
            del items[row]
        return InsertItems(placed)


@dataclass(frozen=True)
class Reorder:
    """New order of the rows: `order[k]` is the old row that ends at row k."""

    order: tuple[int, ...]

    def apply(self, items: list[LineItem]) -> Reorder:
        old = list(items)
        items[:] = [old[k] for k in self.order]
        inverse = [0] * len(self.order)
        for new, previous in enumerate(self.order):
            inverse[previous] = new
        return Reorder(tuple(inverse))


def append_items(count_now: int, new: Sequence[LineItem], at: int | None = None) -> InsertItems:
    """Insert a block of items at row `at` (the end when None)."""
    start = count_now if at is None else at
    return InsertItems(tuple((start + k, item) for k, item in enumerate(new)))


def duplicate_rows(items: Sequence[LineItem], rows: Sequence[int]) -> InsertItems:
    """Copies of the chosen rows, named as copies, placed after the last chosen row."""
    chosen = sorted(set(rows))
    after = chosen[-1] + 1
    copies = [items[r].with_changes(name=f"{items[r].name} (copy)", row=None) for r in chosen]
    return append_items(len(items), copies, at=after)


def move_rows(count: int, rows: Sequence[int], delta: int) -> Reorder | None:
    """Move the chosen rows up (delta -1) or down (+1) one place; None at the edge."""
    chosen = sorted(set(rows))
    if not chosen or delta not in (-1, 1):
        return None
    if (delta < 0 and chosen[0] == 0) or (delta > 0 and chosen[-1] == count - 1):
        return None
    order = list(range(count))
    for row in chosen if delta < 0 else reversed(chosen):
        order[row], order[row + delta] = order[row + delta], order[row]
    return Reorder(tuple(order))
