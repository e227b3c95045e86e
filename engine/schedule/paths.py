"""The parallel paths an estimate names, read from its items' `paths`.

A cost estimate names none and keeps its meaning (one sum). A schedule names two or more:
each path is the sum of its activities, and the finish is the latest path. Items naming no
path then form one path of their own, so nothing typed is dropped from the finish.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from engine.items import LineItem

NO_PATH = "(no path)"
PATH_SEPARATOR = ";"


def path_names(text: str) -> tuple[str, ...]:
    """'North; South' -> ('North', 'South'): an activity on several paths names each once."""
    names = (part.strip() for part in text.split(PATH_SEPARATOR))
    return tuple(dict.fromkeys(n for n in names if n))


def path_text(paths: Sequence[str]) -> str:
    return f"{PATH_SEPARATOR} ".join(paths)


@dataclass(frozen=True)
class SchedulePath:
    name: str
    members: tuple[int, ...]  # positions of its activities among the estimate's items


def schedule_paths(items: Sequence[LineItem]) -> list[SchedulePath]:
    """The paths in the order first named; empty unless at least two are named."""
    names: dict[str, None] = {}
    for item in items:
        names.update(dict.fromkeys(p for p in item.paths if p))
    if len(names) < 2:
        return []
    paths = [
        SchedulePath(name, tuple(i for i, item in enumerate(items) if name in item.paths))
        for name in names
    ]
    unnamed = tuple(i for i, item in enumerate(items) if not any(item.paths))
    if unnamed:
        paths.append(SchedulePath(NO_PATH, unnamed))
    return paths


def shared_activities(paths: Sequence[SchedulePath]) -> list[int]:
    """Items on two or more paths: they tie those paths together, so the paths are not
    independent and their finish is simulated."""
    seen: dict[int, int] = {}
    for path in paths:
        for i in path.members:
            seen[i] = seen.get(i, 0) + 1
    return sorted(i for i, count in seen.items() if count > 1)
