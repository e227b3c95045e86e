"""The finish of parallel paths against closed forms and a reference simulation.

Sources: the largest of independent variables has CDF prod_k F_k (order statistics, e.g.
David & Nagaraja, Order Statistics, 3rd ed., ch. 2); Irwin-Hall (Johnson, Kotz &
Balakrishnan, Continuous Univariate Distributions vol. 2); Clark (1961), "The greatest of a
finite set of random variables", Operations Research 9(2), 145-162, for the mean and
variance of max(X, Y) of jointly normal X, Y and P(X > Y) = Phi(alpha).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from report_fixtures import normal_item
from scipy import integrate, stats

from engine import CorrelationPair, CorrelationSpec, Estimate, InputError, LineItem, analyze
from engine.schedule.paths import NO_PATH, schedule_paths


def path_item(name: str, mean: float, sd: float, *paths: str) -> LineItem:
    return normal_item(name, mean, sd, paths=paths)


def irwin_hall_cdf(x: float, n: int) -> float:
    # Irwin-Hall CDF, Johnson, Kotz & Balakrishnan, Continuous Univariate Distributions vol. 2
    if x <= 0:
        return 0.0
    if x >= n:
        return 1.0
    return sum(
        (-1) ** k * math.comb(n, k) * (x - k) ** n for k in range(math.floor(x) + 1)
    ) / math.factorial(n)


def clark_moments(
    m1: float, s1: float, m2: float, s2: float, rho: float
) -> tuple[float, float, float]:
    """Clark (1961), eqs. for nu_1 and nu_2: the mean and sd of max(X, Y), and P(X > Y)."""
    a = math.sqrt(s1 * s1 + s2 * s2 - 2 * rho * s1 * s2)
    alpha = (m1 - m2) / a
    cdf, pdf = stats.norm.cdf(alpha), stats.norm.pdf(alpha)
    mean = m1 * cdf + m2 * (1 - cdf) + a * pdf
    second = (m1 * m1 + s1 * s1) * cdf + (m2 * m2 + s2 * s2) * (1 - cdf) + (m1 + m2) * a * pdf
    return mean, math.sqrt(second - mean * mean), float(cdf)


def test_four_triangular_paths_finish_by_100_is_half_to_the_fourth() -> None:
    # Check value in REFERENCES.md: P(finish <= 100) = 0.5^4 = 6.25%, from prod_k F_k
    items = [
        LineItem(f"Activity {k}", "triangular", 80, 100, 120, paths=(f"P{k}",)) for k in range(4)
    ]
    a = analyze(Estimate(items))
    assert a.method == "exact" and a.paths is not None
    assert a.total.cdf(100.0) == pytest.approx(0.5**4, abs=2e-5)
    # The classic method reads one path: its P50 is 100, the finish's is far later.
    row = a.levels[0]
    assert row.normal == pytest.approx(100.0, abs=1e-9)
    # finish P50 solves F(t)^4 = 0.5 for the triangular's F (closed form on its upper half)
    t50 = 120 - math.sqrt(2 * 400 * (1 - 0.5**0.25))
    assert row.value == pytest.approx(t50, abs=0.01)
    assert a.paths.merge_bias[0] == pytest.approx(t50 - 100, abs=0.01)
    assert [r.criticality for r in a.paths.rows] == pytest.approx([0.25] * 4, abs=1e-6)


@pytest.mark.parametrize("n_paths", [2, 3, 5])
def test_identical_uniform_paths_are_irwin_hall_to_the_nth(n_paths: int) -> None:
    # Each path: three uniform(0, 10) activities, so path/10 is Irwin-Hall(3); finish F^n.
    items = [
        LineItem(f"P{p} step {s}", "uniform", 0, None, 10, paths=(f"Path {p}",))
        for p in range(n_paths)
        for s in range(3)
    ]
    a = analyze(Estimate(items), levels=(10, 50, 80, 90, 99))
    t = np.linspace(1, 29, 57)
    expected = np.array([irwin_hall_cdf(x / 10, 3) ** n_paths for x in t])
    assert np.max(np.abs(a.total.cdf(t) - expected)) < 2e-4
    for row in a.levels:  # each level's error in probability, the user's unit
        assert irwin_hall_cdf(row.value / 10, 3) ** n_paths == pytest.approx(
            row.level / 100, abs=2e-4
        )
        assert a.grid_error is not None and a.grid_error >= 0


def test_unequal_normal_paths_are_the_product_of_normal_cdfs() -> None:
    # Normal paths: the finish CDF is prod_k Phi((t - m_k) / s_k)
    spec = [(100, 8), (96, 12), (90, 20)]
    items = [path_item(f"A{k}", m, s, f"P{k}") for k, (m, s) in enumerate(spec)]
    a = analyze(Estimate(items), levels=(50, 80, 95))
    t = np.linspace(60, 160, 201)
    expected = np.prod([stats.norm.cdf(t, m, s) for m, s in spec], axis=0)
    assert np.max(np.abs(a.total.cdf(t) - expected)) < 2e-4
    # Criticality: integral of f_k prod_{j != k} F_j, by scipy's quadrature
    for k, row in enumerate(a.paths.rows):
        assert row.criticality == pytest.approx(_criticality(spec, k), abs=1e-3)
    assert a.paths.longest == "P0"


def _criticality(spec: list[tuple[float, float]], k: int) -> float:
    others = [p for j, p in enumerate(spec) if j != k]

    def integrand(x: float) -> float:
        return stats.norm.pdf(x, *spec[k]) * np.prod([stats.norm.cdf(x, *o) for o in others])

    return integrate.quad(integrand, 0, 250, limit=200)[0]


def test_two_independent_normal_paths_match_clark_exactly() -> None:
    # Clark (1961) with rho = 0
    items = [path_item("Build", 100, 10, "North"), path_item("Ship", 95, 15, "South")]
    a = analyze(Estimate(items))
    mean, sd, p_first = clark_moments(100, 10, 95, 15, 0.0)
    assert a.total.mean == pytest.approx(mean, abs=0.02)
    assert a.total.sd == pytest.approx(sd, abs=0.02)
    assert a.paths.rows[0].criticality == pytest.approx(p_first, abs=1e-3)


def test_shared_activity_correlates_paths_as_clark_says() -> None:
    # X = A + C, Y = B + C with C shared: rho = var C / (sd X sd Y); Clark (1961) moments
    items = [
        path_item("Common foundation", 50, 6),
        path_item("Tower crane", 50, 8, "East"),
        path_item("Cladding", 46, 10, "West"),
    ]
    items[0] = items[0].with_changes(paths=("East", "West"))
    a = analyze(Estimate(items), trials=400_000, seed=20261202)
    assert a.method == "simulation" and a.paths.shared == ["Common foundation"]
    s1, s2 = math.hypot(6, 8), math.hypot(6, 10)
    mean, sd, p_east = clark_moments(100, s1, 96, s2, 36 / (s1 * s2))
    se_mean = a.total.sd / math.sqrt(a.trials)
    assert a.total.mean == pytest.approx(mean, abs=5 * se_mean)
    assert a.total.sd == pytest.approx(sd, rel=0.01)
    east = a.paths.rows[0]
    assert east.criticality == pytest.approx(p_east, abs=5 * east.criticality_se)


def test_shared_activities_against_a_reference_simulation() -> None:
    # Reference: a plain numpy Monte Carlo of the same schedule, 2 million trials, seeded.
    items = [
        LineItem("Site setup", "triangular", 8, 10, 15, paths=("A", "B", "C")),
        LineItem("Steel", "pert", 40, 50, 75, paths=("A",)),
        LineItem("Ducts", "triangular", 45, 52, 60, paths=("B",)),
        LineItem("Permit delay", "uniform", 10, None, 30, probability=0.1, paths=("B",)),
        LineItem("Fit-out", "uniform", 42, None, 62, paths=("C",)),
    ]
    a = analyze(Estimate(items), levels=(50, 80, 90), trials=200_000, seed=7)
    rng = np.random.default_rng(42)
    n = 2_000_000
    setup = rng.triangular(8, 10, 15, n)
    # PERT(40, 50, 75) with shape 4: beta(1 + 4*10/35, 1 + 4*25/35) on [40, 75]
    steel = 40 + 35 * rng.beta(1 + 40 / 35, 1 + 100 / 35, n)
    ducts = rng.triangular(45, 52, 60, n) + (rng.random(n) < 0.1) * rng.uniform(10, 30, n)
    fit = rng.uniform(42, 62, n)
    finish = setup + np.maximum(np.maximum(steel, ducts), fit)
    for row in a.levels:
        ref = np.quantile(finish, row.level / 100)
        ref_prob = np.mean(finish <= row.value)  # error in probability, the user's unit
        assert abs(row.value - ref) < 5 * row.standard_error + 0.05
        assert abs(ref_prob - row.level / 100) < 0.004
    winner = np.argmax(np.stack([steel, ducts, fit]), axis=0)
    for k, r in enumerate(a.paths.rows):
        assert r.criticality == pytest.approx(np.mean(winner == k), abs=5 * r.criticality_se + 1e-3)


def test_exact_and_simulated_agree_within_the_simulations_errors() -> None:
    items = [
        LineItem("Design", "pert", 20, 30, 50, paths=("Core",)),
        LineItem("Build", "triangular", 40, 45, 70, paths=("Core",)),
        LineItem("Procure", "triangular", 60, 70, 95, paths=("Supply",)),
        LineItem("Flood delay", "uniform", 5, None, 20, probability=0.15, paths=("Supply",)),
        LineItem("Train staff", "uniform", 55, None, 90, paths=("People",)),
    ]
    exact = analyze(Estimate(items), levels=(50, 80, 90))
    sim = analyze(Estimate(items), levels=(50, 80, 90), method="simulation", seed=11)
    assert exact.method == "exact" and sim.method == "simulation"
    for e, s in zip(exact.levels, sim.levels, strict=True):
        assert abs(e.value - s.value) < 4 * s.standard_error + exact.grid_error
    for e, s in zip(exact.paths.rows, sim.paths.rows, strict=True):
        assert abs(e.criticality - s.criticality) < 4 * s.criticality_se + 1e-3
        assert e.values == pytest.approx(s.values, abs=1.0)


def test_correlated_paths_are_simulated_with_the_stated_correlation() -> None:
    # Normal activities with rank correlation r_s: Iman-Conover on normal scores gives the
    # Pearson correlation 2 sin(pi r_s / 6) (Pearson 1907); then Clark (1961).
    items = [
        path_item("North works", 100, 10, "North"),
        path_item("South works", 98, 12, "South"),
    ]
    spec = CorrelationSpec(pairs=[CorrelationPair("North works", "South works", 0.6)])
    a = analyze(Estimate(items, correlation=spec), trials=200_000, seed=3)
    assert a.method == "simulation" and "correlated" in a.method_reason
    rho = 2 * math.sin(math.pi * 0.6 / 6)
    mean, sd, p_north = clark_moments(100, 10, 98, 12, rho)
    assert a.total.mean == pytest.approx(mean, abs=0.1)
    assert a.total.sd == pytest.approx(sd, rel=0.015)
    assert a.paths.rows[0].criticality == pytest.approx(p_north, abs=0.01)


def test_cost_estimates_and_single_paths_keep_their_meaning() -> None:
    items = [LineItem(f"Item {k}", "triangular", 80, 100, 120) for k in range(4)]
    plain = analyze(Estimate(items))
    one_path = analyze(Estimate([i.with_changes(paths=("Only",)) for i in items]))
    assert plain.paths is None and one_path.paths is None
    assert one_path.levels[0].value == pytest.approx(plain.levels[0].value, abs=1e-9)
    assert plain.levels[0].value == pytest.approx(400.0, abs=0.01)  # the sum, not a maximum
    assert plain.to_dict()["paths"] is None


def test_items_naming_no_path_form_their_own_path_and_are_said() -> None:
    items = [
        LineItem("A", "triangular", 10, 20, 30, paths=("One",)),
        LineItem("B", "triangular", 10, 20, 30, paths=("Two",)),
        LineItem("Loose", "triangular", 5, 6, 7),
    ]
    paths = schedule_paths(items)
    assert [p.name for p in paths] == ["One", "Two", NO_PATH] and paths[2].members == (2,)
    a = analyze(Estimate(items))
    assert any(NO_PATH in r for r in a.reasons)
    assert a.paths.rows[2].criticality < 1e-6


def test_exact_refused_when_paths_share_an_activity() -> None:
    items = [
        LineItem("Shared", "triangular", 1, 2, 3, row=4, paths=("X", "Y")),
        LineItem("Only X", "triangular", 1, 2, 3, paths=("X",)),
    ]
    with pytest.raises(InputError) as caught:
        analyze(Estimate(items), method="exact")
    problem = caught.value.problems[0]
    assert problem.column == "Path" and problem.row == 4 and "Shared" in problem.message


def test_base_is_the_longest_path_by_point_values_and_json_carries_the_paths() -> None:
    items = [
        LineItem("Dig", "triangular", 10, 12, 20, paths=("Ground",)),
        LineItem("Pour", "triangular", 5, 6, 9, paths=("Ground",)),
        LineItem("Order", "triangular", 15, 16, 30, paths=("Supply",)),
    ]
    a = analyze(Estimate(items))
    assert a.base_estimate == pytest.approx(18.0) and "'Ground'" in a.base_basis
    data = json.loads(json.dumps(a.to_dict()))
    assert [p["name"] for p in data["paths"]["paths"]] == ["Ground", "Supply"]
    assert data["paths"]["merge_bias"][0] > 0


def test_distance_is_the_finish_against_the_longest_paths_normal() -> None:
    # sup_t |F_tri(t)^4 - Phi((t - 100) / sd)| on a fine grid, with the triangular's CDF and
    # sd = sqrt(Q / 18) (Johnson, Kotz & Balakrishnan, vol. 2, triangular distribution)
    items = [LineItem(f"A{k}", "triangular", 80, 100, 120, paths=(f"P{k}",)) for k in range(4)]
    a = analyze(Estimate(items))
    t = np.linspace(80, 120, 400_001)
    tri = np.where(t <= 100, (t - 80) ** 2 / 800, 1 - (120 - t) ** 2 / 800)
    sd = math.sqrt((80**2 + 100**2 + 120**2 - 80 * 100 - 80 * 120 - 100 * 120) / 18)
    expected = np.max(np.abs(tri**4 - stats.norm.cdf(t, 100, sd)))
    assert expected > 0.5 - 0.0625  # at t = 100 alone the curves are 0.4375 apart
    assert a.diagnostics.normal_gap.distance == pytest.approx(expected, abs=1e-3)


def test_correlated_schedule_keeps_the_correlation_record() -> None:
    # Two activities on each of two paths, correlated within each path: the normal shortcut
    # with covariances is the longest path's, Var = sum_ij r_ij s_i s_j (correlated normals)
    # with r = 2 sin(pi r_s / 6) (Pearson 1907); "if independent" is the exact finish.
    items = [
        path_item("N1", 50, 6, "North"),
        path_item("N2", 52, 8, "North"),
        path_item("S1", 49, 7, "South"),
        path_item("S2", 50, 5, "South"),
    ]
    spec = CorrelationSpec(pairs=[CorrelationPair("N1", "N2", 0.5)])
    a = analyze(Estimate(items, correlation=spec), trials=100_000, seed=9)
    dep = a.dependence
    assert dep is not None and dep.achieved_max_deviation < 0.02
    r = 2 * math.sin(math.pi * 0.5 / 6)
    assert dep.shortcut_variance == pytest.approx(36 + 64 + 2 * r * 48, rel=1e-9)
    independent = analyze(Estimate(items))
    for row, plain in zip(a.levels, independent.levels, strict=True):
        assert row.independent_value == pytest.approx(plain.value, abs=1e-9)
        q = row.level / 100
        assert row.normal_dependent == pytest.approx(
            102 + math.sqrt(dep.shortcut_variance) * stats.norm.ppf(q), abs=1e-9
        )
    # correlation within North widens it, so the finish's sd grows
    assert dep.sd_dependent > dep.sd_independent
    assert any("correlation widens" in reason for reason in a.reasons)


def test_activity_criticality_sums_its_paths() -> None:
    # Four identical independent paths after a shared start: each path is the latest with
    # probability 1/4 by symmetry, so the start is always critical and each branch 1/4
    # (criticality index, Van Slyke, Operations Research 11, 1963).
    items = [LineItem("Start", "triangular", 5, 6, 9, paths=("A", "B", "C", "D"))] + [
        LineItem(f"Branch {p}", "triangular", 80, 100, 120, paths=(p,)) for p in "ABCD"
    ]
    a = analyze(Estimate(items), trials=100_000, seed=12)
    index = dict(a.paths.activity_criticality)
    assert index["Start"] == pytest.approx(1.0)
    for p, row in zip("ABCD", a.paths.rows, strict=True):
        assert index[f"Branch {p}"] == pytest.approx(0.25, abs=5 * row.criticality_se)
    assert a.summary.startswith("The longest path's normal shortcut understates P50")


@pytest.mark.parametrize("method", ["exact", "simulation"])
def test_a_fixed_path_inside_another_paths_range(method: str) -> None:
    # max(100, U(90, 110)): a point mass 1/2 at 100, then uniform; mean
    # 0.5 * 100 + 0.5 * 105 = 102.5, P80 = 106; each path the latest half the time
    # (closed form of the maximum of a constant and a uniform)
    items = [
        LineItem("Fixed leg", "fixed", most_likely=100, paths=("A",)),
        LineItem("Variable leg", "uniform", 90, None, 110, paths=("B",)),
    ]
    a = analyze(Estimate(items), levels=(25, 50, 80), method=method, seed=3)
    assert [r.value for r in a.levels] == pytest.approx([100, 100, 106], abs=1e-3)
    assert a.total.mean == pytest.approx(102.5, abs=0.02)
    assert [r.criticality for r in a.paths.rows] == pytest.approx([0.5, 0.5], abs=0.005)
    assert float(a.total.cdf(100.0)) == pytest.approx(0.5, abs=0.001)


def test_two_activities_too_wide_for_one_grid_are_simulated_or_refused_by_name() -> None:
    # A claim and an outage on one path (P90/P10 = 10^4 and 2 x 10^3) beside a triangular
    # path: Automatic simulates the finish and says why; exact refuses naming both; with a
    # correlation the "if independent" finish is simulated too instead of an internal error.
    # Reference: P(finish <= x) = F_A(x) F_B(x) (David & Nagaraja), F_A from 4M numpy draws
    # of the two lognormals, F_B the triangular CDF (scipy.stats.triang).
    wide = {"family": "lognormal", "low": 1.0, "low_pct": 10, "high_pct": 90}
    items = [
        LineItem("Claim", high=1e4, paths=("A",), row=2, **wide),
        LineItem("Outage", high=2e3, paths=("A",), row=3, **wide),
        LineItem("Works", "triangular", 900, 1000, 1300, paths=("B",), row=4),
    ]
    a = analyze(Estimate(items), trials=400_000, seed=6, levels=(50, 80))
    assert a.method == "simulation" and "Claim" in a.method_reason
    z = stats.norm.ppf(0.9)
    rng = np.random.default_rng(12)
    path_a = sum(
        rng.lognormal(math.log(h) / 2, math.log(h) / (2 * z), 4_000_000) for h in (1e4, 2e3)
    )
    works = stats.triang(c=100 / 400, loc=900, scale=400)
    for row in a.levels:
        q = row.level / 100
        f = np.mean(path_a <= row.value) * works.cdf(row.value)
        assert abs(f - q) < 4 * math.sqrt(q * (1 - q) / 400_000) + 4 * math.sqrt(q / 4_000_000)
    with pytest.raises(InputError) as caught:
        analyze(Estimate(items), method="exact")
    (problem,) = caught.value.problems
    assert problem.row == 3 and "Claim" in problem.message and "simulation" in problem.fix
    linked = analyze(
        Estimate(items, correlation=CorrelationSpec(default=0.3)), trials=20_000, seed=6
    )
    assert all(r.independent_value is not None for r in linked.levels)


def test_a_path_holding_one_item_too_wide_for_the_grid_is_simulated_or_refused() -> None:
    # One outage (P90/P10 = 10^5) on a path: the path's total keeps it off the grid, but the
    # finish's grid would evaluate that path's cdf at 262,144 points (minutes). Automatic
    # simulates the finish and says which item; exact refuses naming it and the way out.
    items = [
        LineItem("Outage", "lognormal", 1.0, None, 1e5, low_pct=10, high_pct=90, paths=("A",)),
        LineItem("Tie-in", "triangular", 0.0, 1.0, 2.0, paths=("A",)),
        LineItem("Works", "triangular", 90.0, 100.0, 130.0, paths=("B",), row=4),
    ]
    a = analyze(Estimate(items), trials=20_000, seed=2)
    assert a.method == "simulation" and "'Outage' spreads over more orders" in a.method_reason
    with pytest.raises(InputError) as caught:
        analyze(Estimate(items), method="exact")
    (problem,) = caught.value.problems
    assert problem.item == "Outage" and "simulation" in problem.fix
    pair = CorrelationSpec(pairs=[CorrelationPair("Tie-in", "Works", 0.5)])
    linked = analyze(Estimate(items, correlation=pair), trials=20_000, seed=2)
    assert all(r.independent_value is not None for r in linked.levels)  # simulated, too
