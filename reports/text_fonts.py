"""Any text the user typed prints in the PDF report: a font with wide coverage is used where
one is installed (DejaVu ships with matplotlib; Noto CJK, WenQuanYi and the like when the system
has them, as fallbacks); invisible format characters (U+FEFF, zero-width spaces), which have no
glyph and made the PDF writer fail, are dropped; any other character no installed font can draw
is printed as a visible substitute and counted, so the report can say so."""

from __future__ import annotations

import unicodedata
from functools import cache

from matplotlib import font_manager
from matplotlib.figure import Figure
from matplotlib.ft2font import FT2Font
from matplotlib.table import Table
from matplotlib.text import Text
from matplotlib.ticker import Formatter

# Tried in order; the first is matplotlib's own and always present.
WIDE_FONTS = (
    "DejaVu Sans",
    "Noto Sans",
    "Noto Sans CJK JP",
    "Noto Sans CJK SC",
    "Noto Sans CJK KR",
    "WenQuanYi Zen Hei",
    "Droid Sans Fallback",
    "Noto Sans Symbols 2",
    "Symbola",
)
SUBSTITUTE = "\ufffd"  # the replacement character, drawn by DejaVu as a boxed question mark


@cache
def installed_fonts() -> tuple[tuple[str, frozenset[int]], ...]:
    """The wide fonts found on this computer, each with the characters it can draw."""
    found = []
    for name in WIDE_FONTS:
        try:
            path = font_manager.findfont(
                font_manager.FontProperties(family=name), fallback_to_default=False
            )
            found.append((name, frozenset(FT2Font(path).get_charmap())))
        except (ValueError, RuntimeError, OSError):
            continue
    return tuple(found)


def font_family() -> list[str]:
    """For rcParams["font.family"]: matplotlib falls back along this list glyph by glyph."""
    return [name for name, _ in installed_fonts()] or ["DejaVu Sans"]


def printable(text: str) -> tuple[str, int]:
    """The text as the fonts can draw it, and how many characters were substituted."""
    if text.isascii():
        return text, 0
    covered = [chars for _, chars in installed_fonts()]
    out = []
    substituted = 0
    for char in text:
        if char in "\n\t":
            out.append(char)
        elif unicodedata.category(char) in ("Cf", "Cc") or _variation_selector(char):
            continue  # invisible: nothing to draw (fonts map some to empty glyphs that break)
        elif any(ord(char) in chars for chars in covered):
            out.append(char)
        else:
            out.append(SUBSTITUTE)
            substituted += 1
    return "".join(out), substituted


class PrintableTicks(Formatter):
    """Another formatter's tick labels, made printable."""

    def __init__(self, inner: Formatter):
        self.inner = inner

    def set_axis(self, axis) -> None:
        super().set_axis(axis)
        self.inner.set_axis(axis)

    def __call__(self, x, pos=None) -> str:
        return printable(str(self.inner(x, pos)))[0]

    def format_ticks(self, values) -> list[str]:
        return [printable(str(label))[0] for label in self.inner.format_ticks(values)]

    def get_offset(self) -> str:
        return self.inner.get_offset()


def _variation_selector(char: str) -> bool:
    code = ord(char)
    return 0xFE00 <= code <= 0xFE0F or 0xE0100 <= code <= 0xE01EF


def make_printable(figure: Figure) -> int:
    """Rewrite every text on the page so that it can be drawn; returns the substitutions."""
    total = 0
    texts = list(figure.findobj(Text))
    for table in figure.findobj(Table):  # a table's cells keep their texts out of findobj
        texts += [cell.get_text() for cell in table.get_celld().values()]
    for artist in texts:
        clean, substituted = printable(artist.get_text())
        if substituted or clean != artist.get_text():
            artist.set_text(clean)
        total += substituted
    for axes in figure.axes:  # tick labels are made again from the formatter at each draw
        for axis in (axes.xaxis, axes.yaxis):
            inner = axis.get_major_formatter()
            labels = inner.format_ticks(axis.get_majorticklocs())
            total += sum(printable(str(label))[1] for label in labels)
            axis.set_major_formatter(PrintableTicks(inner))
    return total


def substitution_notice(count: int) -> str:
    return (
        f"{count} character(s) on this page have no font on this computer and are shown "
        f"as {SUBSTITUTE}; the workbook report keeps the text as typed."
    )
