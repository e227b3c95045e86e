"""The project file: an estimate with its settings and correlations, as documented JSON.

The format is described in fileio/PROJECT_FORMAT.md. Loading is as forgiving as importing:
an item that is malformed (a hand edit, a damaged file) becomes a draft with a problem rather
than stopping the load, while a file that is not a project, or is from a newer schema, is
refused with a `ProjectError` saying what to do.
"""

from __future__ import annotations

import json
import math
from dataclasses import fields
from pathlib import Path
from typing import Any

from engine import (
    CorrelationPair,
    CorrelationSpec,
    Estimate,
    LineItem,
    Problem,
    Settings,
)
from engine.analysis import METHODS, SAMPLINGS
from engine.validation import item_problems
from fileio.atomic import write_atomic
from fileio.project_checks import misshapen_section, unsavable_key
from fileio.safety import MAX_MAGNITUDE, UnreadableFile, check_file_size, one_line

PROJECT_SUFFIX = ".rangefold"
FORMAT_NAME = "rangefold-project"
SCHEMA_VERSION = 1

# LineItem field -> the column a problem with it points at.
_ITEM_COLUMNS = {
    "name": "Item",
    "family": "Distribution",
    "low": "Low",
    "most_likely": "Most likely",
    "high": "High",
    "low_pct": "Low %",
    "high_pct": "High %",
    "probability": "Probability",
    "group": "Group",
    "paths": "Path",
    "shape": "Shape",
    "values": "Most likely",
    "row": None,
    "raw": None,
    "read_problems": None,
}
_OPTIONAL_NUMBERS = ("low", "most_likely", "high", "low_pct", "high_pct")
_NON_FINITE = {"inf": math.inf, "-inf": -math.inf, "nan": math.nan}
# The trials a stored setting may ask for: the engine's least, and a most that fits in memory.
MIN_TRIALS, MAX_TRIALS = 1_000, 10_000_000


class ProjectError(UnreadableFile):
    """The file cannot be opened as a Rangefold project; the message says why and what to do."""


def save_project(path: str | Path, estimate: Estimate, settings: Settings) -> None:
    """Save atomically, keeping the previous file as `<name>.bak`."""
    document = project_document(estimate, settings)
    fault = unsavable_key(document)
    if fault:
        raise ProjectError(
            f"{Path(path).name} cannot be saved: {fault}. Correct or remove that value."
        )
    try:
        text = json.dumps(document, indent=2, ensure_ascii=False, allow_nan=False)
    except (TypeError, ValueError) as why:
        raise ProjectError(
            f"the project cannot be saved: {why}. Settings' extra values must be plain text, "
            "numbers, lists or tables."
        ) from why
    write_atomic(path, (text + "\n").encode("utf-8"))


def load_project(path: str | Path) -> tuple[Estimate, Settings]:
    path = Path(path)
    document = _read_document(path)
    problems: list[Problem] = []
    settings, settings_problems = _settings_from(document.get("settings", {}))
    items_data = document.get("items", [])
    if not isinstance(items_data, list):
        raise ProjectError(f"{path.name}: 'items' is not a list; the file is damaged.")
    items = [_item_from(data, n) for n, data in enumerate(items_data, start=1)]
    correlation = _correlation_from(document.get("correlation", {}), problems)
    for data in document.get("problems", []) or []:
        problems.append(_problem_from(data))
    about = document.get("estimate", {})
    if not isinstance(about, dict):
        about = {}
    summary: dict[str, Any] = {
        "source": str(path),
        "sheet": None,
        "header_row": None,
        "rows_read": len(items),
        "items_taken": len(items),
        "rows_skipped": [],
        "drafts": sum(1 for i in items if i.read_problems or item_problems(i)),
        "settings_problems": settings_problems,
    }
    if isinstance(document.get("import_summary"), dict):
        summary["import_summary"] = document["import_summary"]
    estimate = Estimate(
        items=items,
        title=str(about.get("title", "") or ""),
        unit=str(about.get("unit", "") or ""),
        source=str(about.get("source", "") or ""),
        read_problems=problems,
        summary=summary,
        correlation=correlation,
    )
    return estimate, settings


