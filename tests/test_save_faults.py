"""A save that fails or is killed at any point leaves the previous project intact: the file on
disk is always one complete version (old or new) that loads."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

import fileio.atomic as atomic
from engine import Estimate, LineItem, Settings
from fileio.atomic import backup_path
from fileio.project import load_project, save_project

ROOT = Path(__file__).resolve().parents[1]


def estimate(version: int, n: int = 5) -> Estimate:
    items = [LineItem(f"Item {k} v{version}", "triangular", k, k + 1, k + 3) for k in range(n)]
    return Estimate(items=items, title=f"Version {version}", unit="EUR")


def titles_on_disk(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


def fail_on_call(name: str, monkeypatch, call: int = 1) -> None:
    """Make the `call`-th use of os.<name> inside fileio.atomic raise a disk error."""
    real = getattr(os, name)
    calls = []

    def failing(*args, **kwargs):
        calls.append(1)
        if len(calls) == call:
            raise OSError(28, "No space left on device")
        return real(*args, **kwargs)

    monkeypatch.setattr(atomic.os, name, failing)


@pytest.mark.parametrize(
    ("step", "call"),
    [
        ("write", None),  # the new content's temporary file
        ("fsync", 1),  # flushing the new content
        ("fsync", 2),  # flushing the backup copy
        ("replace", 1),  # moving the backup into place
        ("replace", 2),  # the final rename
    ],
)
def test_failure_at_each_step_keeps_the_previous_file(tmp_path, monkeypatch, step, call):
    path = tmp_path / "plant.rangefold"
    save_project(path, estimate(1), Settings())
    save_project(path, estimate(2), Settings())  # now a .bak (version 1) exists too
    before = path.read_bytes()
    before_backup = backup_path(path).read_bytes()
    if step == "write":
        real_fdopen = os.fdopen

        class FullDisk:
            def __init__(self, handle):
                self.handle = handle

            def __enter__(self):
                return self

            def __exit__(self, *exc):
                self.handle.close()

            def write(self, data):
                self.handle.write(data[: len(data) // 2])
                raise OSError(28, "No space left on device")

        monkeypatch.setattr(atomic.os, "fdopen", lambda fd, mode: FullDisk(real_fdopen(fd, mode)))
    else:
        fail_on_call(step, monkeypatch, call)
    with pytest.raises(OSError, match="disk is full"):
        save_project(path, estimate(3), Settings())
    monkeypatch.undo()
    assert path.read_bytes() == before
    assert load_project(path)[0].title == "Version 2"
    # The backup is either untouched or already the previous version, never partial.
    assert backup_path(path).read_bytes() in (before_backup, before)
    assert titles_on_disk(tmp_path) == ["plant.rangefold", "plant.rangefold.bak"]  # no temp left


WRITER = """
import sys
from engine import Estimate, LineItem, Settings
from fileio.project import save_project

path, n = sys.argv[1], int(sys.argv[2])
versions = [
    Estimate(
        items=[LineItem(f"Item {k} v{v}", "pert", k, k + 1, k + 3) for k in range(n + v)],
        title=f"Version {v}",
    )
    for v in (0, 1)
]
save_project(path, versions[0], Settings())
print("ready", flush=True)
v = 0
while True:
    v = 1 - v
    save_project(path, versions[v], Settings())
"""


def test_killed_while_saving_leaves_a_complete_version(tmp_path):
    """A real process saving a large project in a loop, killed with SIGKILL at spread-out
    moments: each time the file loads and is one of the two versions, complete."""
    path = tmp_path / "large.rangefold"
    n = 8_000  # about 2.6 MB of JSON a save
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    seen = set()
    for delay in (0.05, 0.13, 0.29, 0.41, 0.67):
        writer = subprocess.Popen(
            [sys.executable, "-c", WRITER, str(path), str(n)],
            stdout=subprocess.PIPE,
            env=env,
            cwd=tmp_path,
        )
        try:
            assert writer.stdout.readline().strip() == b"ready"
            time.sleep(delay)
        finally:
            writer.send_signal(signal.SIGKILL)
            writer.wait(timeout=30)
            writer.stdout.close()
        loaded, _ = load_project(path)
        assert loaded.title in ("Version 0", "Version 1")
        version = int(loaded.title[-1])
        assert len(loaded.items) == n + version
        assert loaded.items[-1].name == f"Item {n + version - 1} v{version}"
        seen.add(version)
        # A kill mid-save may leave a hidden temporary file; it is never read as the project.
        leftovers = [p for p in tmp_path.iterdir() if p.suffix == ".tmp"]
        assert all(p.name.startswith(".rf-") for p in leftovers)
    assert seen  # at least one complete version each time; usually both appear


def test_newer_schema_is_refused_not_half_read(tmp_path):
    import json

    path = tmp_path / "future.rangefold"
    save_project(path, estimate(1), Settings())
    document = json.loads(path.read_text())
    document["schema_version"] += 1
    document["items"][0]["new_field_of_the_future"] = {"nested": True}
    path.write_text(json.dumps(document))
    with pytest.raises(ValueError, match="newer Rangefold") as caught:
        load_project(path)
    assert "\n" not in str(caught.value)
