"""Importing CSV exports in the dialects spreadsheet programs write: `;` with a decimal comma
(locales where the comma is the decimal mark, e.g. de-DE per CLDR), tab-separated, with and
without a UTF-8 byte-order mark, Windows-1252 and UTF-16 text.

Expected values are the numbers written into each file.
"""

from __future__ import annotations

import codecs
from pathlib import Path

import pytest

from fileio.readers import preview_table, read_estimate


def write(tmp_path: Path, name: str, text: str, encoding: str = "utf-8") -> Path:
    path = tmp_path / name
    path.write_bytes(text.encode(encoding))
    return path


def test_semicolon_decimal_comma_cp1252(tmp_path: Path) -> None:
    text = (
        "Kostenschätzung Lagerhalle;;;;\r\n"
        ";;;;\r\n"
        "Item;Low;Most likely;High;Probability\r\n"
        "Fundament;12,5;15;20,75;\r\n"
        "Stahlbau;1.200;1.350,5;1.900;\r\n"
        "Hochwasser;€ 100;€ 250;€ 900;12,5%\r\n"
    )
    path = write(tmp_path, "halle.csv", text, "cp1252")
    estimate = read_estimate(path)
    summary = estimate.summary
    assert (summary["encoding"], summary["delimiter"], summary["decimal"]) == (
        "cp1252",
        "semicolon",
        ",",
    )
    assert summary["header_row"] == 3 and estimate.title == "Kostenschätzung Lagerhalle"
    found, steel, flood = estimate.items
    assert (found.low, found.most_likely, found.high) == (12.5, 15, 20.75)
    assert (steel.low, steel.most_likely, steel.high) == (1200, 1350.5, 1900)
    assert (flood.low, flood.high) == (100, 900) and flood.probability == pytest.approx(0.125)
    assert estimate.problems == []


def test_tab_delimited_with_bom(tmp_path: Path) -> None:
    text = "Description\tMin\tML\tMax\tGroup\nSurvey\t1,200\t1,500\t2,400\tDesign\n"
    path = tmp_path / "survey.tsv"
    path.write_bytes(codecs.BOM_UTF8 + text.encode("utf-8"))
    estimate = read_estimate(path)
    assert estimate.summary["encoding"] == "utf-8-sig"
    assert estimate.summary["delimiter"] == "tab" and estimate.summary["decimal"] == "."
    (item,) = estimate.items
    # The BOM must not stick to the first header, or "Description" would not be recognised.
    assert (item.name, item.low, item.most_likely, item.high) == ("Survey", 1200, 1500, 2400)


def test_utf16_unicode_text_export(tmp_path: Path) -> None:
    text = "Item\tLow\tMost likely\tHigh\r\nPaint\t3\t4\t7\r\n"
    path = write(tmp_path, "paint.txt", text, "utf-16")  # Python writes a BOM for utf-16
    (item,) = read_estimate(path).items
    assert (item.low, item.most_likely, item.high) == (3, 4, 7)


def test_comma_delimited_with_quoted_currency(tmp_path: Path) -> None:
    text = (
        'Item,Low,Most likely,High,Chance (%)\n"Access road","$12,500","$14,000","$21,000",\n'
        'Archaeology,"$5,000","$8,000","$30,000",20\n'
    )
    estimate = read_estimate(write(tmp_path, "road.csv", text))
    road, dig = estimate.items
    assert (road.low, road.high) == (12500, 21000)
    assert dig.probability == pytest.approx(0.2)  # the header says %, so 20 means 20%


def test_bare_probability_above_one_is_flagged(tmp_path: Path) -> None:
    text = "Item,Low,Most likely,High,Probability\nStrike,10,20,40,30\n"
    estimate = read_estimate(write(tmp_path, "strike.csv", text))
    (item,) = estimate.items
    (problem,) = item.read_problems
    assert problem.column == "Probability" and problem.row == 2
    assert "above 1" in problem.message and "30%" in problem.fix
    assert item.raw == {"Probability": "30"}
    assert str(problem).startswith("row 2, column 'Probability', item 'Strike': ")


