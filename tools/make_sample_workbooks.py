"""Rebuild the invented demo estimates in sample_workbooks/ (run from the repository root).

Each scenario teaches one thing about the normal shortcut; `tests/test_sample_workbooks.py`
checks with engine.analyze that it still does. Every name and number here is invented.
"""

from __future__ import annotations

import csv
import re
import sys
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

from openpyxl import Workbook
from openpyxl.styles import Alignment, Font
from openpyxl.utils import get_column_letter

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from engine import COLUMNS, CorrelationPair, CorrelationSpec, Estimate, LineItem  # noqa: E402
from engine.schedule.paths import path_names  # noqa: E402
from fileio.demo import SAMPLE_DIR  # noqa: E402
from reports.content import discrete_text  # noqa: E402

# One row: Item, Distribution, Low, Most likely, High, Low %, High %, Probability, Group,
# and for a schedule of parallel paths the Path text. A discrete item's Most likely is a
# tuple of (value, chance) pairs.
Row = tuple


@dataclass(frozen=True)
class Scenario:
    stem: str
    title: str
    notes: tuple[str, ...]
    unit: str
    teaches: str
    rows: tuple[Row, ...]
    pairs: tuple[tuple[str, str, float], ...] = ()
    groups: dict[str, float] = field(default_factory=dict)
    # Laid out as a cost plan: a heading and a subtotal for each group (typed and formula
    # subtotals by turns), the risk events on a sheet of their own with an Owner column.
    cost_plan: bool = False

    def estimate(self) -> Estimate:
        """The estimate the workbook stands for, built directly (tests compare the import)."""
        items = [_item(row, number, sheet) for sheet, number, row in placed_items(self)]
        spec = CorrelationSpec(
            # Row numbers as on the Correlations sheet, below its header.
            pairs=[CorrelationPair(a, b, c, row=k) for k, (a, b, c) in enumerate(self.pairs, 2)],
            groups=dict(self.groups),
        )
        return Estimate(items=items, title=self.title, unit=self.unit, correlation=spec)


def _item(row: Row, number: int, sheet: str | None = None) -> LineItem:
    name, family, low, ml, high, low_pct, high_pct, probability, group, *path = row
    discrete = family == "discrete"
    return LineItem(
        name=name,
        family=family,
        low=low,
        most_likely=None if discrete else ml,
        high=high,
        low_pct=low_pct,
        high_pct=high_pct,
        probability=1.0 if probability is None else probability,
        group=group,
        paths=path_names(path[0]) if path else (),
        values=tuple(ml) if discrete else (),
        row=number,
        sheet=sheet,
    )


_ = None  # blank cell, to keep the tables below readable

# One row a line, however long: the tables read like the sheets they become.
# fmt: off