def project_document(estimate: Estimate, settings: Settings) -> dict[str, Any]:
    """The JSON document for an estimate and its settings (see PROJECT_FORMAT.md)."""
    imported = {
        k: v for k, v in estimate.summary.items() if k not in ("settings", "settings_problems")
    }
    document: dict[str, Any] = {
        "format": FORMAT_NAME,
        "schema_version": SCHEMA_VERSION,
        "estimate": {"title": estimate.title, "unit": estimate.unit, "source": estimate.source},
        "settings": {**settings.to_dict(), "levels": [float(v) for v in settings.levels]},
        "items": [_item_document(item) for item in estimate.items],
        "correlation": {
            "pairs": [
                {
                    "item_a": p.item_a,
                    "item_b": p.item_b,
                    "coefficient": _number_out(p.coefficient),
                    "row": p.row,
                }
                for p in estimate.correlation.pairs
            ],
            "groups": {k: _number_out(v) for k, v in estimate.correlation.groups.items()},
            "default": _number_out(estimate.correlation.default),
            "accept_repair": bool(estimate.correlation.accept_repair),
        },
        "problems": [p.to_dict() for p in estimate.read_problems],
    }
    if imported:
        document["import_summary"] = imported.get("import_summary", imported)
    return document


def _item_document(item: LineItem) -> dict[str, Any]:
    return {
        "name": item.name,
        "family": item.family,
        **{f: _number_out(getattr(item, f)) for f in _OPTIONAL_NUMBERS},
        "probability": _number_out(item.probability),
        "group": item.group,
        "paths": list(item.paths),
        "shape": _number_out(item.shape),
        "values": [[_number_out(v), _number_out(w)] for v, w in item.values],
        "row": item.row,
        "sheet": item.sheet,
        "notes": dict(item.notes),
        "raw": dict(item.raw),
        "read_problems": [p.to_dict() for p in item.read_problems],
    }


def _number_out(value: float | None) -> float | str | None:
    if value is None or math.isfinite(value):
        return value
    return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")


def _number_in(value: Any) -> float:
    """A stored number; raises ValueError for anything else (booleans included)."""
    if isinstance(value, bool):
        raise ValueError
    if isinstance(value, int | float):
        return float(value)
    if isinstance(value, str) and value in _NON_FINITE:
        return _NON_FINITE[value]
    raise ValueError


def _too_large(number: float) -> bool:
    """Finite but beyond the magnitude the engine totals reliably (inf and nan are left to the
    engine's validation, which names them)."""
    return math.isfinite(number) and abs(number) > MAX_MAGNITUDE


def _read_document(path: Path) -> dict[str, Any]:
    check_file_size(path)
    try:
        text = path.read_bytes().decode("utf-8")
        document = json.loads(text)
    except RecursionError as why:
        raise ProjectError(
            f"{path.name} nests lists or tables too deeply to be a Rangefold project file; "
            f"the file is damaged. Open the backup {path.name}.bak."
        ) from why
    except UnicodeDecodeError as why:
        raise ProjectError(
            f"{path.name} is not a Rangefold project file (not UTF-8 text)."
        ) from why
    except json.JSONDecodeError as why:
        raise ProjectError(
            f"{path.name} is not a readable Rangefold project file: {why.msg} at line "
            f"{why.lineno}, column {why.colno}. If it was edited by hand, undo the edit or "
            f"open the backup {path.name}.bak."
        ) from why
    except ValueError as why:  # e.g. an integer of thousands of digits
        raise ProjectError(
            f"{path.name} is not a readable Rangefold project file ({one_line(why, 120)}). "
            f"Open the backup {path.name}.bak."
        ) from why
    if not isinstance(document, dict) or document.get("format") != FORMAT_NAME:
        raise ProjectError(
            f'{path.name} is not a Rangefold project file (it has no "format": '
            f'"{FORMAT_NAME}"). Import spreadsheets and CSV files instead of opening them.'
        )
    version = document.get("schema_version")
    if isinstance(version, bool) or not isinstance(version, int) or version < 1:
        raise ProjectError(
            f"{path.name} has no valid schema_version ({version!r}); the file is damaged."
        )
    if version > SCHEMA_VERSION:
        raise ProjectError(
            f"{path.name} was saved by a newer Rangefold (project schema {version}; this version "
            f"reads schema {SCHEMA_VERSION} and older). Update Rangefold to open it."
        )
    for fault in (unsavable_key(document), misshapen_section(document)):
        if fault:
            raise ProjectError(
                f"{path.name} cannot be opened: {fault}. The file was damaged or edited by "
                f"hand; correct that key, or open the backup {path.name}.bak."
            )
    return document


