"""Line items as the analyst states them, and the problems found in them.

A `LineItem` keeps what the user typed or imported (numbers where they parsed, the original
text where they did not), so that a row with a mistake is never dropped: it stays in the
estimate as a draft, with its problems listed, until it is fixed.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

FAMILIES = ("fixed", "uniform", "triangular", "pert", "normal", "lognormal", "discrete")

# Column names of the CSV template, in order; also the fields a problem can point at.
COLUMNS = (
    "Item",
    "Distribution",
    "Low",
    "Most likely",
    "High",
    "Low %",
    "High %",
    "Probability",
    "Group",
    "Path",
)


@dataclass(frozen=True)
class Problem:
    """Something in the input that stops an item from being used, and how to fix it."""

    message: str
    fix: str
    item: str = ""
    row: int | None = None
    column: str | None = None
    sheet: str | None = None

    def __str__(self) -> str:
        where = []
        if self.sheet:
            where.append(f"sheet {self.sheet!r}")
        if self.row is not None:
            where.append(f"row {self.row}")
        if self.column:
            where.append(f"column {self.column!r}")
        if self.item:
            where.append(f"item {self.item!r}")
        place = ", ".join(where)
        return (
            f"{place}: {self.message} Fix: {self.fix}"
            if place
            else f"{self.message} Fix: {self.fix}"
        )

    def to_dict(self) -> dict[str, Any]:
        return {
            "sheet": self.sheet,
            "row": self.row,
            "column": self.column,
            "item": self.item,
            "message": self.message,
            "fix": self.fix,
        }


class InputError(ValueError):
    """Raised when an estimate with problems is analysed; carries every problem."""

    def __init__(self, problems: list[Problem]):
        self.problems = list(problems)
        lines = "\n".join(f"  - {p}" for p in self.problems)
        super().__init__(f"{len(self.problems)} problem(s) in the estimate:\n{lines}")


@dataclass(frozen=True)
class LineItem:
    """One row of the estimate.

    `probability` below 1 makes the item a risk event: with probability 1 - p it costs 0.
    `values` holds (value, weight) pairs for the discrete family. `raw` keeps the original
    text of any cell that could not be read as a number, keyed by column name, so the
    user sees what they typed next to the message.
    """

    name: str
    family: str = "triangular"
    low: float | None = None
    most_likely: float | None = None
    high: float | None = None
    low_pct: float | None = None
    high_pct: float | None = None
    probability: float = 1.0
    group: str = ""
    shape: float = 4.0
    values: tuple[tuple[float, float], ...] = ()
    row: int | None = None
    # Where the item was read from (a workbook's sheet), for messages and provenance.
    sheet: str | None = None
    # Schedule paths the activity lies on (durations only); none means the one default path.
    paths: tuple[str, ...] = ()
    # Columns of the source that no field took (Notes, Basis, Ref...), kept by header.
    notes: dict[str, str] = field(default_factory=dict, compare=False, hash=False)
    raw: dict[str, str] = field(default_factory=dict, compare=False, hash=False)
    read_problems: tuple[Problem, ...] = field(default=(), compare=False, hash=False)

    @property
    def is_risk_event(self) -> bool:
        return self.probability < 1.0

    def with_changes(self, **changes: Any) -> LineItem:
        return replace(self, **changes)


@dataclass(frozen=True)
class CorrelationPair:
    """A rank (Spearman) correlation the analyst states between two items, by name."""

    item_a: str
    item_b: str
    coefficient: float
    row: int | None = None


@dataclass
class CorrelationSpec:
    """How the analyst states dependence: named pairs, a coefficient shared by all items of
    a group, and a default for every other pair (0 unless set). All are rank correlations;
    a pair's coefficient wins over its group's, a group's over the default
    (engine.dependence.correlation)."""

    pairs: list[CorrelationPair] = field(default_factory=list)
    groups: dict[str, float] = field(default_factory=dict)
    default: float = 0.0
    # A stated matrix that is not a valid correlation matrix is repaired (nearest valid one)
    # only once the user has seen the repair and accepted it.
    accept_repair: bool = False

    @property
    def is_independent(self) -> bool:
        return (
            self.default == 0
            and all(p.coefficient == 0 for p in self.pairs)
            and all(c == 0 for c in self.groups.values())
        )


@dataclass
class Estimate:
    """The estimate: its line items (drafts included) and what is known about where it came from."""

    items: list[LineItem] = field(default_factory=list)
    title: str = ""
    unit: str = ""
    source: str = ""
    read_problems: list[Problem] = field(default_factory=list)
    summary: dict[str, Any] = field(default_factory=dict)
    correlation: CorrelationSpec = field(default_factory=CorrelationSpec)

    @property
    def problems(self) -> list[Problem]:
        """Every problem: those found while reading, then those found validating each item,
        then those in the stated correlations."""
        from engine.dependence.correlation import spec_problems
        from engine.validation import item_problems

        found = list(self.read_problems)
        for item in self.items:
            found.extend(item.read_problems)
            if not item.read_problems:
                found.extend(item_problems(item))
        found.extend(spec_problems(self))
        return found

    def valid_items(self) -> list[LineItem]:
        from engine.validation import item_problems

        return [i for i in self.items if not i.read_problems and not item_problems(i)]
