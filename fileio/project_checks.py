"""What a project file must be for it to be saved again: every string encodable as UTF-8 (no
lone surrogates such as an escaped "\\ud800"), every number finite (the format writes NaN and
infinities as the strings "nan", "inf"), nesting shallow enough for the writer, and each
section of the type the format says. A file that breaks these is refused at load, naming the
key, instead of loading and then failing at every save or export."""

from __future__ import annotations

import math
from typing import Any

# The format nests about five deep (items > item > values > pair); free-form tables
# (settings.extra, import_summary) get room, but far less than the writer's recursion limit.
MAX_DEPTH = 32

# Section -> the JSON type it must have when present.
SECTION_TYPES: dict[str, tuple[type, str]] = {
    "estimate": (dict, "a table"),
    "settings": (dict, "a table"),
    "items": (list, "a list"),
    "correlation": (dict, "a table"),
    "problems": (list, "a list"),
    "import_summary": (dict, "a table"),
}
CORRELATION_TYPES: dict[str, tuple[type, str]] = {
    "pairs": (list, "a list"),
    "groups": (dict, "a table"),
}


def unsavable_key(document: Any) -> str | None:
    """The first key (as a path like settings.extra.rates[2]) whose value could not be saved
    again, with why; None when the whole document could be."""
    stack: list[tuple[Any, str, int]] = [(document, "", 0)]
    while stack:
        value, where, depth = stack.pop()
        if depth > MAX_DEPTH:
            return f"{where} nests lists or tables more than {MAX_DEPTH} deep"
        if isinstance(value, str):
            if not _encodable(value):
                return f"{where or 'the file'} holds a lone surrogate (an escaped \\ud800-\\udfff)"
        elif isinstance(value, float):
            if not math.isfinite(value):
                return f'{where} is {value} (write "nan", "inf" or "-inf" as text)'
        elif isinstance(value, dict):
            for key, inner in value.items():
                path = f"{where}.{key}" if where else str(key)
                if not _encodable(key):
                    return f"a key in {where or 'the file'} holds a lone surrogate"
                stack.append((inner, path, depth + 1))
        elif isinstance(value, list):
            stack.extend((inner, f"{where}[{n}]", depth + 1) for n, inner in enumerate(value))
    return None


def misshapen_section(document: dict[str, Any]) -> str | None:
    """The first section whose type is not the format's, as 'key is X, not Y'; else None."""
    for key, (kind, words) in SECTION_TYPES.items():
        if key in document and not isinstance(document[key], kind):
            return f"{key} is {_kind(document[key])}, not {words}"
    correlation = document.get("correlation", {})
    for key, (kind, words) in CORRELATION_TYPES.items():
        if key in correlation and not isinstance(correlation[key], kind):
            return f"correlation.{key} is {_kind(correlation[key])}, not {words}"
    return None


def _encodable(text: str) -> bool:
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        return False
    return True


def _kind(value: Any) -> str:
    names = {dict: "a table", list: "a list", str: "text", bool: "true/false", type(None): "null"}
    return names.get(type(value), "a number")
