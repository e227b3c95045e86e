"""Cell text as analysts type it: amounts, chances, percentiles, discrete values, families.

The expected values are the amounts the texts denote under the conventions documented in
fileio/cells.py (thousands grouping per CLDR locale data: `,` in en, `.` in de, space in fr,
apostrophe in de-CH; accounting negatives in parentheses per common bookkeeping practice).
"""

from __future__ import annotations

import pytest

from engine import FAMILIES
from fileio.cells import (
    CellError,
    parse_discrete,
    parse_family,
    parse_number,
    parse_percentile,
    parse_probability,
)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("12500", 12500.0),
        ("12,500", 12500.0),  # en grouping
        ("$12,500", 12500.0),
        ("12 500 €", 12500.0),  # fr grouping, symbol after
        ("12\u00a0500", 12500.0),  # no-break space as printed by spreadsheets
        ("€12.500,00", 12500.0),  # de grouping and decimal comma
        ("1'250'000", 1_250_000.0),  # de-CH grouping
        ("1.234.567", 1_234_567.0),
        ("(1,200)", -1200.0),  # accounting negative
        ("-$1,200", -1200.0),
        ("$-1,200", -1200.0),
        ("\u22121200", -1200.0),  # the minus sign character
        ("12,5", 12.5),  # lone decimal comma
        ("USD 3,000.75", 3000.75),
        ("EUR 1.2M", 1_200_000.0),
        ("12.5k", 12_500.0),
        ("250K", 250_000.0),
        ("1e5", 100_000.0),
        (".5", 0.5),
    ],
)
def test_amounts(text: str, expected: float) -> None:
    assert parse_number(text) == expected


def test_file_decimal_mark_decides_ambiguous_cells() -> None:
    # "12.500" is twelve thousand five hundred where the decimal mark is a comma.
    assert parse_number("12.500", decimal=",") == 12500.0
    assert parse_number("12,5", decimal=",") == 12.5
    assert parse_number("12.500", decimal=".") == 12.5
    with pytest.raises(CellError, match=r"decimals with '\.'"):
        parse_number("12,5", decimal=".")


@pytest.mark.parametrize(
    ("text", "why"),
    [
        ("", "empty"),
        ("abc", "not a number"),
        ("12%", "percentage"),
        ("-", "dash"),
        ("—", "dash"),
        ("=B4*1.1", "formula"),
        ("#DIV/0!", "error value"),
        ("3m", "million"),
        ("2024-03-01", "date"),
        ("1,23,4", "not a number"),
    ],
)
def test_amounts_refused_with_reason(text: str, why: str) -> None:
    with pytest.raises(CellError, match=why) as caught:
        parse_number(text)
    assert caught.value.fix  # every refusal says what to type instead


def test_probabilities() -> None:
    assert parse_probability("30%") == pytest.approx(0.3)
    assert parse_probability("0.3") == 0.3
    assert parse_probability("30", percent_header=True) == pytest.approx(0.3)
    assert parse_probability("12,5%") == pytest.approx(0.125)
    with pytest.raises(CellError, match="above 1"):
        parse_probability("30")
    with pytest.raises(CellError, match="could mean"):
        parse_probability("0.3", percent_header=True)
    # Range is the engine's check, so an out-of-range value passes through unchanged.
    assert parse_probability("150%") == pytest.approx(1.5)


def test_percentiles() -> None:
    assert parse_percentile("10") == 10.0
    assert parse_percentile("10%") == 10.0
    assert parse_percentile("P90") == 90.0
    with pytest.raises(CellError, match="fraction"):
        parse_percentile("0.1")


def test_discrete_values() -> None:
    # n/100 is correctly rounded, so 20% reads as the double nearest 0.2 (IEEE 754 division).
    assert parse_discrete("100 @ 20%; 150 @ 50%; 300 @ 30%") == ((100, 0.2), (150, 0.5), (300, 0.3))
    assert parse_discrete("$1,000 @ 0.25\n$2,000 @ 0.75;") == ((1000, 0.25), (2000, 0.75))
    assert parse_discrete("1.000,5 @ 40%; 2.000 @ 60%", decimal=",") == ((1000.5, 0.4), (2000, 0.6))
    with pytest.raises(CellError, match="no chance"):
        parse_discrete("100 @ 20%; 150")
    with pytest.raises(CellError, match="above 1"):
        parse_discrete("100 @ 20; 150 @ 80")
    with pytest.raises(CellError, match="in '1x0 @ 20%'"):
        parse_discrete("1x0 @ 20%")


@pytest.mark.parametrize(
    ("text", "family"),
    [
        ("Triangular", "triangular"),
        ("tri", "triangular"),
        ("Triangle", "triangular"),
        ("Beta-PERT", "pert"),
        ("betapert", "pert"),
        ("PERT", "pert"),
        ("flat", "uniform"),
        ("const", "fixed"),
        ("Constant", "fixed"),
        ("point", "fixed"),
        ("Log-normal", "lognormal"),
        ("log normal", "lognormal"),
        ("Normal", "normal"),
        ("discrete", "discrete"),
    ],
)
def test_family_synonyms(text: str, family: str) -> None:
    assert parse_family(text) == family
    assert family in FAMILIES


def test_unknown_family_lists_the_known_ones() -> None:
    with pytest.raises(CellError, match="not a distribution") as caught:
        parse_family("Weibull")
    assert all(f in caught.value.fix for f in FAMILIES)


@pytest.mark.parametrize("text", ["(0)", "-0", "(0.00)", "-$0", "-0k"])
def test_a_negative_zero_is_zero(text: str) -> None:
    # A spreadsheet shows an accounting zero as "(0)": the amount is 0, never -0.0 (which
    # prints as "-0" in reports and JSON).
    value = parse_number(text)
    assert value == 0 and str(value) == "0.0"