FITOUT = Scenario(
    stem="office_fitout_holds",
    title="Demo office block - fit-out of levels 2 to 6",
    notes=(
        "Cost estimate in EUR, prices at tender date, excluding VAT.",
        "Invented scenario: 40 similar line items, none dominant, no risk events.",
    ),
    unit="EUR",
    teaches="many similar items: the normal shortcut holds at P50, P80 and P90",
    rows=(
        ("Site set-up and welfare", "triangular", 62_000, 68_000, 79_000, _, _, _, "Preliminaries"),
        ("Site management, 30 weeks", "pert", 182_000, 195_000, 226_000, _, _, _, "Preliminaries"),
        ("Hoist and loading bay hire", "uniform", 41_000, _, 52_000, _, _, _, "Preliminaries"),
        ("Building control and permits", "fixed", _, 18_500, _, _, _, _, "Preliminaries"),
        ("Soft strip, levels 2-3", "triangular", 71_000, 78_000, 96_000, _, _, _, "Strip-out"),
        ("Soft strip, levels 4-6", "triangular", 104_000, 115_000, 140_000, _, _, _, "Strip-out"),
        ("Asbestos survey and removal allowance", "pert", 38_000, 45_000, 66_000, _, _, _, "Strip-out"),
        ("Waste removal and recycling", "uniform", 29_000, _, 37_000, _, _, _, "Strip-out"),
        ("Plasterboard partitions", "triangular", 166_000, 178_000, 205_000, _, _, _, "Partitions and doors"),
        ("Glazed meeting-room screens", "pert", 142_000, 155_000, 188_000, _, _, _, "Partitions and doors"),
        ("Internal doors and ironmongery", "triangular", 88_000, 94_000, 109_000, _, _, _, "Partitions and doors"),
        ("Fire-rated doors to cores", "triangular", 47_000, 51_000, 60_000, _, _, _, "Partitions and doors"),
        ("Suspended ceilings, open plan", "pert", 131_000, 140_000, 161_000, _, _, _, "Ceilings"),
        ("Acoustic rafts, meeting rooms", "triangular", 36_000, 40_000, 49_000, _, _, _, "Ceilings"),
        ("Bulkheads and feature ceilings", "uniform", 44_000, _, 58_000, _, _, _, "Ceilings"),
        ("Raised access floor", "triangular", 152_000, 161_000, 184_000, _, _, _, "Floor finishes"),
        ("Carpet tiles", "pert", 98_000, 104_000, 121_000, _, _, _, "Floor finishes"),
        ("Vinyl to tea points and toilets", "triangular", 27_000, 29_000, 35_000, _, _, _, "Floor finishes"),
        ("Entrance matting and stair nosings", "fixed", _, 12_400, _, _, _, _, "Floor finishes"),
        ("Fan-coil units, replace and rebalance", "pert", 212_000, 228_000, 268_000, _, _, _, "Mechanical"),
        ("Ductwork modifications", "triangular", 118_000, 126_000, 150_000, _, _, _, "Mechanical"),
        ("Meeting-room cooling", "triangular", 64_000, 70_000, 84_000, _, _, _, "Mechanical"),
        ("Controls and building-management points", "normal", 52_000, _, 67_000, 10, 90, _, "Mechanical"),
        ("Sprinkler head relocation", "triangular", 41_000, 45_000, 55_000, _, _, _, "Mechanical"),
        ("Lighting, LED panels and controls", "pert", 176_000, 188_000, 214_000, _, _, _, "Electrical"),
        ("Small power and floor boxes", "triangular", 94_000, 101_000, 118_000, _, _, _, "Electrical"),
        ("Emergency lighting", "triangular", 23_000, 25_000, 30_000, _, _, _, "Electrical"),
        ("Fire alarm extension", "pert", 48_000, 52_000, 63_000, _, _, _, "Electrical"),
        ("Containment and sub-mains", "uniform", 58_000, _, 71_000, _, _, _, "Electrical"),
        ("Structured cabling", "triangular", 86_000, 92_000, 108_000, _, _, _, "Data and security"),
        ("Access control and CCTV", "triangular", 54_000, 59_000, 72_000, _, _, _, "Data and security"),
        ("Audio-visual fit-out, meeting rooms", "discrete", _, ((88_000, 0.3), (96_000, 0.5), (112_000, 0.2)), _, _, _, _, "Data and security"),
        ("Tea-point joinery", "triangular", 46_000, 50_000, 61_000, _, _, _, "Joinery"),
        ("Reception desk and feature wall", "pert", 39_000, 43_000, 56_000, _, _, _, "Joinery"),
        ("Lockers and storage walls", "triangular", 33_000, 36_000, 44_000, _, _, _, "Joinery"),
        ("Toilet refurbishment, 5 cores", "pert", 124_000, 133_000, 158_000, _, _, _, "Joinery"),
        ("Workstations and task chairs", "triangular", 168_000, 176_000, 199_000, _, _, _, "Furniture"),
        ("Meeting and breakout furniture", "uniform", 71_000, _, 86_000, _, _, _, "Furniture"),
        ("Design team fees", "fixed", _, 164_000, _, _, _, _, "Fees"),
        ("Commissioning and handover manuals", "triangular", 26_000, 28_000, 34_000, _, _, _, "Fees"),
    ),
)