def _item_from(data: Any, number: int) -> LineItem:
    """A stored item; any field that is not what the format says becomes a draft's problem."""
    if not isinstance(data, dict):
        return LineItem(
            name="",
            raw={"Item": json.dumps(data)},
            read_problems=(
                Problem(
                    f"item {number} of the project file is not an item ({json.dumps(data)[:60]}).",
                    "delete the row, or enter the item again.",
                    column="Item",
                ),
            ),
        )
    name = data.get("name", "")
    name = name if isinstance(name, str) else json.dumps(name)
    raw: dict[str, str] = {}
    problems: list[Problem] = []
    known = {f.name for f in fields(LineItem)}

    def bad(field_name: str, value: Any, expected: str) -> None:
        column = _ITEM_COLUMNS.get(field_name) or "Item"
        raw[column] = value if isinstance(value, str) else json.dumps(value)
        problems.append(
            Problem(
                f"item {number} of the project file has {field_name} = {json.dumps(value)[:60]}, not {expected}.",
                f"enter the {column} again.",
                item=name,
                column=column,
            )
        )

    for key in data:
        if key not in known:
            bad(key, data[key], "a field of the format")
    fields_in: dict[str, Any] = {"name": name}
    if not isinstance(data.get("name", ""), str):
        bad("name", data["name"], "text")
    for key in ("family", "group"):
        value = data.get(key, "triangular" if key == "family" else "")
        if isinstance(value, str):
            fields_in[key] = value
        else:
            bad(key, value, "text")
    for key in (*_OPTIONAL_NUMBERS, "probability", "shape"):
        value = data.get(key)
        if value is None and key in _OPTIONAL_NUMBERS:
            continue
        if value is None:
            continue  # the LineItem default (probability 1, shape 4)
        try:
            number = _number_in(value)
        except ValueError:
            bad(key, value, "a number")
            continue
        if _too_large(number):
            bad(key, value, f"a number within ±{MAX_MAGNITUDE:g}")
        else:
            fields_in[key] = number
    paths = data.get("paths", [])
    if isinstance(paths, list) and all(isinstance(p, str) for p in paths):
        fields_in["paths"] = tuple(paths)
    else:
        bad("paths", paths, "a list of path names")
    values = data.get("values", [])
    try:
        pairs = tuple((_number_in(v), _number_in(w)) for v, w in values)
    except (TypeError, ValueError):
        bad("values", values, "a list of [value, chance] pairs")
    else:
        if any(_too_large(v) for v, _ in pairs):
            bad("values", values, f"values within ±{MAX_MAGNITUDE:g}")
        else:
            fields_in["values"] = pairs
    row = data.get("row")
    if row is None or (isinstance(row, int) and not isinstance(row, bool)):
        fields_in["row"] = row
    else:
        bad("row", row, "a row number")
    sheet, notes = data.get("sheet"), data.get("notes", {})
    if sheet is None or isinstance(sheet, str):
        fields_in["sheet"] = sheet
    else:
        bad("sheet", sheet, "a sheet name")
    if isinstance(notes, dict) and all(isinstance(v, str) for v in notes.values()):
        fields_in["notes"] = {str(k): v for k, v in notes.items()}
    else:
        bad("notes", notes, "a table of notes by column")
    stored_raw = data.get("raw", {})
    if isinstance(stored_raw, dict) and all(isinstance(v, str) for v in stored_raw.values()):
        raw = {str(k): v for k, v in stored_raw.items()} | raw
    else:
        bad("raw", stored_raw, "a table of cell text")
    stored = data.get("read_problems", [])
    stored = stored if isinstance(stored, list) else [stored]
    problems = [_problem_from(p) for p in stored] + problems
    return LineItem(**fields_in, raw=raw, read_problems=tuple(problems))


