"""Finding the header row and matching its columns by name, with the trade's synonyms.

Estimates arrive from many templates: a title block above the header, "Optimistic" for Low,
"P90" for a percentile-defined High, a group label merged over two header rows. The guess is
only a starting point: the caller may pass a complete mapping instead.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from engine import COLUMNS

# The engine's columns plus the optional PERT shape.
MAPPABLE = (*COLUMNS, "Shape")
AMOUNT_COLUMNS = ("Low", "Most likely", "High")
HEADER_SEARCH_ROWS = 30

_LOW_WORDS = ("low", "min", "minimum", "optimistic", "lower", "best case")
_HIGH_WORDS = ("high", "max", "maximum", "pessimistic", "upper", "worst case")

# (phrase, exact_only): an exact-only phrase is too common a word ("type", "base") to be
# trusted inside a longer header such as "Cost type".
_SYNONYMS: dict[str, tuple[tuple[str, bool], ...]] = {
    "Item": (
        ("item", False),
        ("line item", False),
        ("description", False),
        ("activity", False),
        ("task", False),
        ("cost item", False),
        ("work item", False),
        ("name", True),
        ("element", True),
        ("risk", True),
    ),
    "Distribution": (
        ("distribution", False),
        ("shape", True),
        ("type", True),
        ("dist", True),
        ("distribution type", False),
    ),
    "Low": (*tuple((w, False) for w in _LOW_WORDS), ("best", True), ("lowest", True)),
    "Most likely": (
        ("most likely", False),
        ("likely", False),
        ("mode", True),
        ("ml", True),
        ("base", True),
        ("base case", False),
        ("most probable", False),
        ("realistic", False),
    ),
    "High": (*tuple((w, False) for w in _HIGH_WORDS), ("worst", True), ("highest", True)),
    "Low %": tuple((f"{w} %", False) for w in _LOW_WORDS)
    + tuple((f"% {w}", False) for w in _LOW_WORDS),
    "High %": tuple((f"{w} %", False) for w in _HIGH_WORDS)
    + tuple((f"% {w}", False) for w in _HIGH_WORDS),
    "Probability": (
        ("probability", False),
        ("chance", False),
        ("likelihood", False),
        ("p occurrence", False),
        ("probability of occurrence", False),
        ("occurrence", False),
        ("prob", True),
        ("pof", True),
    ),
    "Group": (
        ("group", False),
        ("category", False),
        ("wbs", False),
        ("trade", False),
        ("section", True),
        ("discipline", True),
    ),
    # Exact only: "File path" or "On critical path?" in a cost sheet must not make it a schedule.
    "Path": (
        ("path", True),
        ("paths", True),
        ("schedule path", False),
        ("chain", True),
        ("parallel path", False),
    ),
    "Shape": (("pert shape", False), ("shape parameter", False), ("shape factor", False)),
}
# Headers of an identifier column, never the item's description.
_ID_TOKENS = frozenset({"no", "nr", "number", "#", "id", "ref", "code"})
_PERCENT_TOKENS = frozenset({"%", "percent", "pct", "percentage", "percentile"})
_PERCENTILE = re.compile(
    r"(?:\bp\s*(\d{1,2}(?:\.\d+)?)\b|\b(\d{1,2})(?:st|nd|rd|th)\s*percentile)", re.IGNORECASE
)


# The longest text taken for a column name; longer cells above the header (notes, pasted
# paragraphs of 100,000 characters) made the search run its expressions over every one.
MAX_HEADER_CHARS = 200


@dataclass(frozen=True)
class HeaderRow:
    index: int  # 0-based row of the grid
    headers: list[str]  # one unique, non-empty name per column
    mapping: dict[str, str]  # engine column -> header name


def normalise(header: str) -> str:
    """Lower case, punctuation to spaces, `%` and `#` kept as words, percent words as `%`."""
    text = re.sub(r"([%#])", r" \1 ", header.lower())
    tokens = re.sub(r"[^\w%#]+", " ", text).split()
    return " ".join("%" if t in _PERCENT_TOKENS else t for t in tokens)


def header_percentile(header: str) -> float | None:
    """The percentile a header names (`P10`, `Low (P10)`, `90th percentile`), if any."""
    found = _PERCENTILE.search(header)
    if not found:
        return None
    value = float(found.group(1) or found.group(2))
    return value if 0 < value < 100 else None


def says_percent(header: str) -> bool:
    return "%" in normalise(header).split()


def column_letter(index: int) -> str:
    """Spreadsheet letter of a 0-based column (0 -> A, 26 -> AA)."""
    letters = ""
    index += 1
    while index:
        index, rest = divmod(index - 1, 26)
        letters = chr(65 + rest) + letters
    return letters


def unique_headers(texts: Sequence[str]) -> list[str]:
    """Header names to show and map by: blanks named by their letter, repeats made distinct."""
    names: list[str] = []
    seen: set[str] = set()
    for i, text in enumerate(texts):
        if len(text) > MAX_HEADER_CHARS:  # kept short: it is a name, never a figure
            text = text[:MAX_HEADER_CHARS] + "…"
        name = " ".join(text.split()) or f"Column {column_letter(i)}"
        if name.lower() in seen:
            name = f"{name} ({column_letter(i)})"
        seen.add(name.lower())
        names.append(name)
    return names


def guess_mapping(headers: Sequence[str]) -> dict[str, str]:
    """Engine column -> header, each header used once, the best-matching pairs first."""
    candidates = []
    for position, header in enumerate(headers):
        if len(header) > MAX_HEADER_CHARS:
            continue  # a note or pasted text, not a column name: skip the expressions
        for column in MAPPABLE:
            score = _score(column, header)
            if score:
                candidates.append((-score, position, column, header))
    mapping: dict[str, str] = {}
    used: set[str] = set()
    for _, _, column, header in sorted(candidates):
        if column not in mapping and header not in used:
            mapping[column] = header
            used.add(header)
    return mapping


def merge_mapping(
    headers: Sequence[str], guessed: Mapping[str, str], given: Mapping[str, str] | None
) -> dict[str, str]:
    """The caller's mapping when given, else the guess.

    A given mapping is complete: a column it leaves out (or maps to "") is not read, so that
    a column the user set to "not used" in the import dialog stays unread.
    """
    if not given:
        return dict(guessed)
    check_mapping_columns(given)
    by_lower = {h.lower(): h for h in headers}
    chosen: dict[str, str] = {}
    for column, header in given.items():
        if not header.strip():
            continue
        if header.strip().lower() not in by_lower:
            raise ValueError(
                f"the mapping names the header {header!r} for {column!r}, but the table has no "
                f"such header; its headers are: {', '.join(headers)}."
            )
        chosen[column] = by_lower[header.strip().lower()]
    return chosen


def check_mapping_columns(given: Mapping[str, str]) -> None:
    for column in given:
        if column not in MAPPABLE:
            raise ValueError(
                f"{column!r} is not a column Rangefold reads; map one of: {', '.join(MAPPABLE)}."
            )


def find_header(
    grid: Sequence[Sequence[str]], given: Mapping[str, str] | None = None
) -> HeaderRow | None:
    """The row that names the columns, within the first rows; None when no row does.

    A blank header cell takes the text of the cell above it, so a header merged over two rows
    (the name in the upper cell) or a label row above the column names still reads whole.
    """
    best: tuple[int, HeaderRow] | None = None
    for index in range(min(HEADER_SEARCH_ROWS, len(grid))):
        own = list(grid[index])
        variants = [own]
        if index > 0:
            above = list(grid[index - 1])
            width = max(len(own), len(above))
            own += [""] * (width - len(own))
            above += [""] * (width - len(above))
            variants.append([o or a for o, a in zip(own, above, strict=True)])
        for texts in variants:
            if not any(t.strip() for t in texts):
                continue
            headers = unique_headers(texts)
            found = _candidate(index, headers, given)
            if found and (best is None or found[0] > best[0]):
                best = found
    return best[1] if best else None


def _candidate(
    index: int, headers: list[str], given: Mapping[str, str] | None
) -> tuple[int, HeaderRow] | None:
    guessed = guess_mapping(headers)
    if given:
        lower = {h.lower() for h in headers}
        wanted = [h.strip().lower() for h in given.values() if h.strip()]
        if not wanted or not all(h in lower for h in wanted):
            return None
        mapping = merge_mapping(headers, guessed, given)
        return len(wanted) * 100 + len(mapping), HeaderRow(index, headers, mapping)
    if "Item" not in guessed or not any(c in guessed for c in AMOUNT_COLUMNS):
        return None
    return len(guessed), HeaderRow(index, headers, guessed)


def _score(column: str, header: str) -> float:
    text = normalise(header)
    if not text:
        return 0.0
    tokens = text.split()
    if column == "Item" and _ID_TOKENS & set(tokens):
        return 0.0
    # "Shape" alone names the distribution in many templates; the PERT shape column must
    # say so ("PERT shape").
    if text == normalise(column) and column != "Shape":
        return 4.0
    best = 0.0
    padded = f" {text} "
    for phrase, exact_only in _SYNONYMS[column]:
        if text == phrase:
            return 3.0
        if not exact_only and f" {phrase} " in padded:
            best = max(best, 2.5 if text.endswith(phrase) else 2.0)
    if not best and column in ("Low", "High"):
        pct = header_percentile(header)
        if pct is not None and (pct < 50) == (column == "Low") and pct != 50:
            best = 2.8
    return best