PLANT = Scenario(
    stem="solvent_plant_upgrade_fails_at_p90",
    title="Demo chemical plant - solvent recovery unit upgrade",
    notes=(
        "Cost estimate in EUR, current prices. Risk events carry a probability of occurrence.",
        "Invented scenario: a few rare, large risk events make the normal shortcut fail at P90.",
    ),
    unit="EUR",
    teaches="rare large risk events: the normal shortcut fails at P90",
    rows=(
        ("Front-end engineering update", "triangular", 410_000, 450_000, 540_000, _, _, _, "Engineering"),
        ("Detailed design, process and piping", "pert", 1_150_000, 1_260_000, 1_520_000, _, _, _, "Engineering"),
        ("Hazard studies and safety case", "fixed", _, 185_000, _, _, _, _, "Engineering"),
        ("Distillation column internals", "pert", 1_620_000, 1_740_000, 2_060_000, _, _, _, "Equipment"),
        ("Reboiler and condenser exchangers", "triangular", 880_000, 940_000, 1_110_000, _, _, _, "Equipment"),
        ("Vapour recovery compressor skid", "lognormal", 1_300_000, _, 1_650_000, 10, 90, _, "Equipment"),
        ("Pumps and drives", "triangular", 520_000, 560_000, 650_000, _, _, _, "Equipment"),
        ("Solvent storage tank", "uniform", 610_000, _, 700_000, _, _, _, "Equipment"),
        ("Piping prefabrication", "pert", 1_240_000, 1_330_000, 1_600_000, _, _, _, "Piping"),
        ("Piping erection and testing", "triangular", 1_020_000, 1_100_000, 1_340_000, _, _, _, "Piping"),
        ("Pipe rack extension", "triangular", 420_000, 455_000, 530_000, _, _, _, "Civil and structural"),
        ("Foundations and bunding", "pert", 360_000, 390_000, 470_000, _, _, _, "Civil and structural"),
        ("Electrical distribution", "triangular", 590_000, 630_000, 740_000, _, _, _, "Electrical and instrumentation"),
        ("Instrumentation and control system", "pert", 860_000, 920_000, 1_090_000, _, _, _, "Electrical and instrumentation"),
        ("Shutdown tie-ins (21-day outage)", "discrete", _, ((480_000, 0.5), (560_000, 0.35), (690_000, 0.15)), _, _, _, _, "Construction"),
        ("Scaffolding and access", "uniform", 230_000, _, 290_000, _, _, _, "Construction"),
        ("Construction management", "normal", 640_000, _, 760_000, 10, 90, _, "Construction"),
        ("Pre-commissioning and start-up", "triangular", 270_000, 300_000, 380_000, _, _, _, "Commissioning"),
        ("Operator training", "fixed", _, 75_000, _, _, _, _, "Commissioning"),
        ("Risk: column shell fails inspection, replace shell", "pert", 3_600_000, 4_500_000, 6_900_000, _, _, 0.06, "Risk events"),
        ("Risk: contaminated ground under pipe rack", "triangular", 1_050_000, 1_500_000, 2_850_000, _, _, 0.08, "Risk events"),
        ("Risk: outage window missed, re-plan to next shutdown", "triangular", 2_250_000, 3_150_000, 4_800_000, _, _, 0.07, "Risk events"),
        ("Risk: compressor vendor fails, re-order elsewhere", "lognormal", 1_200_000, _, 3_300_000, 10, 90, 0.05, "Risk events"),
        ("Risk: regulator asks for a second vapour scrubber", "uniform", 1_350_000, _, 2_100_000, _, _, 0.10, "Risk events"),
    ),
    pairs=(
        ("Piping prefabrication", "Piping erection and testing", 0.6),
        ("Detailed design, process and piping", "Piping prefabrication", 0.3),
    ),
    groups={"Electrical and instrumentation": 0.4},
    cost_plan=True,
)

SCHEDULE = Scenario(
    stem="pump_station_schedule_skewed",
    title="Demo pumping station - critical path to handover",
    notes=(
        "Schedule estimate in working days; the activities below run one after another.",
        "Invented scenario: one long-lead delivery with a long right tail skews the total.",
    ),
    unit="working days",
    teaches="one skewed long-lead item: the total leans right, the shortcut puts P50 and P80 too late and P95 too early",
    rows=(
        ("Detailed design sign-off", "triangular", 18, 22, 30, _, _, _, "Design"),
        ("Planning consent decision", "discrete", _, ((10, 0.5), (20, 0.3), (45, 0.2)), _, _, _, _, "Consents"),
        ("Tender and award, civils", "pert", 25, 30, 42, _, _, _, "Procurement"),
        ("Variable-speed pump sets, long-lead delivery", "lognormal", 70, _, 190, 10, 90, _, "Procurement"),
        ("Site clearance and access road", "triangular", 8, 10, 15, _, _, _, "Civils"),
        ("Wet-well excavation and shoring", "pert", 20, 24, 38, _, _, _, "Civils"),
        ("Base slab and walls", "triangular", 16, 18, 26, _, _, _, "Civils"),
        ("Valve chamber", "uniform", 8, _, 12, _, _, _, "Civils"),
        ("Pump installation", "triangular", 6, 8, 12, _, _, _, "Mechanical and electrical"),
        ("Motor control centre and cabling", "pert", 10, 12, 18, _, _, _, "Mechanical and electrical"),
        ("Telemetry and controls", "normal", 5, _, 9, 10, 90, _, "Mechanical and electrical"),
        ("Wet commissioning", "triangular", 6, 8, 14, _, _, _, "Commissioning"),
        ("Reliability run", "fixed", _, 10, _, _, _, _, "Commissioning"),
        ("Handover documents and acceptance", "uniform", 3, _, 6, _, _, _, "Commissioning"),
    ),
)

