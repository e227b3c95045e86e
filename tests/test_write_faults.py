"""Saves and exports that meet a hostile destination: the report aimed at its own input, a
symbolic link, a FIFO, a folder, the longest legal name, a full disk. Each gives one line naming
the user's file and keeps the previous file intact."""

from __future__ import annotations

import errno
import os
import subprocess
import sys
from pathlib import Path

import pytest
from openpyxl import Workbook, load_workbook

import fileio.atomic as atomic
from engine import Estimate, LineItem, Settings, analyze
from fileio.atomic import WriteFailed, backup_path, write_atomic
from fileio.output_guard import OutputIsInput
from fileio.project import load_project, save_project
from reports import write_report

ROOT = Path(__file__).resolve().parents[1]


def small() -> Estimate:
    items = [LineItem(f"Item {k}", "uniform", 0.0, None, 1.0) for k in range(3)]
    return Estimate(items=items, title="Small", unit="EUR")


def run_cli(*args: str, timeout: float = 60) -> subprocess.CompletedProcess:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    return subprocess.run(
        [sys.executable, "-m", "cli", *args],
        capture_output=True,
        text=True,
        timeout=timeout,
        env=env,
        cwd=ROOT,
    )


def estimator_workbook(path: Path) -> None:
    book = Workbook()
    sheet = book.active
    sheet.title = "Estimate"
    sheet.append(["Fit-out of level 3 — cost estimate"])
    sheet.append([])
    sheet.append(["Item", "Low", "Most likely", "High", "Notes"])
    sheet.append(["Partitions", "$1,200k", "$1,350k", "$1,900k", "glazed fronts"])
    sheet.append(["Ceilings", 300, 340, 520, ""])
    book.create_sheet("Assumptions").append(["Rates", "2026 prices"])
    book.save(path)


@pytest.mark.parametrize("suffix", [".xlsx", ".csv"])
def test_report_onto_its_own_input_is_refused(tmp_path, suffix):
    source = tmp_path / f"est{suffix}"
    if suffix == ".xlsx":
        estimator_workbook(source)
    else:
        source.write_text("Item,Low,Most likely,High\nWalls,10,12,20\n", encoding="utf-8")
    before = source.read_bytes()
    done = run_cli("report", str(source), "-o", str(source))
    assert done.returncode == 2, done.stderr
    assert "is the estimate being read" in done.stderr
    assert "est contingency" in done.stderr  # the fix names a free name
    assert len(done.stderr.strip().splitlines()) == 1
    assert source.read_bytes() == before
    if suffix == ".xlsx":
        assert load_workbook(source).sheetnames == ["Estimate", "Assumptions"]


def test_report_onto_a_link_to_its_input_is_refused(tmp_path):
    source = tmp_path / "est.xlsx"
    estimator_workbook(source)
    link = tmp_path / "report.xlsx"
    link.symlink_to(source)
    before = source.read_bytes()
    done = run_cli("report", str(source), "-o", str(link))
    assert done.returncode == 2
    assert source.read_bytes() == before


def test_write_report_refuses_the_source_path(tmp_path):
    estimate = small()
    source = tmp_path / "plant.json"
    source.write_text("{}")
    with pytest.raises(OutputIsInput):
        write_report(source, estimate, analyze(estimate), Settings(), source_path=source)
    assert source.read_text() == "{}"


def test_save_through_a_link_writes_the_target_and_keeps_the_link(tmp_path):
    real = tmp_path / "projects" / "plant.rangefold"
    real.parent.mkdir()
    save_project(real, Estimate(items=[], title="Old"), Settings())
    link = tmp_path / "plant.rangefold"
    link.symlink_to(real)
    save_project(link, small(), Settings())
    assert link.is_symlink()
    assert load_project(real)[0].title == "Small"
    assert load_project(backup_path(real))[0].title == "Old"
    assert sorted(p.name for p in real.parent.iterdir()) == [
        "plant.rangefold",
        "plant.rangefold.bak",
    ]


def test_a_fifo_is_refused_without_waiting(tmp_path):
    fifo = tmp_path / "plant.rangefold"
    os.mkfifo(fifo)
    code = (
        "import sys\n"
        "from engine import Estimate, Settings\n"
        "from fileio.project import save_project\n"
        "try:\n"
        "    save_project(sys.argv[1], Estimate(items=[]), Settings())\n"
        "except OSError as e:\n"
        "    print(e)\n"
    )
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    done = subprocess.run(
        [sys.executable, "-c", code, str(fifo)], capture_output=True, text=True, timeout=60, env=env
    )
    assert "not a regular file" in done.stdout
    assert str(fifo) in done.stdout


def test_a_folder_is_refused(tmp_path):
    with pytest.raises(WriteFailed, match="is a folder"):
        write_atomic(tmp_path, b"x")


def test_the_longest_legal_name_saves_with_its_backup(tmp_path):
    path = tmp_path / ("p" * 245 + ".rangefold")[-255:]
    save_project(path, Estimate(items=[], title="One"), Settings())
    save_project(path, small(), Settings())
    assert load_project(path)[0].title == "Small"
    assert len(backup_path(path).name) <= 255
    assert load_project(backup_path(path))[0].title == "One"


def test_a_full_disk_names_the_file_not_the_temporary(tmp_path, monkeypatch):
    path = tmp_path / "plant.rangefold"
    save_project(path, Estimate(items=[], title="Kept"), Settings())
    before = path.read_bytes()

    def full(*_args):
        raise OSError(errno.ENOSPC, "No space left on device", str(tmp_path / ".rf-x.tmp"))

    monkeypatch.setattr(atomic.os, "fsync", full)
    with pytest.raises(WriteFailed) as caught:
        save_project(path, small(), Settings())
    message = str(caught.value)
    assert str(path) in message and "disk is full" in message
    assert ".tmp" not in message and "Errno" not in message
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plant.rangefold"]


def test_a_refused_permission_names_the_file(tmp_path, monkeypatch):
    """A folder the user may not write to (simulated: the tests may run as root)."""
    path = tmp_path / "plant.rangefold"
    save_project(path, Estimate(items=[], title="Kept"), Settings())

    def denied(*_args, **_kwargs):
        raise PermissionError(errno.EACCES, "Permission denied", str(tmp_path / ".rf-1.tmp"))

    monkeypatch.setattr(atomic.tempfile, "mkstemp", denied)
    with pytest.raises(WriteFailed, match="permission denied") as caught:
        save_project(path, small(), Settings())
    assert str(path) in str(caught.value) and ".tmp" not in str(caught.value)
    monkeypatch.undo()
    assert load_project(path)[0].title == "Kept"