def _problem_from(data: Any) -> Problem:
    if isinstance(data, dict) and isinstance(data.get("message"), str):
        row = data.get("row")
        return Problem(
            message=data["message"],
            fix=str(data.get("fix", "") or ""),
            item=str(data.get("item", "") or ""),
            row=row if isinstance(row, int) and not isinstance(row, bool) else None,
            column=data.get("column") if isinstance(data.get("column"), str) else None,
            sheet=data.get("sheet") if isinstance(data.get("sheet"), str) else None,
        )
    return Problem(
        f"a stored problem could not be read ({json.dumps(data)[:60]}).",
        "check the item and save the project again.",
    )


def _settings_from(data: Any) -> tuple[Settings, list[Problem]]:
    """Stored settings; a field of the wrong kind falls back to the default and is reported."""
    defaults = Settings()
    problems: list[Problem] = []
    if not isinstance(data, dict):
        data = {}
    chosen: dict[str, Any] = {}
    checks = {
        "levels": _levels_in,
        "tolerance": lambda v: _within(_number_in(v), 0.0, 1.0),
        "method": lambda v: v if v in METHODS else _fail(),
        "trials": lambda v: _whole(v, MIN_TRIALS, MAX_TRIALS),
        "seed": lambda v: v if v is None else _whole(v, 0, 2**63 - 1),
        "sampling": lambda v: v if v in SAMPLINGS else _fail(),
        "unit": lambda v: v if isinstance(v, str) else _fail(),
        "notes": lambda v: v if isinstance(v, str) else _fail(),
        "extra": lambda v: v if isinstance(v, dict) else _fail(),
    }
    for key, value in data.items():
        if key not in checks:
            problems.append(
                Problem(
                    f"the project file has an unknown setting {key!r}; it was not used.",
                    "save the project again to drop it.",
                )
            )
            continue
        try:
            chosen[key] = checks[key](value)
        except (TypeError, ValueError):
            problems.append(
                Problem(
                    f"the setting {key} = {json.dumps(value)[:60]} in the project file is not valid; "
                    f"the default {getattr(defaults, key)!r} is used.",
                    f"choose the {key} again and save the project.",
                )
            )
    return Settings(**chosen), problems


def _fail() -> Any:
    raise ValueError


def _within(number: float, low: float, high: float) -> float:
    """`number` strictly between `low` and `high` (NaN is not)."""
    return number if low < number < high else _fail()


def _whole(value: Any, low: int, high: int) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or not low <= value <= high:
        raise ValueError
    return value


def _levels_in(value: Any) -> tuple[float, ...]:
    if not isinstance(value, list) or not value:
        raise ValueError
    return tuple(_within(_number_in(v), 0.0, 100.0) for v in value)


def _correlation_from(data: Any, problems: list[Problem]) -> CorrelationSpec:
    spec = CorrelationSpec()
    if not isinstance(data, dict):
        problems.append(
            Problem(
                "the project file's correlation section is damaged.",
                "state the correlations again.",
            )
        )
        return spec

    def bad(what: str) -> None:
        problems.append(
            Problem(
                f"the project file's correlation {what} is not valid.",
                "state that correlation again.",
                sheet="Correlations",
            )
        )

    for n, pair in enumerate(data.get("pairs", []) or [], start=1):
        try:
            a, b = pair["item_a"], pair["item_b"]
            row = pair.get("row")
            if not (isinstance(a, str) and isinstance(b, str)) or not (
                row is None or isinstance(row, int)
            ):
                raise TypeError
            spec.pairs.append(CorrelationPair(a, b, _number_in(pair["coefficient"]), row=row))
        except (KeyError, TypeError, ValueError):
            bad(f"pair {n} ({json.dumps(pair)[:60]})")
    groups = data.get("groups", {}) or {}
    if isinstance(groups, dict):
        for name, value in groups.items():
            try:
                spec.groups[str(name)] = _number_in(value)
            except ValueError:
                bad(f"for group {name!r}")
    else:
        bad("groups")
    try:
        spec.default = _number_in(data.get("default", 0.0))
    except ValueError:
        bad("default")
    accept = data.get("accept_repair", False)
    if isinstance(accept, bool):
        spec.accept_repair = accept
    else:
        bad("accept_repair")
    return spec