HEATING = Scenario(
    stem="heat_plant_parallel_paths",
    title="Demo district heating plant - four parallel paths to ready for commissioning",
    notes=(
        "Schedule estimate in working days. The Path column names the path(s) each activity lies on; the finish is the latest path.",
        "Invented scenario: four paths of similar length, one shared start activity, one rare permit delay.",
    ),
    unit="working days",
    teaches="parallel paths merge: the finish is later than the longest path's normal shortcut at every level",
    rows=(
        ("Site mobilisation and setting-out", "triangular", 8, 10, 16, _, _, _, "Start", "Civils; Boiler; Grid connection; Controls"),
        ("Earthworks and piling", "pert", 24, 30, 44, _, _, _, "Civils", "Civils"),
        ("Boiler house frame and cladding", "triangular", 36, 42, 56, _, _, _, "Civils", "Civils"),
        ("Drainage and hardstanding", "uniform", 12, _, 20, _, _, _, "Civils", "Civils"),
        ("Biomass boiler, fabrication and delivery", "lognormal", 50, _, 74, 10, 90, _, "Boiler", "Boiler"),
        ("Boiler erection and refractory lining", "triangular", 18, 22, 32, _, _, _, "Boiler", "Boiler"),
        ("Flue and emissions test", "pert", 6, 8, 14, _, _, _, "Boiler", "Boiler"),
        ("Grid connection offer and design", "pert", 28, 34, 48, _, _, _, "Grid connection", "Grid connection"),
        ("Substation works by the network operator", "triangular", 46, 52, 66, _, _, _, "Grid connection", "Grid connection"),
        ("Risk: cable route needs a road-closure permit", "uniform", 15, _, 35, _, _, 0.08, "Grid connection", "Grid connection"),
        ("Control system design", "triangular", 16, 20, 28, _, _, _, "Controls", "Controls"),
        ("Panel build and factory test", "pert", 30, 34, 46, _, _, _, "Controls", "Controls"),
        ("Software, loop checks and cause-and-effect tests", "triangular", 28, 32, 44, _, _, _, "Controls", "Controls"),
    ),
)

# fmt: on

SCENARIOS = (PLANT, FITOUT, SCHEDULE, HEATING)
CSV_SCENARIO = SCHEDULE

NOTES = (
    ("Item", "A short description of the line item. Required; names should be unique."),
    ("Distribution", "One of: fixed, uniform, triangular, pert, normal, lognormal, discrete."),
    (
        "Low",
        "The low end of the range: an absolute bound, or the Low % percentile if Low % is given.",
    ),
    (
        "Most likely",
        "The most likely value (fixed, triangular, pert). For discrete items write the values and their chances, e.g. '100 @ 20%; 150 @ 50%; 300 @ 30%'.",
    ),
    (
        "High",
        "The high end of the range: an absolute bound, or the High % percentile if High % is given.",
    ),
    (
        "Low %",
        "Leave blank when Low is an absolute bound; else the percentile Low stands for, e.g. 10. Required for normal and lognormal.",
    ),
    (
        "High %",
        "Leave blank when High is an absolute bound; else the percentile High stands for, e.g. 90.",
    ),
    (
        "Probability",
        "Probability of occurrence for a risk event, e.g. 5% or 0.05. Leave blank for a base item (it always happens).",
    ),
    (
        "Group",
        "Optional: a cost group or work package, used in the report and for group correlations.",
    ),
    (
        "Path",
        "Schedules only, optional: the parallel path(s) an activity lies on, separated by ';' (e.g. 'Civils; Controls'). With two or more paths named, the finish is the latest path; activities naming none form one path of their own. Leave blank for a cost estimate.",
    ),
)


