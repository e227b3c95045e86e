"""Where a report's figures came from: input file and checksum, settings, date, version."""

from __future__ import annotations

import hashlib
import tomllib
from datetime import datetime
from importlib import metadata
from pathlib import Path
from typing import Any

from engine import Estimate, Settings
from reports.caution import CAUTION, NORMAL_SHORTCUT_GLOSS
from reports.item_sources import item_records

PYPROJECT = Path(__file__).resolve().parents[1] / "pyproject.toml"


def rangefold_version() -> str:
    """The installed package's version, or the source tree's when run uninstalled."""
    try:
        return metadata.version("rangefold")
    except metadata.PackageNotFoundError:
        if PYPROJECT.is_file():
            return str(tomllib.loads(PYPROJECT.read_text("utf-8"))["project"]["version"])
        return "unknown"


def sha256_of(path: Path) -> str:
    digest = hashlib.sha256()
    with path.open("rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def input_path(estimate: Estimate, source_path: str | Path | None) -> Path | None:
    """The file the estimate was read from, when it still exists to be checksummed."""
    candidate = source_path or estimate.source
    if not candidate:
        return None
    path = Path(candidate)
    return path if path.is_file() else None


def provenance(
    estimate: Estimate, settings: Settings, source_path: str | Path | None = None
) -> dict[str, Any]:
    path = input_path(estimate, source_path)
    return {
        "title": estimate.title or (path.stem if path else "Estimate"),
        "unit": settings.unit or estimate.unit,
        "created": datetime.now().astimezone().isoformat(timespec="seconds"),
        "input_file": path.name if path else None,
        "input_sha256": sha256_of(path) if path else None,
        "import_summary": _jsonable_summary(estimate.summary),
        "items": item_records(estimate),
        "settings": settings.to_dict(),
        "caution": CAUTION,
        "normal_shortcut": NORMAL_SHORTCUT_GLOSS,
        "rangefold_version": rangefold_version(),
    }


def _jsonable_summary(summary: dict[str, Any]) -> dict[str, Any]:
    """The import summary without the project file's Settings object (reported apart)."""
    return {k: v for k, v in summary.items() if k != "settings"}