def test_dashes_and_implied_families(tmp_path: Path) -> None:
    text = (
        "Item;Distribution;Low;Most likely;High;Probability;Group\n"
        "Insurance;-;;4 200;;-;-\n"  # a lone value: fixed; dashes in optional columns: blank
        "Claims;;;100 @ 20%; 150 @ 80%;;;\n"
        "Scaffold;;-;12;20;;\n"  # a dash in an amount column is refused
    )
    path = write(
        tmp_path, "dash.csv", text.replace("100 @ 20%; 150 @ 80%", '"100 @ 20%; 150 @ 80%"')
    )
    insurance, claims, scaffold = read_estimate(path).items
    assert insurance.family == "fixed" and insurance.most_likely == 4200
    assert insurance.probability == 1.0 and insurance.group == "" and not insurance.read_problems
    assert claims.family == "discrete" and claims.values == ((100, 0.2), (150, 0.8))
    (problem,) = scaffold.read_problems
    assert problem.column == "Low" and "dash" in problem.message
    assert scaffold.raw == {"Low": "-"}


def test_every_row_accounted_for(tmp_path: Path) -> None:
    text = (
        "Item,Low,Most likely,High,Notes\n"
        "A,1,2,3,\n"
        ",,,,\n"
        "B,x,2,3,\n"
        ",,,,see appendix\n"
        "Grand total:,1,4,6,\n"
        ",,,,\n"
        ",,,,\n"
    )
    estimate = read_estimate(write(tmp_path, "count.csv", text))
    summary = estimate.summary
    assert [i.name for i in estimate.items] == ["A", "B"]
    assert summary["rows_read"] == 5  # trailing blank rows are not rows of the table
    assert [s["row"] for s in summary["rows_skipped"]] == [3, 5, 6]
    assert "Notes" in summary["rows_skipped"][1]["reason"]
    assert summary["columns_ignored"] == ["Notes"]
    assert summary["drafts"] == 1 and summary["items_taken"] == 2
    assert summary["rows_read"] == summary["items_taken"] + len(summary["rows_skipped"])


def test_mapping_override_csv(tmp_path: Path) -> None:
    text = "Code;Work;Best;Base;Worst;Group\nA1;Doors;3;4;6;Joinery\n"
    path = write(tmp_path, "o.csv", text)
    # A given mapping is complete: "Group", left out (set to "not used"), is not read.
    mapping = {"Item": "Work", "Low": "Best", "Most likely": "Base", "High": "Worst"}
    estimate = read_estimate(path, mapping=mapping)
    (item,) = estimate.items
    assert (item.name, item.low, item.most_likely, item.high, item.group) == ("Doors", 3, 4, 6, "")
    assert estimate.summary["columns_ignored"] == ["Code", "Group"]
    with pytest.raises(ValueError, match="has the headers the mapping names"):
        read_estimate(path, mapping={"Item": "Task"})


def test_no_header_and_unknown_format(tmp_path: Path) -> None:
    with pytest.raises(ValueError, match="no header row found"):
        read_estimate(write(tmp_path, "x.csv", "1,2,3\n4,5,6\n"))
    with pytest.raises(ValueError, match=r"old-style \.xls"):
        read_estimate(write(tmp_path, "x.xls", ""))
    with pytest.raises(ValueError, match="Rangefold reads"):
        read_estimate(write(tmp_path, "x.ods", ""))


def test_preview_of_unrecognised_table_still_shows_rows(tmp_path: Path) -> None:
    preview = preview_table(write(tmp_path, "y.csv", "Code,Amount\nA,1\n"))
    assert preview.sheets == [] and preview.sheet == ""
    assert preview.header_row == 1 and preview.headers == ["Code", "Amount"]
    assert preview.mapping == {} and preview.rows == [["A", "1"]]