def response_plan_pair() -> tuple[Scenario, Scenario]:
    """An invented estimate before and after its risk response plan, for `rangefold compare`:
    the plan adds a ground investigation and early works, closes one risk, narrows two."""
    # fmt: off
    base = (
        ("Design and approvals", "triangular", 310_000, 340_000, 410_000, _, _, _, "Design"),
        ("Temporary works design", "pert", 95_000, 105_000, 140_000, _, _, _, "Design"),
        ("Piled abutments", "pert", 720_000, 790_000, 980_000, _, _, _, "Substructure"),
        ("River pier and cofferdam", "triangular", 880_000, 960_000, 1_250_000, _, _, _, "Substructure"),
        ("Steel deck fabrication", "triangular", 1_350_000, 1_450_000, 1_720_000, _, _, _, "Superstructure"),
        ("Deck erection by crane", "pert", 410_000, 450_000, 560_000, _, _, _, "Superstructure"),
        ("Parapets and surfacing", "uniform", 260_000, _, 320_000, _, _, _, "Finishes"),
        ("Lighting and handrail heating", "triangular", 140_000, 155_000, 190_000, _, _, _, "Finishes"),
        ("Site management, 40 weeks", "normal", 520_000, _, 610_000, 10, 90, _, "Preliminaries"),
        ("Demolish old footbridge", "triangular", 180_000, 200_000, 260_000, _, _, _, "Preliminaries"),
    )
    before_risks = (
        ("Risk: piling meets old river wall obstruction", "triangular", 250_000, 420_000, 900_000, _, _, 0.30, "Risk events"),
        ("Risk: river works window missed, wait a season", "pert", 600_000, 850_000, 1_500_000, _, _, 0.20, "Risk events"),
        ("Risk: gas main found in abutment, divert", "triangular", 150_000, 220_000, 400_000, _, _, 0.25, "Risk events"),
        ("Risk: steel price rise before order", "uniform", 80_000, _, 260_000, _, _, 0.40, "Risk events"),
    )
    after_items = (
        ("Ground investigation at abutments", "fixed", _, 85_000, _, _, _, _, "Design"),
        ("Early cofferdam works to widen river window", "triangular", 120_000, 140_000, 175_000, _, _, _, "Substructure"),
    )
    after_risks = (
        ("Risk: piling meets old river wall obstruction", "triangular", 150_000, 260_000, 500_000, _, _, 0.10, "Risk events"),
        ("Risk: river works window missed, wait a season", "pert", 600_000, 850_000, 1_500_000, _, _, 0.05, "Risk events"),
        ("Risk: steel price rise before order", "uniform", 80_000, _, 140_000, _, _, 0.40, "Risk events"),
    )
    # fmt: on
    notes = "Cost estimate in EUR, current prices. Risk events carry a probability of occurrence."
    before = Scenario(
        stem="footbridge_before_response_plan",
        title="Demo river footbridge - before the risk response plan",
        notes=(notes, "Invented scenario: compare it with footbridge_after_response_plan.xlsx."),
        unit="EUR",
        teaches="four open risks carry most of the P80 contingency",
        rows=base + before_risks,
    )
    after = Scenario(
        stem="footbridge_after_response_plan",
        title="Demo river footbridge - after the risk response plan",
        notes=(
            notes,
            "Invented scenario: ground investigation and early works bought; gas main located and cleared.",
        ),
        unit="EUR",
        teaches="mitigation costs less than the contingency it releases at P80",
        rows=base[:2] + after_items[:1] + base[2:4] + after_items[1:] + base[4:] + after_risks,
    )
    return before, after


RESPONSE_PLAN = response_plan_pair()
ESTIMATE_SHEET = "Estimate"
REGISTER_SHEET = "Risk register"
REGISTER_HEADER_ROW = 3
# Who looks after each risk event, kept by the import as the items' notes.
OWNERS = ("Inspection lead", "Civil lead", "Shutdown planner", "Procurement lead", "Permitting")


def header_row() -> int:
    """Title, two note lines and a blank line sit above the header."""
    return 5


