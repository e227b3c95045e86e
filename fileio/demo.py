"""Where the invented demo estimates live, and which one the window opens first."""

from __future__ import annotations

from pathlib import Path

SAMPLE_DIR = Path(__file__).resolve().parents[1] / "sample_workbooks"
# The one that shows the normal shortcut failing at P90 (rare, large risk events).
DEMO_WORKBOOK = SAMPLE_DIR / "solvent_plant_upgrade_fails_at_p90.xlsx"
