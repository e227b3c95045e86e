"""One way to write each kind of number, everywhere (issue 16): thousands separators, no
negative zero, one number of decimals for one kind of figure."""

import pytest

from charts import numbers


def test_money_has_thousands_separators_and_a_unit():
    assert numbers.money(14_400_354.4, "EUR") == "14,400,354 EUR"
    assert numbers.money(1_999_000) == "1,999,000"
    assert numbers.money(None) == ""


@pytest.mark.parametrize("x", [-0.0, -0.004, -1e-9])
def test_no_negative_zero(x):
    assert numbers.money(x) == "0"
    assert numbers.money(x, decimals=2) == "0.00"
    assert numbers.percent(x / 100) == "0.0%"
    assert numbers.percent(x / 100, sign=True) == "0.0%"
    assert numbers.coefficient(x) == "0.00"
    assert numbers.coefficient(x, sign=True) == "0.00"
    assert numbers.statistic(x) == "0.00"


def test_compact_sums_have_no_negative_zero():
    assert numbers.compact(-0.0) == "0"


def test_one_kind_of_figure_gets_one_number_of_decimals():
    # Durations in days: 450 and 47.2222 are shown with the same decimals.
    days = [450.0, 47.2222, 23.3333]
    decimals = numbers.decimals_for(days)
    assert decimals == 1
    assert [numbers.money(d, decimals=decimals) for d in days] == ["450.0", "47.2", "23.3"]
    assert numbers.decimals_for([14_400_354.0, 2.5]) == 0
    assert numbers.decimals_for([8.39, 1.2]) == 2
    assert numbers.decimals_for([None, 0.0]) == 0


def test_percent_and_probability():
    assert numbers.percent(0.16643) == "16.6%"
    assert numbers.percent(0.036, sign=True) == "+3.6%"
    assert numbers.percent(-0.029, sign=True) == "-2.9%"
    assert numbers.probability(0.3) == "30%"
    assert numbers.probability(0.125) == "12.5%"
    assert numbers.probability(0.0005) == "0.05%"


def test_count_agrees_with_its_noun():
    assert numbers.count(1_999_000, "pair") == "1,999,000 pairs"
    assert numbers.count(1, "pair") == "1 pair"
    assert numbers.count(3, "risk event") == "3 risk events"
    assert numbers.count(2, "analysis", "analyses") == "2 analyses"


def test_levels_and_compact_sums():
    assert numbers.level(80) == "P80"
    assert numbers.level(97.5) == "P97.5"
    assert numbers.compact(12_300, "EUR") == "12.3 k EUR"
    assert numbers.compact(4_100_000) == "4.1 M"