@dataclass(frozen=True)
class PlanRow:
    """A row of the Estimate sheet: a heading, an item, or a subtotal (typed or a formula)."""

    kind: str  # "heading", "item", "typed subtotal", "formula subtotal"
    number: int
    row: Row | None = None
    label: str = ""
    value: float = 0.0
    formula: str = ""


def plan_rows(scenario: Scenario) -> list[PlanRow]:
    """The Estimate sheet's rows below the header, headings and subtotals included."""
    number = header_row()
    if not scenario.cost_plan:
        return [PlanRow("item", number + 1 + k, row) for k, row in enumerate(scenario.rows)]
    rows: list[PlanRow] = []
    sections: dict[str, list[Row]] = {}
    for row in scenario.rows:
        if row[7] is None:  # no probability: a base item, on the plan
            sections.setdefault(row[8], []).append(row)
    for k, (group, members) in enumerate(sections.items()):
        number += 1
        rows.append(PlanRow("heading", number, label=group))
        first = number + 1
        for row in members:
            number += 1
            rows.append(PlanRow("item", number, row))
        base = sum(r[3] for r in members if isinstance(r[3], int | float))
        if not base:
            continue
        number += 1
        if k % 2 == 0:
            rows.append(
                PlanRow("typed subtotal", number, label=f"Subtotal {group.lower()}", value=base)
            )
        else:
            formula = f"=SUM(D{first}:D{number - 1})"
            rows.append(
                PlanRow(
                    "formula subtotal",
                    number,
                    label=f"Total {group.lower()}",
                    value=base,
                    formula=formula,
                )
            )
    return rows


def register_rows(scenario: Scenario) -> list[Row]:
    return [r for r in scenario.rows if r[7] is not None] if scenario.cost_plan else []


def placed_items(scenario: Scenario) -> list[tuple[str, int, Row]]:
    """(sheet, row number, row) of every item, in the order the import reads them."""
    placed = [(ESTIMATE_SHEET, p.number, p.row) for p in plan_rows(scenario) if p.kind == "item"]
    start = REGISTER_HEADER_ROW + 1
    placed += [(REGISTER_SHEET, start + k, r) for k, r in enumerate(register_rows(scenario))]
    return placed


def cell_values(row: Row) -> list:
    name, family, low, ml, high, low_pct, high_pct, probability, group, *path = row
    ml_cell = discrete_text(ml) if family == "discrete" else ml
    path_cell = path[0] if path else None
    return [name, family, low, ml_cell, high, low_pct, high_pct, probability, group, path_cell]


def write_workbook(scenario: Scenario, path: Path) -> None:
    book = Workbook()
    sheet = book.active
    sheet.title = "Estimate"
    sheet["A1"] = scenario.title
    sheet["A1"].font = Font(bold=True, size=14)
    for k, line in enumerate(scenario.notes, start=2):
        sheet.cell(row=k, column=1, value=line).font = Font(italic=True)
    top = header_row()
    for col, name in enumerate(COLUMNS, start=1):
        sheet.cell(row=top, column=col, value=name).font = Font(bold=True)
    money = "#,##0" if scenario.unit != "working days" else "0"
    results = {}
    for placed in plan_rows(scenario):
        r = placed.number
        if placed.kind == "item":
            _write_row(sheet, r, cell_values(placed.row), money)
        else:
            sheet.cell(row=r, column=1, value=placed.label).font = Font(bold=True)
        if placed.kind == "typed subtotal":
            sheet.cell(row=r, column=4, value=placed.value).number_format = money
        if placed.kind == "formula subtotal":
            sheet.cell(row=r, column=4, value=placed.formula).number_format = money
            results[f"D{r}"] = placed.value
    for col, width in enumerate((52, 13, 13, 34, 13, 8, 8, 12, 30, 40), start=1):
        sheet.column_dimensions[get_column_letter(col)].width = width
    sheet.freeze_panes = sheet.cell(row=top + 1, column=2)
    if register_rows(scenario):
        register = book.create_sheet(REGISTER_SHEET)
        register["A1"] = f"Risk register - {scenario.title.split(' - ')[-1]}"
        register["A1"].font = Font(bold=True, size=14)
        for col, name in enumerate((*COLUMNS, "Owner"), start=1):
            register.cell(row=REGISTER_HEADER_ROW, column=col, value=name).font = Font(bold=True)
        for k, row in enumerate(register_rows(scenario)):
            values = [*cell_values(row), OWNERS[k % len(OWNERS)]]
            _write_row(register, REGISTER_HEADER_ROW + 1 + k, values, money)
        for col, width in enumerate((52, 13, 13, 34, 13, 8, 8, 12, 16, 12, 20), start=1):
            register.column_dimensions[get_column_letter(col)].width = width
    if scenario.pairs or scenario.groups:
        corr = book.create_sheet("Correlations")
        corr.append(["Item A", "Item B", "Coefficient"])
        for a, b, c in scenario.pairs:
            corr.append([a, b, c])
        for name, c in scenario.groups.items():
            corr.append(["Group", name, c])
        for col, width in ((1, 44), (2, 44), (3, 12)):
            corr.column_dimensions[get_column_letter(col)].width = width
    book.save(path)
    _save_results(path, results)


