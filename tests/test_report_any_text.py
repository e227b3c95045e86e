"""The PDF report prints any text the user typed: U+FEFF and other invisible format characters
(which made the PDF writer fail with an IndexError), CJK, emoji with variation selectors. Each
character is drawn by an installed font or shown as a visible substitute with a notice."""

from __future__ import annotations

import io
import subprocess

from engine import Estimate, LineItem, Settings, analyze
from reports import write_report
from reports.pdf import write_pdf
from reports.provenance import provenance
from reports.text_fonts import SUBSTITUTE, installed_fonts, printable

NAMES = ["Pumps \ufeff seal", "配管工事", "Crane 🏗️ hire", "Zero\u200bwidth", "Ünïcödé"]


def estimate() -> Estimate:
    items = [LineItem(n, "uniform", 0.0, None, 1.0 + k) for k, n in enumerate(NAMES)]
    return Estimate(items=items, title="Plant \ufeff 試験", unit="EUR")


def test_every_printed_character_has_a_font_or_is_the_substitute():
    covered = [chars for _, chars in installed_fonts()]
    for name in NAMES:
        text, substituted = printable(name)
        assert "\ufeff" not in text and "\u200b" not in text and "\ufe0f" not in text
        assert text.count(SUBSTITUTE) == substituted
        assert all(c == SUBSTITUTE or any(ord(c) in f for f in covered) for c in text)


def test_the_pdf_is_written_with_a_notice_for_what_no_font_draws(tmp_path):
    data = estimate()
    path = tmp_path / "any text.pdf"
    write_report(path, data, analyze(data), Settings(unit="EUR"))
    assert path.read_bytes().startswith(b"%PDF")
    text = subprocess.run(["pdftotext", str(path), "-"], capture_output=True, text=True).stdout
    assert "Pumps" in text and "Ünïcödé" in text
    any_missing = any(printable(n)[1] for n in NAMES)
    assert ("have no font on this computer" in " ".join(text.split())) == any_missing


def test_plain_text_is_left_alone():
    assert printable("Crane hire (EUR 1,200k)") == ("Crane hire (EUR 1,200k)", 0)


def test_the_pdf_writer_alone_does_not_raise_on_format_characters():
    data = estimate()
    stream = io.BytesIO()
    pages = write_pdf(stream, data, analyze(data), provenance(data, Settings(), None))
    assert pages >= 3
