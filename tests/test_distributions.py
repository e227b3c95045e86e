"""Every family against scipy.stats, textbook formulas and numerical integration."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from scipy import integrate, special, stats

from engine.families.distributions import (
    Beta,
    Discrete,
    Distribution,
    Fixed,
    Lognormal,
    Normal,
    Occurrence,
    Triangular,
    Uniform,
    pert,
)
from engine.items import LineItem
from engine.validation import ItemInvalid, build_distribution


def _pert_frozen(a, m, b):
    width = b - a
    return stats.beta(1 + 4 * (m - a) / width, 1 + 4 * (b - m) / width, loc=a, scale=width)


# (ours, scipy frozen): the scipy parametrisations are scipy.stats' documented ones
CONTINUOUS = [
    (Uniform(2.0, 7.0), stats.uniform(2.0, 5.0)),
    (Triangular(1.0, 3.0, 10.0), stats.triang(2 / 9, loc=1.0, scale=9.0)),
    (Triangular(0.0, 0.0, 4.0), stats.triang(0.0, loc=0.0, scale=4.0)),
    (Triangular(-2.0, 5.0, 5.0), stats.triang(1.0, loc=-2.0, scale=7.0)),
    (pert(10.0, 14.0, 30.0), _pert_frozen(10.0, 14.0, 30.0)),
    (pert(0.0, 9.5, 10.0), _pert_frozen(0.0, 9.5, 10.0)),
    (Beta(0.0, 2.0, 0.7, 3.0), stats.beta(0.7, 3.0, loc=0.0, scale=2.0)),
    (Normal(5.0, 2.0), stats.norm(5.0, 2.0)),
    (Lognormal(1.0, 0.5), stats.lognorm(0.5, scale=math.e)),
    (Lognormal(4.0, 1.2), stats.lognorm(1.2, scale=math.exp(4.0))),
]
IDS = [f"{type(d).__name__}-{i}" for i, (d, _) in enumerate(CONTINUOUS)]


@pytest.mark.parametrize(("dist", "ref"), CONTINUOUS, ids=IDS)
def test_moments_match_scipy(dist: Distribution, ref) -> None:
    # scipy.stats frozen distributions, stats(moments="mvsk")
    mean, var, skew, kurt = (float(v) for v in ref.stats(moments="mvsk"))
    assert dist.mean == pytest.approx(mean, rel=1e-12, abs=1e-12)
    assert dist.variance == pytest.approx(var, rel=1e-12)
    assert dist.skewness == pytest.approx(skew, rel=1e-9, abs=1e-12)
    assert dist.excess_kurtosis == pytest.approx(kurt, rel=1e-9, abs=1e-12)
    assert dist.sd == pytest.approx(math.sqrt(var), rel=1e-12)


@pytest.mark.parametrize(("dist", "ref"), CONTINUOUS, ids=IDS)
def test_cdf_pdf_ppf_match_scipy(dist: Distribution, ref) -> None:
    q = np.linspace(0.001, 0.999, 97)
    x = ref.ppf(q)
    np.testing.assert_allclose(dist.ppf(q), x, rtol=1e-10, atol=1e-12)
    np.testing.assert_allclose(dist.cdf(x), q, rtol=1e-10, atol=1e-13)
    np.testing.assert_allclose(dist.pdf(x), ref.pdf(x), rtol=1e-9, atol=1e-13)


@pytest.mark.parametrize(("dist", "ref"), CONTINUOUS, ids=IDS)
def test_cdf_of_ppf_round_trip(dist: Distribution, ref) -> None:
    # the round trip scipy's own test suite sweeps over its parameter tables
    q = np.concatenate([[1e-9, 1e-6, 1e-3], np.linspace(0.01, 0.99, 99), [1 - 1e-6]])
    np.testing.assert_allclose(dist.cdf(dist.ppf(q)), q, rtol=1e-9, atol=1e-14)


def test_triangular_textbook_formulas() -> None:
    # mean (a+b+c)/3, variance Q/18, skewness sqrt(2)(a+b-2c)(2a-b-c)(a-2b+c)/(5 Q^1.5)
    # (Johnson, Kotz & Balakrishnan, Continuous Univariate Distributions vol. 2, ch. 26)
    for a, c, b in [(1.0, 3.0, 10.0), (0.0, 0.0, 1.0), (-5.0, 4.0, 6.0), (100.0, 150.0, 200.0)]:
        d = Triangular(a, c, b)
        q = a * a + b * b + c * c - a * b - a * c - b * c
        assert d.mean == pytest.approx((a + b + c) / 3, rel=1e-14)
        assert d.variance == pytest.approx(q / 18, rel=1e-14)
        skew = math.sqrt(2) * (a + b - 2 * c) * (2 * a - b - c) * (a - 2 * b + c) / (5 * q**1.5)
        assert d.skewness == pytest.approx(skew, rel=1e-12, abs=1e-14)
        assert d.excess_kurtosis == pytest.approx(-0.6, rel=1e-12)


@pytest.mark.parametrize(("a", "m", "b"), [(10.0, 14.0, 30.0), (0.0, 1.0, 10.0), (0.0, 5.0, 10.0)])
def test_pert_malcolm_formulas(a: float, m: float, b: float) -> None:
    # Malcolm, Roseboom, Clark & Fazar (1959): alpha = 1 + 4(m-a)/(b-a), mean (a+4m+b)/6;
    # variance of the beta, (mean-a)(b-mean)/7 for shape 4
    d = pert(a, m, b)
    assert d.alpha == pytest.approx(1 + 4 * (m - a) / (b - a), rel=1e-15)
    assert d.beta == pytest.approx(1 + 4 * (b - m) / (b - a), rel=1e-15)
    mean = (a + 4 * m + b) / 6
    assert d.mean == pytest.approx(mean, rel=1e-14)
    assert d.variance == pytest.approx((mean - a) * (b - mean) / 7, rel=1e-12)
    # the classic ((b-a)/6)^2 is an approximation: off by more than 5% on these shapes
    # (Grubbs 1962)
    assert abs(((b - a) / 6) ** 2 / d.variance - 1) > 0.05


def test_pert_classic_variance_exact_only_where_mean_sits_at_its_root() -> None:
    # (mean-a)(b-mean)/7 = ((b-a)/6)^2 iff the mean sits at 1/2 -/+ sqrt(2)/6 of the range,
    # i.e. the mode at (2 -/+ sqrt(2))/4 of it (solve t(1-t) = 7/36 with t = (1+4 m)/6)
    for frac in ((2 - math.sqrt(2)) / 4, (2 + math.sqrt(2)) / 4):
        d = pert(0.0, 12.0 * frac, 12.0)
        assert d.variance == pytest.approx((12.0 / 6) ** 2, rel=1e-12)


def _quad(f, lo: float, hi: float, points=()) -> float:
    """scipy.integrate.quad split at the kinks; an infinite end is left to quad's mapping."""
    cuts = [lo, *sorted(p for p in points if lo < p < hi), hi]
    total = 0.0
    for a, b in itertools.pairwise(cuts):
        total += integrate.quad(f, a, b, limit=400, epsabs=1e-13, epsrel=1e-12)[0]
    return total