def _write_row(sheet, r: int, values: list, money: str) -> None:
    for col, value in enumerate(values, start=1):
        cell = sheet.cell(row=r, column=col, value=value)
        if col in (3, 4, 5) and isinstance(value, int | float):
            cell.number_format = money
        if col == 8 and value is not None:
            cell.number_format = "0%"


def _save_results(path: Path, results: dict[str, float]) -> None:
    """Give the first sheet's formulas their results, as a spreadsheet program saves them
    (openpyxl writes formulas without one), so the demo reads like a file saved by hand."""
    if not results:
        return
    with zipfile.ZipFile(path) as src:
        parts = [(info, src.read(info)) for info in src.infolist()]
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
        for info, data in parts:
            if info.filename == "xl/worksheets/sheet1.xml":
                xml = data.decode("utf-8")
                for cell, value in results.items():
                    xml, count = re.subn(
                        rf'(<c r="{cell}"[^>]*><f>[^<]*</f>)<v\s*/>', rf"\g<1><v>{value:g}</v>", xml
                    )
                    assert count == 1, f"formula cell {cell} not found"
                data = xml.encode("utf-8")
            dst.writestr(info, data)


def write_template(path: Path) -> None:
    book = Workbook()
    sheet = book.active
    sheet.title = "Estimate"
    for col, name in enumerate(COLUMNS, start=1):
        sheet.cell(row=1, column=col, value=name).font = Font(bold=True)
        sheet.column_dimensions[get_column_letter(col)].width = 16 if col > 1 else 40
    sheet.freeze_panes = "A2"
    notes = book.create_sheet("Notes")
    notes.append(["Column", "What to enter"])
    for cell in notes[1]:
        cell.font = Font(bold=True)
    for column, text in NOTES:
        notes.append([column, text])
    notes.append([])
    notes.append(
        [
            "Correlations",
            "Optional second sheet named Correlations with columns Item A, Item B, Coefficient (rank correlation between -1 and 1); a row 'Group, <group name>, <coefficient>' applies to every pair in a group.",
        ]
    )
    notes.column_dimensions["A"].width = 16
    notes.column_dimensions["B"].width = 110
    for row in notes.iter_rows(min_row=2):
        row[1].alignment = Alignment(wrap_text=True, vertical="top")
    book.save(path)


def csv_text_row(row: Row) -> list[str]:
    values = cell_values(row)
    probability = values[7]
    values[7] = "" if probability is None else f"{100 * probability:g}%"
    return [
        "" if v is None else (f"{v:g}" if isinstance(v, int | float) else str(v)) for v in values
    ]


def write_csv(scenario: Scenario, path: Path) -> None:
    with path.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle)
        writer.writerow(COLUMNS)
        for row in scenario.rows:
            writer.writerow(csv_text_row(row))


def main(folder: Path = SAMPLE_DIR) -> list[Path]:
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for scenario in (*SCENARIOS, *RESPONSE_PLAN):
        path = folder / f"{scenario.stem}.xlsx"
        write_workbook(scenario, path)
        written.append(path)
    template = folder / "import_template.xlsx"
    write_template(template)
    csv_path = folder / f"{CSV_SCENARIO.stem}.csv"
    write_csv(CSV_SCENARIO, csv_path)
    return [*written, template, csv_path]


if __name__ == "__main__":
    for p in main():
        print(p.relative_to(ROOT))
