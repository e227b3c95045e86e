"""The document's life without a window: every failure of a save, an open or an export is
told in one line naming the user's file, the previous file stays intact and the edits stay
unsaved (so the window stays open); recent files are absolute and screenshot runs leave none."""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path

import pytest
from PySide6.QtCore import QSettings
from PySide6.QtGui import QUndoCommand, QUndoStack

from engine import Estimate, LineItem, Settings, analyze
from fileio.project import load_project, save_project
from gui.document import Document
from gui.recompute import Outcome
from gui.recovery import RecoveryStore


@dataclass
class Host:
    estimate: Estimate
    settings: Settings = field(default_factory=Settings)
    undo_stack: QUndoStack = field(default_factory=QUndoStack)
    last_outcome: Outcome | None = None
    last_problem: str = ""
    shown: list = field(default_factory=list)

    def show_document(self, estimate: Estimate, settings: Settings) -> None:
        self.estimate, self.settings = estimate, settings
        self.shown.append(estimate)

    def insert_imported(self, estimate: Estimate, path: Path) -> list[int]:
        return list(range(len(estimate.items)))

    def document_changed(self) -> None:
        pass

    def report_allocation(self, analysis) -> None:
        return None  # the report allocates for itself


class Answers:
    """Prompts answered by the test; every warning is kept."""

    def __init__(self, unsaved: str = "save", save_name: str = ""):
        self.warnings: list[tuple[str, str]] = []
        self.unsaved = unsaved
        self.name = save_name

    def warn(self, title: str, message: str) -> None:
        self.warnings.append((title, message))

    def status(self, text: str, milliseconds: int = 0) -> None:
        pass

    def ask_unsaved(self) -> str:
        return self.unsaved

    def save_name(self, *_args) -> tuple[str, str]:
        return self.name, ""


def items() -> list[LineItem]:
    return [LineItem(f"Item {k}", "uniform", 0.0, None, 1.0) for k in range(3)]


def make(qapp, tmp_path, host: Host, answers: Answers) -> Document:
    store = QSettings(str(tmp_path / "store.ini"), QSettings.Format.IniFormat)
    return Document(host, answers, store, RecoveryStore(tmp_path / "recovery"))


def edit(host: Host) -> None:
    host.undo_stack.push(QUndoCommand("an edit"))


def deeply_nested(depth: int) -> dict:
    value: dict = {}
    for _ in range(depth):
        value = {"x": value}
    return value


def test_a_save_that_raises_anything_keeps_the_file_and_the_edits(qapp, tmp_path):
    path = tmp_path / "plant.rangefold"
    save_project(path, Estimate(items=items(), title="Kept"), Settings())
    before = path.read_bytes()
    # A RecursionError from json (settings.extra nested far too deep), not an OSError.
    host = Host(Estimate(items=items(), title="New"), Settings(extra=deeply_nested(5000)))
    answers = Answers()
    document = make(qapp, tmp_path, host, answers)
    document.set_location(path, "", host.estimate)
    edit(host)
    assert not document.save()
    assert path.read_bytes() == before
    assert document.is_modified()
    (title, message), *_ = answers.warnings
    assert "could not be saved" in title
    assert str(path) in message and "\n" not in message
    # Quit -> Save with the failing save: the close is refused, the edits stay.
    assert not document.maybe_save()


def test_an_export_that_raises_anything_is_told(qapp, tmp_path, monkeypatch):
    estimate = Estimate(items=items(), title="Yard")
    outcome = Outcome(1, estimate, Settings(), analyze(estimate))
    host = Host(estimate, last_outcome=outcome)
    answers = Answers()
    document = make(qapp, tmp_path, host, answers)
    target = tmp_path / "yard.pdf"
    target.write_bytes(b"previous report")

    def broken(*_args, **_kwargs):
        raise IndexError("list index out of range")

    monkeypatch.setattr("reports.write_report", broken)
    assert document.export_report(target) is None
    assert target.read_bytes() == b"previous report"
    (_title, message), *_ = answers.warnings
    assert str(target) in message and "IndexError" in message


def test_an_export_onto_the_open_project_is_refused(qapp, tmp_path):
    estimate = Estimate(items=items(), title="Yard")
    host = Host(estimate, last_outcome=Outcome(1, estimate, Settings(), analyze(estimate)))
    answers = Answers()
    document = make(qapp, tmp_path, host, answers)
    source = tmp_path / "yard.json"
    source.write_text("the estimate")
    document.set_location(None, str(source), estimate)
    assert document.export_report(source) is None
    assert source.read_text() == "the estimate"
    assert "is the estimate being read" in answers.warnings[0][1]


