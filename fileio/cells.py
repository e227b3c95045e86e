"""Cell text to numbers, chances and distribution names, as analysts write them.

Shared by the importer, the window's editors and clipboard paste, so the window accepts what
the importer accepts. Every failure raises `CellError` (a `ValueError`) whose text says what
is wrong and how to fix it, ready to show beside the cell.

Rules (also in the user documentation):
- Amounts may carry a currency symbol or a three-letter code (`$12,500`, `12 500 €`,
  `EUR 1.2M`), thousands separators (`,` `.` space, apostrophe), accounting negatives
  `(1,200)`, and a suffix `k`/`K` (thousand) or `M` (million). A lower-case `m` is refused:
  it could mean milli, metre or million.
- Without a file-wide decimal mark, one comma followed by exactly three digits (`12,500`) is a
  thousands separator; any other single comma (`12,5`) is a decimal comma; with both marks the
  later one is the decimal mark.
- A lone dash (`-`, `–`, `—`) is "not given" in optional columns (Distribution, Low %, High %,
  Probability, Group, Shape). In an amount column it is refused: accounting formats show 0 as a
  dash, so it may mean 0 or "not given", and guessing either could change the total.
- Amounts beyond ±1e15 (`fileio.safety.MAX_MAGNITUDE`) are refused: their moments overflow.
"""

from __future__ import annotations

import re
import unicodedata

from engine import FAMILIES
from fileio.safety import MAX_MAGNITUDE

# Characters a spreadsheet reads as the start of a formula or a control sequence.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


class CellError(ValueError):
    """A cell that cannot be read; `message` says why, `fix` what to type instead."""

    def __init__(self, message: str, fix: str):
        self.message = message
        self.fix = fix
        super().__init__(f"{message} {fix}")