def _integration_range(dist: Distribution, *, infinite: bool = True) -> tuple[float, float]:
    """Where quad integrates: the support, or for integrals of the cdf (which converge
    slowly to infinity) all but 1e-15 of the mass on each side, far below the tolerance."""
    if isinstance(dist, Normal | Lognormal):
        if not infinite:
            return tuple(float(v) for v in dist.ppf(np.array([1e-15, 1 - 1e-15])))
        return (-math.inf if isinstance(dist, Normal) else 0.0), math.inf
    return dist.bounds()


@pytest.mark.parametrize(("dist", "ref"), CONTINUOUS, ids=IDS)
def test_abs_moment3_against_quadrature(dist, ref) -> None:
    # E|X - c|^3 by scipy.integrate.quad of |x - c|^3 f(x)
    lo, hi = _integration_range(dist)
    kinks = [getattr(dist, "mode", lo)]
    for c in (dist.mean, dist.ppf(0.3).item(), dist.ppf(1e-6).item() - 1.0):
        expected = _quad(lambda x, c=c: abs(x - c) ** 3 * float(ref.pdf(x)), lo, hi, [c, *kinks])
        assert dist.abs_moment3(c) == pytest.approx(expected, rel=2e-7)
    assert dist.abs_moment3() == pytest.approx(dist.abs_moment3(dist.mean), rel=1e-15)


