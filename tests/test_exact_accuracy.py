"""The exact total in the user's units: |F(x_q) - q| against independent references, for heavy
tails, risk events over them, 10,000 items, and items too wide for floating point."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, optimize, special, stats

from engine import Estimate, InputError, LineItem, analyze
from engine.exact.convolution import cumulants_of, exact_total
from engine.exact.totals import Cumulants
from engine.exact.wide_item import WideItemTotal
from engine.families.distributions import Lognormal, Normal, Occurrence, Triangular, Uniform
from engine.items import CorrelationSpec
from engine.shortcut.normal import normal_percentile
from engine.validation import build_distribution

LEVELS = np.array([0.01, 0.1, 0.5, 0.8, 0.9, 0.95, 0.99])
TARGET = 1e-5  # the accuracy target, in probability
Z90 = float(special.ndtri(0.9))


def lognormal_p10_p90(p10: float, p90: float) -> Lognormal:
    sigma = math.log(p90 / p10) / (2 * Z90)
    return Lognormal(math.log(p10) + Z90 * sigma, sigma)


def heavy_plus_triangle_cdf(ln: Lognormal, p: float, x: float) -> float:
    """P(E + Y <= x), E a lognormal occurring with probability p, Y ~ triangular(0, 1, 2):
    the lognormal's cdf (scipy.stats.lognorm) integrated against the triangle's density by
    adaptive quadrature (scipy.integrate.quad), an independent reference."""
    lognorm = stats.lognorm(ln.sigma, scale=math.exp(ln.mu))
    tri = stats.triang(0.5, loc=0.0, scale=2.0)
    inner = integrate.quad(
        lambda y: lognorm.cdf(x - y) * tri.pdf(y), 0.0, 2.0, points=[1.0], epsabs=1e-14, limit=200
    )[0]
    return (1 - p) * float(tri.cdf(x)) + p * inner


@pytest.mark.parametrize("ratio", [1e2, 1e4, 1e6])
@pytest.mark.parametrize("p", [1.0, 0.3])
def test_heavy_lognormal_plus_a_small_item(ratio: float, p: float) -> None:
    # The case: P10 = 1, P90 = 10^4 plus triangular(0, 1, 2) gave P50 = 1,431
    # (truth ~101) when the grid followed the sd.
    ln = lognormal_p10_p90(1.0, ratio)
    heavy = ln if p == 1.0 else Occurrence(ln, p)
    total = exact_total([heavy, Triangular(0.0, 1.0, 2.0)])
    x = total.ppf(LEVELS)
    ref = np.array([heavy_plus_triangle_cdf(ln, p, float(v)) for v in x])
    miss = np.abs(ref - LEVELS)
    assert np.max(miss) <= TARGET
    # the bound in probability covers the real error (quadrature noise ~1e-12 allowed)
    assert np.max(miss) <= total.error_probability + 1e-10
    # and in value: the reference's own percentiles, by root finding on the reference cdf
    for q, v in zip(LEVELS, x, strict=True):
        lo, hi = (
            v - 10 * max(total.error_bound, 1e-9 * abs(v)),
            v + 10 * max(total.error_bound, 1e-9 * abs(v)),
        )
        if heavy_plus_triangle_cdf(ln, p, lo) < q < heavy_plus_triangle_cdf(ln, p, hi):
            exact = optimize.brentq(
                lambda t, q=q: heavy_plus_triangle_cdf(ln, p, t) - q, lo, hi, xtol=1e-12
            )
            assert abs(v - exact) <= total.error_bound + 1e-9 * abs(exact)
    if ratio == 1e4 and p == 1.0:
        assert 100.0 < x[2] < 102.0  # P50 ~ 101, not 1,431


def test_a_wide_lognormal_alone_is_its_own_quantiles() -> None:
    # scipy.stats.lognorm's closed-form quantiles
    ln = lognormal_p10_p90(1.0, 1e6)
    total = exact_total([ln])
    assert isinstance(total, WideItemTotal)
    ref = stats.lognorm(ln.sigma, scale=math.exp(ln.mu)).ppf(LEVELS)
    np.testing.assert_allclose(total.ppf(LEVELS), ref, rtol=1e-10)


def edgeworth_cdf(x: np.ndarray, c: Cumulants) -> np.ndarray:
    """Edgeworth expansion to order 1/n: Phi(z) - phi(z) [g1 He2 / 6 + g2 He3 / 24 +
    g1^2 He5 / 72] (Hall, The Bootstrap and Edgeworth Expansion, 1992, ch. 2; Kolassa, Series
    Approximation Methods in Statistics, ch. 3; term layout from memory, checked here against
    the exact normal case). Its error for n = 10,000 items is O(n^-3/2) ~ 1e-6."""
    z = (x - c.mean) / c.sd
    he2, he3, he5 = z * z - 1, z**3 - 3 * z, z**5 - 10 * z**3 + 15 * z
    g1, g2 = c.skewness, c.excess_kurtosis
    phi = np.exp(-0.5 * z * z) / math.sqrt(2 * math.pi)
    return special.ndtr(z) - phi * (g1 * he2 / 6 + g2 * he3 / 24 + g1 * g1 * he5 / 72)


def test_ten_thousand_triangles_against_the_edgeworth_expansion() -> None:
    rng = np.random.default_rng(12)
    low = rng.uniform(100, 2000, 10_000)
    mode = low + rng.uniform(0, 300, 10_000)
    high = mode + rng.uniform(50, 900, 10_000)
    parts = [Triangular(*t) for t in zip(low, mode, high, strict=True)]
    total = exact_total(parts)
    x = total.ppf(LEVELS)
    miss = np.abs(edgeworth_cdf(x, cumulants_of(parts)) - LEVELS)
    assert np.max(miss) <= TARGET
    assert total.error_probability <= TARGET


def test_ten_thousand_normals_are_normal() -> None:
    # closed form: a sum of normals is normal with the summed means and variances
    rng = np.random.default_rng(13)
    mu, sigma = rng.uniform(10, 500, 10_000), rng.uniform(1, 80, 10_000)
    total = exact_total([Normal(m, s) for m, s in zip(mu, sigma, strict=True)])
    ref = stats.norm(mu.sum(), math.sqrt(float(sigma @ sigma)))
    assert np.max(np.abs(ref.cdf(total.ppf(LEVELS)) - LEVELS)) <= TARGET


def test_ten_thousand_uniforms_and_the_step_does_not_spread_the_total() -> None:
    # i.i.d. uniforms: g1 = 0, g2 = -1.2 / n (Irwin-Hall's cumulants, Johnson, Kotz &
    # Balakrishnan vol. 2). A grid that rounds every item would widen the total by n h^2 / 6.
    total = exact_total([Uniform(0.0, 1.0)] * 10_000)
    c = Cumulants(5000.0, 10_000 / 12, 0.0, -10_000 / 120)
    x = total.ppf(LEVELS)
    assert np.max(np.abs(edgeworth_cdf(x, c) - LEVELS)) <= TARGET


def _estimate(*items: LineItem) -> Estimate:
    return Estimate(items=list(items))


@pytest.mark.parametrize("high", [1e11, 1e15])
def test_a_lognormal_too_wide_for_floating_point_is_refused(high: float) -> None:
    item = LineItem("Site risk", "lognormal", low=1.0, high=high, low_pct=10, high_pct=90, row=4)
    small = LineItem("Small works", "triangular", low=0.0, most_likely=1.0, high=2.0, row=5)
    with pytest.raises(InputError) as caught:
        analyze(_estimate(item, small), method="exact")
    (problem,) = caught.value.problems
    assert problem.item == "Site risk" and problem.column == "High" and problem.row == 4
    assert "widest High" in problem.message
    # the widest High named is accepted, and analysed without overflow
    widest = float(problem.message.split("widest High is ")[1].rstrip("."))
    a = analyze(_estimate(item.with_changes(high=0.999 * widest), small), method="exact")
    assert all(math.isfinite(r.value) and math.isfinite(r.normal) for r in a.levels)


def test_the_shortcut_uses_exact_moments_with_simulation() -> None:
    # The normal column is mean + sd z from the items' exact moments whatever the method;
    # sample moments would let sampling noise into the gap and the verdict.
    items = [
        LineItem("Groundworks", "triangular", low=100.0, most_likely=120.0, high=190.0),
        LineItem("Steel", "pert", low=200.0, most_likely=230.0, high=330.0),
    ]
    exact = cumulants_of([build_distribution(i) for i in items])
    a = analyze(_estimate(*items), method="simulation", trials=20_000, seed=5, levels=(50, 90))
    expected = normal_percentile(exact, np.array([0.5, 0.9]))
    np.testing.assert_allclose([r.normal for r in a.levels], expected, rtol=1e-14)
    # and they are not the sample's: those differ by sampling noise
    assert a.total.mean != exact.mean


def test_two_items_too_wide_for_one_grid_are_refused_with_the_way_out() -> None:
    # Only one item can be evaluated by its own cdf; a second as wide would need a grid of
    # billions of points. The refusal names the item and suggests simulation, which works.
    first, second = two_wide_items()
    with pytest.raises(InputError) as caught:
        analyze(_estimate(first, second), method="exact")
    (problem,) = caught.value.problems
    assert problem.item == "Market risk" and problem.row == 3 and "simulation" in problem.fix
    assert "Ground risk" in problem.message
    a = analyze(_estimate(first, second), method="simulation", trials=10_000, seed=2)
    assert all(math.isfinite(r.value) for r in a.levels)


def test_automatic_method_simulates_two_items_too_wide_for_one_grid() -> None:
    # A claim and an outage, each over 3-4 orders of magnitude between P10 and P90: the
    # Automatic method says why and simulates; the percentiles agree with a numpy sum of the
    # two lognormals (4M draws; P10/P90 -> mu, sigma with z_0.9 = 1.2816, the lognormal's
    # closed form, Johnson, Kotz & Balakrishnan vol. 1).
    first, second = two_wide_items()
    a = analyze(_estimate(first, second), trials=400_000, seed=4, levels=(50, 90))
    assert a.method == "simulation"
    assert "Ground risk" in a.method_reason and "simulated" in a.method_reason
    reference = two_wide_items_sum(np.random.default_rng(11))
    for row in a.levels:
        # |F(x_q) - q| of the reference sample at our percentile, against its sampling noise
        q = row.level / 100
        assert abs(np.mean(reference <= row.value) - q) < 4 * math.sqrt(q * (1 - q) / 400_000)


def test_two_too_wide_items_correlated_are_analysed_with_a_simulated_if_independent() -> None:
    # The correlated analysis shows the total "if independent" beside it; two items too wide
    # for one exact grid make that column simulated too (it was refused, then crashed). The
    # independent sum against a numpy reference (P10/P90 -> mu, sigma, the lognormal's
    # closed form; 4M draws), read as |F(x_q) - q| in probability.
    first, second = two_wide_items()
    linked = Estimate(items=[first, second], correlation=CorrelationSpec(default=0.5))
    a = analyze(linked, trials=100_000, seed=3, levels=(50, 90))
    reference = two_wide_items_sum(np.random.default_rng(13))
    for row in a.levels:
        q = row.level / 100
        off = abs(np.mean(reference <= row.independent_value) - q)
        assert off < 5 * math.sqrt(q * (1 - q) / 100_000)


def test_a_rare_large_risk_beside_small_items_is_resolved_where_the_probability_is() -> None:
    # A 3.17% chance of about 800k beside a 60% chance of about 120: the event's spread set
    # the step to ~78, over the small item's whole range (P50 came out 84 where it is 114,
    # 0.12 off in probability). The check at twice the step now sends the total to finer
    # grids. Reference: below the event's low end F(t) = (1 - p_b)(1 - p_s + p_s F_S(t)),
    # F_S the PERT's beta cdf (alpha = 1 + 4 (m - a) / (b - a); Malcolm et al. 1959), scipy.
    big = LineItem("Claim", "pert", 741_260.0, 810_800.0, 1_436_900.0, probability=0.0317)
    small = LineItem("Permit", "pert", 97.2, 123.0, 194.1, probability=0.5995)
    a = analyze(_estimate(big, small), method="exact", levels=(50, 80, 90))
    lo, ml, hi = 97.2, 123.0, 194.1
    beta = stats.beta(1 + 4 * (ml - lo) / (hi - lo), 1 + 4 * (hi - ml) / (hi - lo), lo, hi - lo)
    for row in a.levels:
        f = (1 - 0.0317) * (1 - 0.5995 + 0.5995 * beta.cdf(row.value))
        error = abs(f - row.level / 100)
        assert error <= 1e-5, (row.level, row.value, error)  # was 0.12
        assert error <= a.total.error_probability  # the bound covers the error


def two_wide_items() -> tuple[LineItem, LineItem]:
    """Two lognormals from P10 = 1 to P90 = 10^4 and 10^3: too wide for one exact grid."""
    wide = {"family": "lognormal", "low": 1.0, "low_pct": 10, "high_pct": 90}
    return (
        LineItem("Ground risk", high=1e4, row=2, **wide),
        LineItem("Market risk", high=1e3, row=3, **wide),
    )


def two_wide_items_sum(rng: np.random.Generator) -> np.ndarray:
    """4M numpy draws of their independent sum (P10/P90 -> mu, sigma with z_0.9: the
    lognormal's closed form, Johnson, Kotz & Balakrishnan vol. 1)."""
    z = stats.norm.ppf(0.9)
    return sum(rng.lognormal(math.log(h) / 2, math.log(h) / (2 * z), 4_000_000) for h in (1e4, 1e3))