DASHES = frozenset({"-", "–", "—", "‒", "−"})
SPREADSHEET_ERRORS = frozenset(
    {"#DIV/0!", "#N/A", "#VALUE!", "#REF!", "#NAME?", "#NUM!", "#NULL!", "#SPILL!", "#CALC!"}
)
_SUFFIXES = {"k": 1e3, "K": 1e3, "M": 1e6}
_GROUP_MARKS = frozenset({",", ".", " ", "\u00a0", "\u202f", "'", "’"})
_PLAIN = re.compile(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?")
_CODE_BEFORE = re.compile(r"^([A-Z]{3})(?=[\s\d(+\-.])\s*")
_CODE_AFTER = re.compile(r"(?<=[\d\s).])\s*([A-Z]{3})$")

# Distribution names as they appear in templates and other tools' exports, squeezed
# (lower case, no spaces, hyphens, underscores or dots).
_FAMILY_SYNONYMS = {
    "fixed": ("fixed", "const", "constant", "point", "single", "singlepoint", "deterministic"),
    "uniform": ("uniform", "unif", "flat", "rectangular", "rect"),
    "triangular": ("triangular", "triangle", "triang", "tri"),
    "pert": ("pert", "betapert", "bpert", "pertbeta"),
    "normal": ("normal", "norm", "gauss", "gaussian"),
    "lognormal": ("lognormal", "lognorm", "logn"),
    "discrete": ("discrete", "disc", "scenarios"),
}
_FAMILY_BY_WORD = {word: family for family, words in _FAMILY_SYNONYMS.items() for word in words}


def is_blank(text: str) -> bool:
    return not text.strip()


def is_dash(text: str) -> bool:
    """A lone dash: "not given" in an optional column (see the module rules)."""
    return text.strip() in DASHES


def parse_number(text: str, *, decimal: str | None = None) -> float:
    """An amount as typed: currency, grouping, accounting negatives and k/M suffixes allowed.

    `decimal` is the file's decimal mark ("." or ","), when the file shows which it uses;
    None judges each cell by itself (see the module rules).
    """
    if decimal != "," and _PLAIN.fullmatch(text):
        # Plain digits, the common case, read as the full path below would read them, at a
        # fraction of its cost (a 100,000-row paste parses 300,000 of them).
        value = float(text) + 0.0  # "+ 0.0": "-0" is 0, not -0.0
        if abs(value) <= MAX_MAGNITUDE:
            return value
    s = _clean(text)
    if not s:
        raise CellError("the cell is empty.", "enter a number.")
    _refuse_non_amounts(s)
    negative = False
    if s.startswith("(") and s.endswith(")"):
        negative, s = True, s[1:-1].strip()
    s, sign = _strip_currency_and_sign(s)
    negative ^= sign
    if s.endswith("%"):
        raise CellError(
            f"{text.strip()!r} is a percentage, not an amount.",
            "enter the amount itself, or put percentages in the Probability or Low %/High % columns.",
        )
    scale = 1.0
    if s and s[-1] in _SUFFIXES and len(s) > 1:
        scale, s = _SUFFIXES[s[-1]], s[:-1].rstrip()
    elif s.endswith("m") and len(s) > 1 and s[-2].isdigit():
        raise CellError(
            f"{text.strip()!r}: 'm' could mean milli, metre or million.",
            "write M for million or k for thousand, or type the full number.",
        )
    value = _digits(s, decimal, text) * scale
    if not value <= MAX_MAGNITUDE:  # also catches inf: `1e999` reads as a float
        raise CellError(
            f"{text.strip()!r} is beyond ±{MAX_MAGNITUDE:g}, too large to total reliably.",
            "check the unit (thousands or millions?) and enter a smaller number.",
        )
    return (-value if negative else value) + 0.0  # "(0)" is 0, not -0.0


def parse_probability(
    text: str, *, percent_header: bool = False, decimal: str | None = None
) -> float:
    """A probability of occurrence: `30%`, `0.3`, or `30` when the header says `%`.

    A bare number above 1 under a header without `%` is refused rather than guessed: `30`
    might be a typo for 0.30 or mean 30%. Under a `%` header a bare number at or below 1 is
    refused for the same reason (0.3 might mean 30%). Range checks (above 0, at most 1) are
    left to the engine's validation so each problem is reported once.
    """
    s = _clean(text)
    if not s:
        raise CellError("the cell is empty.", "enter a probability such as 30% or 0.3.")
    if s.endswith("%"):
        return _plain_number(s[:-1], decimal, text) / 100
    value = _plain_number(s, decimal, text)
    if percent_header:
        if 0 < value <= 1:
            raise CellError(
                f"{s!r} in a column of percentages could mean {value:g}% or {value * 100:g}%.",
                f"write {value * 100:g}% (or {value * 100:g}) for {value * 100:g}%, or {value:g}% for {value:g}%.",
            )
        return value / 100
    if value > 1:
        raise CellError(
            f"{s!r} is above 1 and the column header does not say its values are percentages.",
            f"write {value:g}% (or {value / 100:g}) for a {value:g}% chance, or add % to the header.",
        )
    return value


def parse_percentile(text: str, *, decimal: str | None = None) -> float:
    """A percentile end in percent points: `10`, `10%` or `P10` all mean the 10th percentile."""
    s = _clean(text)
    if s[:1] in ("P", "p") and len(s) > 1 and (s[1].isdigit() or s[1] == "."):
        s = s[1:]
    if s.endswith("%"):
        return _plain_number(s[:-1], decimal, text)
    value = _plain_number(s, decimal, text)
    if 0 < value < 1:
        raise CellError(
            f"{s!r} looks like a fraction; percentiles are written in percent points.",
            f"write {value * 100:g} (or {value * 100:g}%) for the {value * 100:g}th percentile.",
        )
    return value


def parse_discrete(text: str, *, decimal: str | None = None) -> tuple[tuple[float, float], ...]:
    """Values and their chances: `100 @ 20%; 150 @ 50%; 300 @ 30%` (newlines also separate).

    The chances' total is checked by the engine's validation, which reports it once.
    """
    pieces = [p.strip() for p in re.split(r"[;\n]", text) if p.strip()]
    if not pieces:
        raise CellError(
            "a discrete item needs its values and their chances.",
            "write them as '100 @ 20%; 150 @ 50%; 300 @ 30%'.",
        )
    pairs = []
    for piece in pieces:
        value_text, at, chance_text = piece.partition("@")
        if not at:
            raise CellError(
                f"{piece!r} has no chance.",
                "write each value as 'value @ chance', e.g. '150 @ 50%', separated by ';'.",
            )
        try:
            value = parse_number(value_text, decimal=decimal)
        except CellError as bad:
            raise CellError(f"in {piece!r}: {bad.message}", bad.fix) from None
        chance = chance_text.strip()
        if chance.endswith("%"):
            weight = _plain_number(chance[:-1], decimal, piece) / 100
        else:
            weight = _plain_number(chance, decimal, piece)
            if weight > 1:
                raise CellError(
                    f"the chance in {piece!r} is above 1.",
                    f"write it as a percentage ({weight:g}%) or a fraction ({weight / 100:g}).",
                )
        pairs.append((value, weight))
    return tuple(pairs)


def parse_family(text: str) -> str:
    """The engine's family name for a distribution name or one of its usual synonyms."""
    word = re.sub(r"[\s\-_.]", "", text.strip().lower())
    if word in _FAMILY_BY_WORD:
        return _FAMILY_BY_WORD[word]
    raise CellError(
        f"{text.strip()!r} is not a distribution Rangefold knows.",
        f"use one of: {', '.join(FAMILIES)} (tri, beta-pert, flat, constant and log-normal are also understood).",
    )


def _clean(text: str) -> str:
    s = unicodedata.normalize("NFKC", str(text)).strip()
    return s.replace("\u2212", "-")


def _refuse_non_amounts(s: str) -> None:
    if s.startswith("="):
        raise CellError(
            f"{s!r} is a formula with no saved result.",
            "open the workbook in a spreadsheet program, let it recalculate, save it, and import again; or type the value.",
        )
    if s.upper() in SPREADSHEET_ERRORS:
        raise CellError(
            f"{s} is a spreadsheet error value.",
            "fix the formula that gives it, or type the value.",
        )
    if s in DASHES:
        raise CellError(
            "a lone dash can mean 0 or 'not given'.",
            "type 0 if the amount is zero, or leave the cell empty.",
        )
    if re.fullmatch(r"\d{4}-\d{2}-\d{2}([ T]\d{2}:\d{2}(:\d{2}(\.\d+)?)?)?", s):
        raise CellError(
            f"{s!r} is a date, not an amount.",
            "format the cell as a number and enter the amount.",
        )


def _strip_currency_and_sign(s: str) -> tuple[str, bool]:
    """Remove currency marks and a leading sign in any order: `-$1,200`, `$-1,200`, `€ -12`."""
    negative = False
    while True:
        before = s
        s = _CODE_BEFORE.sub("", s)
        s = _CODE_AFTER.sub("", s)
        while s and unicodedata.category(s[0]) == "Sc":
            s = s[1:].lstrip()
        while s and unicodedata.category(s[-1]) == "Sc":
            s = s[:-1].rstrip()
        if s[:1] in ("-", "+"):
            negative ^= s[0] == "-"
            s = s[1:].lstrip()
        if s == before:
            return s, negative


def _plain_number(s: str, decimal: str | None, original: str) -> float:
    """A number without currency or suffix (chances, percentiles, shapes)."""
    s = _clean(s)
    _refuse_non_amounts(s)
    negative = s.startswith("-")
    if s[:1] in ("-", "+"):
        s = s[1:].lstrip()
    value = _digits(s, decimal, original)
    return -value if negative else value


def _digits(s: str, decimal: str | None, original: str) -> float:
    if decimal != "," and _PLAIN.fullmatch(s):
        return float(s)
    mark = decimal or _guess_decimal(s)
    whole, _has_mark, fraction = s.partition(mark)
    groups = set(re.findall(r"\D", whole))
    ok = (
        bool(whole or fraction)
        and (not fraction or fraction.isdigit())
        and mark not in fraction
        and (not groups or (len(groups) == 1 and groups <= _GROUP_MARKS and mark not in groups))
    )
    if ok and groups:
        sep = next(iter(groups))
        parts = whole.split(sep)
        ok = 1 <= len(parts[0]) <= 3 and all(len(p) == 3 and p.isdigit() for p in parts[1:])
        whole = "".join(parts)
    if not ok or not (whole + fraction).isdigit():
        hint = (
            f" (this file writes decimals with {mark!r})" if decimal and re.search(r"\d", s) else ""
        )
        raise CellError(
            f"{original.strip()!r} is not a number{hint}.",
            "enter a number such as 12500, 12,500.50 or $12,500.",
        )
    return float(f"{whole or '0'}.{fraction or '0'}")


def _guess_decimal(s: str) -> str:
    commas, dots = s.count(","), s.count(".")
    if commas and dots:
        return "," if s.rfind(",") > s.rfind(".") else "."
    if commas == 1:
        head, tail = s.split(",")
        grouped = len(tail) == 3 and tail.isdigit() and 1 <= len(head) <= 3
        return "." if grouped else ","
    if dots > 1:
        return ","
    return "."


def unquote_formula_text(text: str) -> str:
    """Drop the apostrophe an export puts before text that a spreadsheet would run as a
    formula ('=X' -> '=X' shown as text), so an exported estimate reads back as it was."""
    return text[1:] if text.startswith("'") and text[1:].startswith(FORMULA_STARTS) else text