def test_abs_moment3_closed_forms() -> None:
    # E|U - 1/2|^3 = 1/32 for U(0, 1); E|Z|^3 = 2 sqrt(2/pi) for Z standard normal
    assert Uniform(0.0, 1.0).abs_moment3() == pytest.approx(1 / 32, rel=1e-14)
    assert Normal(0.0, 1.0).abs_moment3() == pytest.approx(2 * math.sqrt(2 / math.pi), rel=1e-12)


@pytest.mark.parametrize(("dist", "ref"), CONTINUOUS, ids=IDS)
def test_integrated_cdf_and_survival_against_quadrature(dist, ref) -> None:
    # G(x) = integral of F up to x, S(x) = integral of 1 - F from x, by scipy.integrate.quad
    lo, hi = _integration_range(dist, infinite=False)
    kinks = [getattr(dist, "mode", lo)]
    xs = [lo - 0.5, *ref.ppf([1e-9, 0.02, 0.3, 0.5, 0.7, 0.98, 1 - 1e-9]), hi + 0.5]
    for x in xs:
        g = _quad(lambda t: float(ref.cdf(t)), lo, min(x, hi), kinks) + max(x - hi, 0.0)
        s = _quad(lambda t: float(ref.sf(t)), max(x, lo), hi, kinks) + max(lo - x, 0.0)
        scale = dist.sd
        assert float(dist.integrated_cdf(x)) == pytest.approx(g, rel=1e-8, abs=1e-11 * scale)
        assert float(dist.integrated_survival(x)) == pytest.approx(s, rel=1e-8, abs=1e-11 * scale)
        # G(x) - S(x) = x - mean, the identity the convolution's two sides rely on
        assert float(dist.integrated_cdf(x) - dist.integrated_survival(x)) == pytest.approx(
            x - dist.mean, abs=1e-9 * (abs(x) + scale)
        )


@pytest.mark.parametrize(("dist", "ref"), CONTINUOUS, ids=IDS)
def test_sample_is_the_inverse_transform(dist, ref) -> None:
    u = np.random.default_rng(7).random(20_000)
    got = dist.sample(u)
    if isinstance(dist, Beta):
        # PERT samples by table lookup: within 1e-9 of the range of the exact ppf
        assert np.max(np.abs(got - dist.ppf(u))) <= 1e-9 * (dist.high - dist.low)
    else:
        np.testing.assert_array_equal(got, dist.ppf(u))


# Shapes from flat to sharply peaked, peaks at either end, densities infinite at an end
# (alpha or beta < 1) and PERT shapes far from the usual 4.
BETA_SHAPES = [
    (2.3, 3.1),
    (1.0, 5.0),
    (5.0, 1.0),
    (1.2, 4.8),
    (0.7, 3.0),
    (3.0, 0.7),
    (0.3, 2.0),
    (1.0001, 3.0),
    (1.05, 1.2),
    (13.0, 29.0),
    (51.0, 3.0),
    (101.0, 1.5),
    (201.0, 201.0),
]


@pytest.mark.parametrize(("a", "b"), BETA_SHAPES)
def test_beta_table_matches_betaincinv_into_the_far_tails(a, b) -> None:
    rng = np.random.default_rng(11)
    # Uniform over the body, log-uniform deep into both tails, and the awkward floats.
    tails = 2.0 ** rng.uniform(-45, -4, 20_000)
    u = np.concatenate(
        [rng.random(20_000), tails, 1 - tails, [0.0, 2**-100, 2**-40, 1 - 2**-53, 1.0]]
    )
    dist = Beta(3.0, 8.0, a, b)
    # reference: scipy.special.betaincinv, the regularised incomplete beta's inverse
    exact = 3.0 + 5.0 * special.betaincinv(a, b, u)
    assert np.max(np.abs(dist.sample(u) - exact)) <= 1e-9 * 5.0


def _mixture_moments(p: float, ref) -> tuple[float, float, float, float]:
    """Mean and central moments 2..4 of 'ref with probability p, else 0', straight from
    the raw moments E[X^k] = p E[I^k] (law of total expectation)."""
    raw = [p * float(ref.moment(k)) for k in range(1, 5)]
    m = raw[0]
    var = raw[1] - m * m
    mu3 = raw[2] - 3 * m * raw[1] + 2 * m**3
    mu4 = raw[3] - 4 * m * raw[2] + 6 * m * m * raw[1] - 3 * m**4
    return m, var, mu3, mu4


