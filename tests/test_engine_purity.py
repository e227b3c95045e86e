"""The engine and the Qt-free layers never pull in Qt; the engine no plotting or workbooks."""

from __future__ import annotations

import ast
import json
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

PROBE = """
import importlib.util, json, sys
layers = [m for m in ("engine", "fileio", "charts", "reports") if importlib.util.find_spec(m)]
for m in layers:
    __import__(m)
import engine
engine.analyze(engine.Estimate(items=[engine.LineItem("Roof", "triangular", low=1.0,
    most_likely=2.0, high=4.0)]), method="exact")
print(json.dumps({"layers": layers, "modules": sorted(sys.modules)}))
"""


def _modules_after(code: str) -> dict:
    out = subprocess.run(
        [sys.executable, "-c", code],
        cwd=ROOT,
        capture_output=True,
        text=True,
        check=True,
        timeout=120,
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


def test_no_qt_in_engine_or_qt_free_layers() -> None:
    found = _modules_after(PROBE)
    assert "engine" in found["layers"]
    assert not [m for m in found["modules"] if m.split(".")[0] == "PySide6"]


def test_engine_alone_imports_no_plotting_or_workbooks() -> None:
    found = _modules_after(
        PROBE.replace('("engine", "fileio", "charts", "reports")', '("engine",)')
    )
    roots = {m.split(".")[0] for m in found["modules"]}
    assert not roots & {"PySide6", "matplotlib", "openpyxl"}


def test_engine_source_has_no_forbidden_import() -> None:
    # catches imports inside functions that the run above may not reach
    forbidden = {"PySide6", "matplotlib", "openpyxl", "shiboken6"}
    for path in sorted((ROOT / "engine").glob("*.py")):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            names = []
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom) and node.module:
                names = [node.module]
            for name in names:
                assert name.split(".")[0] not in forbidden, f"{path.name} imports {name}"