def test_opening_a_damaged_project_warns_and_keeps_what_is_shown(qapp, tmp_path):
    host = Host(Estimate(items=items(), title="On screen"))
    answers = Answers()
    document = make(qapp, tmp_path, host, answers)
    damaged = tmp_path / "damaged.rangefold"
    damaged.write_text('{"format": "rangefold-project", "schema_version": 1, "items": {')
    assert not document.open_path(damaged, interactive=False)
    assert host.estimate.title == "On screen" and not host.shown
    assert "damaged.rangefold" in answers.warnings[0][1]


def test_recent_files_are_absolute_and_screenshot_runs_leave_none(qapp, tmp_path, monkeypatch):
    path = tmp_path / "plant.rangefold"
    save_project(path, Estimate(items=items(), title="Plant"), Settings())
    monkeypatch.chdir(tmp_path)
    host = Host(Estimate(items=[]))
    document = make(qapp, tmp_path, host, Answers())
    assert document.open_path(Path("plant.rangefold"), interactive=False)
    assert document.recent_files() == [str(path)]
    assert os.path.isabs(document.recent_files()[0])
    other = tmp_path / "other.rangefold"
    save_project(other, Estimate(items=items(), title="Other"), Settings())
    document.remember_recent = False
    assert document.open_path(other, interactive=False)
    assert document.recent_files() == [str(path)]


@pytest.mark.parametrize("answer", ["discard", "cancel"])
def test_unsaved_answers(qapp, tmp_path, answer):
    host = Host(Estimate(items=items()))
    document = make(qapp, tmp_path, host, Answers(unsaved=answer))
    edit(host)
    assert document.maybe_save() is (answer == "discard")


def test_save_as_then_load_gives_the_same_items(qapp, tmp_path):
    target = tmp_path / "saved"
    host = Host(Estimate(items=items(), title="Saved"))
    document = make(qapp, tmp_path, host, Answers(save_name=str(target)))
    edit(host)
    assert document.save_as()
    assert not document.is_modified()
    assert document.path == tmp_path / "saved.rangefold"
    assert load_project(document.path)[0].items == items()


def test_stored_settings_that_cannot_be_used_are_told_on_opening(qapp, tmp_path):
    import json

    path = tmp_path / "odd.rangefold"
    save_project(path, Estimate(items=items(), title="Odd"), Settings())
    document_text = json.loads(path.read_text())
    document_text["settings"]["trials"] = -5
    path.write_text(json.dumps(document_text))
    host = Host(Estimate(items=[]))
    answers = Answers()
    document = make(qapp, tmp_path, host, answers)
    assert document.open_path(path, interactive=False)
    assert host.settings.trials == Settings().trials
    (title, message), *_ = answers.warnings
    assert "odd.rangefold" in title and "trials" in message


def test_a_timed_autosave_writes_a_copy_in_the_background_and_close_waits_for_it(qapp, tmp_path):
    """The timers' autosave writes in a worker from a copy: edits made after it started are
    not in it (the copy is the estimate as it was), and a clean close removes it."""
    host = Host(Estimate(items=items(), title="Yard"))
    document = make(qapp, tmp_path, host, Answers())
    edit(host)
    document.autosave_in_background()
    host.estimate.items.append(LineItem("Added after", "uniform", 0.0, None, 1.0))
    assert document._saver.wait()
    recovery = document.recovery.find()
    assert recovery is not None
    saved, _settings = document.recovery.load(recovery)
    assert [i.name for i in saved.items] == [i.name for i in items()]
    document.autosave_in_background()
    document.closed()
    assert document.recovery.find() is None
    assert not document.recovery.project_path.exists()


def test_a_failed_background_autosave_is_told(qapp, tmp_path, monkeypatch):
    told = []
    answers = Answers()
    answers.status = lambda text, milliseconds=0: told.append(text)
    host = Host(Estimate(items=items()))
    document = make(qapp, tmp_path, host, answers)
    edit(host)

    def disk_full(*_args):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(document.recovery, "save", disk_full)
    document.autosave_in_background()
    assert document._saver.wait()
    qapp.processEvents()
    assert told and told[0].startswith("Autosave failed")