@pytest.mark.parametrize("p", [1e-6, 0.05, 0.3, 0.9])
@pytest.mark.parametrize(
    ("impact", "ref"),
    [
        (Triangular(10.0, 20.0, 60.0), stats.triang(0.2, loc=10.0, scale=50.0)),
        (Triangular(-5.0, 10.0, 40.0), stats.triang(1 / 3, loc=-5.0, scale=45.0)),
        (Lognormal(2.0, 0.8), stats.lognorm(0.8, scale=math.exp(2.0))),
    ],
)
def test_risk_event_moments_against_direct_mixture(impact, ref, p: float) -> None:
    event = Occurrence(impact, p)
    mean, var, mu3, mu4 = _mixture_moments(p, ref)
    assert event.mean == pytest.approx(mean, rel=1e-12)
    assert event.variance == pytest.approx(var, rel=1e-9)
    assert event.mu3 == pytest.approx(mu3, rel=1e-7)
    assert event.mu4 == pytest.approx(mu4, rel=1e-7)
    # cdf of the mixture: (1 - p) 1[x >= 0] + p F(x)
    x = np.linspace(-10.0, 80.0, 91)
    np.testing.assert_allclose(
        event.cdf(x), (1 - p) * (x >= 0) + p * ref.cdf(x), rtol=1e-12, atol=1e-15
    )
    # ppf is the generalised inverse: F(ppf(q)) >= q > F(ppf(q) - 0), the atom at 0 included
    q = np.linspace(0.005, 0.995, 199)
    x = event.ppf(q)
    assert np.all(event.cdf(x) >= q - 1e-9)
    assert np.all(event.cdf(x - 1e-9 * (1 + np.abs(x))) <= q + 1e-9)
    np.testing.assert_array_equal(event.sample(q), event.ppf(q))
    # E|X - c|^3 of the mixture, by quadrature over the continuous part
    lo, hi = _integration_range(impact)
    c = event.mean
    expected = (1 - p) * abs(c) ** 3 + p * _quad(
        lambda t: abs(t - c) ** 3 * float(ref.pdf(t)), lo, hi, [c, getattr(impact, "mode", lo)]
    )
    assert event.abs_moment3() == pytest.approx(expected, rel=2e-7)


def test_risk_event_ppf_sits_on_zero_inside_the_atom() -> None:
    event = Occurrence(Triangular(10.0, 20.0, 60.0), 0.25)
    np.testing.assert_array_equal(event.ppf(np.array([0.01, 0.5, 0.75])), 0.0)
    assert event.ppf(0.76).item() > 10.0


def test_discrete_against_scipy_rv_discrete() -> None:
    values, weights = (300.0, 100.0, 150.0), (0.3, 0.2, 0.5)
    d = Discrete(values, weights)
    ref = stats.rv_discrete(values=(np.array(values), np.array(weights)))
    mean, var, skew, kurt = (float(v) for v in ref.stats(moments="mvsk"))
    assert (d.mean, d.variance) == pytest.approx((mean, var), rel=1e-12)
    assert (d.skewness, d.excess_kurtosis) == pytest.approx((skew, kurt), rel=1e-10)
    x = np.array([50.0, 100.0, 120.0, 150.0, 299.0, 300.0, 400.0])
    np.testing.assert_allclose(d.cdf(x), ref.cdf(x), rtol=1e-12)
    q = np.array([0.1, 0.2, 0.21, 0.69, 0.7, 0.71, 0.999])
    np.testing.assert_array_equal(d.ppf(q), ref.ppf(q))
    c = 170.0
    assert d.abs_moment3(c) == pytest.approx(
        sum(w * abs(v - c) ** 3 for v, w in zip(values, weights, strict=True))
    )


def test_fixed_is_a_point() -> None:
    d = Fixed(42.0)
    assert (d.mean, d.variance, d.skewness, d.excess_kurtosis) == (42.0, 0.0, 0.0, 0.0)
    np.testing.assert_array_equal(d.cdf(np.array([41.9, 42.0])), [0.0, 1.0])
    np.testing.assert_array_equal(d.ppf(np.array([0.01, 0.99])), [42.0, 42.0])


