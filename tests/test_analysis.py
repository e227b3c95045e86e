"""`engine.analyze` end to end on small estimates, degenerate ones included."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import stats

from engine import Cancelled, Estimate, InputError, LineItem, analyze


def _estimate(*items: LineItem) -> Estimate:
    return Estimate(items=list(items), title="Depot refit (invented)")


ROOF = LineItem("Roof", "triangular", low=80.0, most_likely=100.0, high=160.0, row=2)
FLOOR = LineItem("Floor", "pert", low=40.0, most_likely=45.0, high=90.0, row=3)
FEES = LineItem("Fees", "fixed", most_likely=30.0, row=4)
FLOOD = LineItem(
    "Flood", "triangular", low=50.0, most_likely=80.0, high=400.0, probability=0.1, row=5
)


def test_levels_contingency_gap_and_holds() -> None:
    a = analyze(_estimate(ROOF, FLOOR, FEES, FLOOD), method="exact", levels=(50, 80, 90, 99))
    assert a.method == "exact"
    assert a.base_estimate == pytest.approx(100.0 + 45.0 + 30.0)  # the flood is not in the base
    q = np.array([0.5, 0.8, 0.9, 0.99])
    np.testing.assert_allclose([r.value for r in a.levels], a.total.ppf(q), rtol=1e-15)
    for r in a.levels:
        assert r.contingency == pytest.approx(r.value - a.base_estimate, rel=1e-12)
        assert r.gap == pytest.approx(r.normal - r.value, rel=1e-12)
        assert r.holds is (abs(r.gap) <= a.tolerance * abs(r.value))
        assert r.standard_error is None
    # a rare, large event: the shortcut overstates the middle and understates P99
    assert a.levels[0].gap > 0
    assert a.levels[-1].gap < 0 and a.levels[-1].verdict == "understates"
    # normal shortcut: mean + z sd; the mean from the textbook item means (triangular
    # (a+b+c)/3, PERT (a+4m+b)/6, a risk event p times its impact's mean)
    mean = 340 / 3 + 310 / 6 + 30 + 0.1 * 530 / 3
    assert a.total.mean == pytest.approx(mean, rel=1e-12)
    assert a.levels[1].normal == pytest.approx(mean + a.total.sd * stats.norm.ppf(0.8), rel=1e-12)


def test_tolerance_decides_holds() -> None:
    est = _estimate(ROOF, FLOOR, FEES, FLOOD)
    gap = abs(analyze(est, method="exact", levels=(90,)).levels[0].gap_pct) / 100
    assert analyze(est, method="exact", levels=(90,), tolerance=gap * 1.01).levels[0].holds
    assert not analyze(est, method="exact", levels=(90,), tolerance=gap * 0.99).levels[0].holds


def test_to_dict_is_json() -> None:
    a = analyze(_estimate(ROOF, FLOOR, FLOOD), method="exact")
    text = json.dumps(a.to_dict(), allow_nan=False)
    back = json.loads(text)
    assert back["levels"][0]["value"] == pytest.approx(a.levels[0].value)
    sim = analyze(_estimate(ROOF, FLOOR, FLOOD), method="simulation", trials=5000, seed=3)
    json.dumps(sim.to_dict(), allow_nan=False)
    assert sim.seed == 3 and sim.trials == 5000 and all(r.standard_error > 0 for r in sim.levels)


def test_input_error_lists_every_problem() -> None:
    bad1 = LineItem("Doors", "triangular", low=10.0, most_likely=30.0, high=20.0, row=6)
    bad2 = LineItem("Glazing", "uniform", low=5.0, high=9.0, probability=1.5, row=7)
    with pytest.raises(InputError) as caught:
        analyze(_estimate(ROOF, bad1, bad2))
    found = {(p.item, p.column) for p in caught.value.problems}
    assert found == {("Doors", "Most likely"), ("Glazing", "Probability")}
    assert "row 6" in str(caught.value) and "row 7" in str(caught.value)
    with pytest.raises(InputError):
        analyze(Estimate())
    with pytest.raises(InputError):
        analyze(_estimate(ROOF), levels=(0, 50))


def test_one_item_is_that_item() -> None:
    a = analyze(_estimate(LineItem("Survey", "uniform", low=10.0, high=20.0)), levels=(10, 50, 90))
    np.testing.assert_allclose([r.value for r in a.levels], [11.0, 15.0, 19.0], atol=1e-5)
    assert a.levels[1].contingency == pytest.approx(0.0, abs=1e-5)  # base is the mean here


def test_all_fixed() -> None:
    a = analyze(_estimate(FEES, LineItem("Permit", "fixed", low=5.0, high=5.0)), levels=(50, 90))
    for r in a.levels:
        assert (r.value, r.normal, r.contingency, r.gap) == (35.0, 35.0, 0.0, 0.0)
        assert r.holds and not math.isnan(r.cornish_fisher)


def test_zero_width_range_is_refused_with_the_fix() -> None:
    flat = LineItem("Skip hire", "triangular", low=12.0, most_likely=12.0, high=12.0, row=9)
    with pytest.raises(InputError) as caught:
        analyze(_estimate(ROOF, flat))
    (problem,) = caught.value.problems
    assert problem.column == "High" and "fixed" in problem.fix


def test_probability_exactly_one_is_a_base_item() -> None:
    certain = FLOOD.with_changes(probability=1.0)
    a = analyze(_estimate(ROOF, certain), method="exact")
    b = analyze(_estimate(ROOF, FLOOD.with_changes(probability=1.0 - 1e-12)), method="exact")
    assert a.base_estimate == 180.0 and a.diagnostics.risk_event_count == 0
    np.testing.assert_allclose([r.value for r in a.levels], [r.value for r in b.levels], rtol=1e-6)


def test_vanishing_probability() -> None:
    tiny = FLOOD.with_changes(probability=1e-9)
    a = analyze(_estimate(ROOF, FLOOR, tiny), method="exact")
    without = analyze(_estimate(ROOF, FLOOR), method="exact")
    for r, s in zip(a.levels, without.levels, strict=True):
        assert all(math.isfinite(v) for v in (r.value, r.normal, r.cornish_fisher, r.gap))
        assert r.value == pytest.approx(s.value, abs=1e-6)
    assert a.total.mean - without.total.mean == pytest.approx(1e-9 * 530 / 3, rel=1e-6)


def test_cancel_and_progress() -> None:
    seen: list[float] = []
    analyze(_estimate(ROOF, FLOOR), method="exact", progress=seen.append)
    assert seen and seen[-1] == pytest.approx(1.0) and seen == sorted(seen)
    with pytest.raises(Cancelled):
        analyze(
            _estimate(ROOF, FLOOR), method="simulation", trials=5000, seed=1, cancel=lambda: True
        )
