"""Autosave of unsaved work to a recovery file, offered back after a crash.

The recovery project is written with the project writer into a private folder, then a small
note (which file it stands for, when) is written atomically; the note is what marks a
recovery as present, so a crash half-way through leaves either the old pair or none.
A clean close removes both.
"""

from __future__ import annotations

import contextlib
import json
import os
import time
from dataclasses import dataclass
from pathlib import Path

from engine import Estimate, Settings

PROJECT_NAME = "recovery.rangefold"
NOTE_NAME = "recovery.json"


@dataclass(frozen=True)
class Recovery:
    project: Path
    original: Path | None
    saved_at: float


class RecoveryStore:
    def __init__(self, folder: Path):
        self.folder = Path(folder)

    @property
    def project_path(self) -> Path:
        return self.folder / PROJECT_NAME

    @property
    def note_path(self) -> Path:
        return self.folder / NOTE_NAME

    def save(self, estimate: Estimate, settings: Settings, original: Path | None) -> None:
        from fileio.atomic import write_atomic
        from fileio.project import save_project

        self.folder.mkdir(parents=True, exist_ok=True)
        save_project(self.project_path, estimate, settings)
        note = {"original": str(original) if original else None, "saved_at": time.time()}
        write_atomic(self.note_path, json.dumps(note).encode("utf-8"), backup=False)

    def find(self) -> Recovery | None:
        """The recovery left by a session that did not close cleanly, if any."""
        try:
            note = json.loads(self.note_path.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return None
        if not self.project_path.exists():
            return None
        original = note.get("original")
        return Recovery(self.project_path, Path(original) if original else None, note["saved_at"])

    def load(self, recovery: Recovery) -> tuple[Estimate, Settings]:
        from fileio.project import load_project

        return load_project(recovery.project)

    def clear(self) -> None:
        for path in (
            self.note_path,
            self.project_path,
            self.project_path.with_name(self.project_path.name + ".bak"),
        ):
            with contextlib.suppress(FileNotFoundError):
                os.remove(path)