@pytest.mark.parametrize("family", ["triangular", "pert", "uniform", "normal", "lognormal"])
@pytest.mark.parametrize(("p_low", "p_high"), [(10.0, 90.0), (5.0, 95.0), (20.0, 70.0)])
def test_percentile_ended_items_hit_their_percentiles(
    family: str, p_low: float, p_high: float
) -> None:
    item = LineItem(
        "Site works",
        family,
        low=80.0,
        most_likely=100.0,
        high=150.0,
        low_pct=p_low,
        high_pct=p_high,
    )
    dist = build_distribution(item)
    np.testing.assert_allclose(
        dist.cdf(np.array([80.0, 150.0])), [p_low / 100, p_high / 100], atol=1e-9
    )
    if family in ("triangular", "pert"):
        impact = dist
        mode = (
            impact.mode
            if family == "triangular"
            else impact.low
            + (impact.alpha - 1) / (impact.alpha + impact.beta - 2) * (impact.high - impact.low)
        )
        assert mode == pytest.approx(100.0, rel=1e-12)


def _problems(**fields) -> list:
    try:
        build_distribution(LineItem(**{"name": "Cladding", "row": 7, **fields}))
    except ItemInvalid as bad:
        return bad.problems
    return []


@pytest.mark.parametrize(
    ("fields", "column"),
    [
        ({"family": "triangular", "low": 10.0, "most_likely": 30.0, "high": 20.0}, "Most likely"),
        ({"family": "triangular", "low": 10.0, "most_likely": 10.0, "high": 10.0}, "High"),
        ({"family": "uniform", "low": 20.0, "high": 10.0}, "High"),
        (
            {
                "family": "triangular",
                "low": 1.0,
                "most_likely": 2.0,
                "high": 3.0,
                "probability": 0.0,
            },
            "Probability",
        ),
        (
            {
                "family": "triangular",
                "low": 1.0,
                "most_likely": 2.0,
                "high": 3.0,
                "probability": 1.2,
            },
            "Probability",
        ),
        (
            {"family": "lognormal", "low": -5.0, "high": 30.0, "low_pct": 10.0, "high_pct": 90.0},
            "Low",
        ),
        (
            {"family": "normal", "low": 5.0, "high": 30.0, "low_pct": 90.0, "high_pct": 10.0},
            "Low %",
        ),
        ({"family": "normal", "low": 5.0, "high": 30.0, "low_pct": 0.0, "high_pct": 90.0}, "Low %"),
        (
            {"family": "normal", "low": 5.0, "high": 30.0, "low_pct": 10.0, "high_pct": 100.0},
            "Low %",
        ),
        ({"family": "normal", "low": 5.0, "high": 30.0, "low_pct": 10.0}, "High %"),
        ({"family": "normal", "low": 5.0, "high": 30.0}, "Low %"),
        ({"family": "triangular", "low": 1.0, "most_likely": math.nan, "high": 3.0}, "Most likely"),
        ({"family": "uniform", "low": 1.0, "high": math.inf}, "High"),
        ({"family": "fixed"}, "Most likely"),
        ({"family": "bell curve", "low": 1.0, "high": 2.0}, "Distribution"),
        ({"family": "pert", "low": 1.0, "most_likely": 2.0, "high": 3.0, "shape": -1.0}, "Shape"),
    ],
)
def test_validation_names_item_column_and_fix(fields: dict, column: str) -> None:
    problems = _problems(**fields)
    assert problems, fields
    first = problems[0]
    assert first.column == column
    assert first.item == "Cladding"
    assert first.row == 7
    assert first.fix.strip()
    text = str(first)
    assert (
        "row 7" in text and f"column {column!r}" in text and "'Cladding'" in text and "Fix:" in text
    )


def test_valid_edges_are_accepted() -> None:
    # mode at either end, probability exactly 1, a fixed item stated as Low == High
    assert not _problems(family="triangular", low=1.0, most_likely=1.0, high=3.0)
    assert not _problems(family="pert", low=1.0, most_likely=3.0, high=3.0)
    assert not _problems(family="triangular", low=1.0, most_likely=2.0, high=3.0, probability=1.0)
    assert not _problems(family="fixed", low=5.0, high=5.0)
    assert build_distribution(LineItem("Permit", "fixed", low=5.0, high=5.0)).mean == 5.0
