"""The exact total (numerical convolution) against closed forms and OpenTURNS."""

from __future__ import annotations

import itertools
import math

import numpy as np
import openturns as ot
import pytest
from reference_exponential import Exponential
from scipy import optimize, stats

from engine.exact.convolution import exact_total
from engine.exact.totals import GridTotal, PointTotal
from engine.families.distributions import (
    Fixed,
    Lognormal,
    Normal,
    Occurrence,
    Triangular,
    Uniform,
    pert,
)

Q = np.arange(1, 100) / 100  # P1..P99


def irwin_hall_cdf(x: float, n: int) -> float:
    """Irwin–Hall CDF (Johnson, Kotz & Balakrishnan, Continuous Univariate Distributions
    vol. 2): (1/n!) sum_{k <= x} (-1)^k C(n, k) (x - k)^n."""
    if x <= 0:
        return 0.0
    if x >= n:
        return 1.0
    terms = ((-1) ** k * math.comb(n, k) * (x - k) ** n for k in range(math.floor(x) + 1))
    return math.fsum(terms) / math.factorial(n)


def irwin_hall_ppf(q: np.ndarray, n: int) -> np.ndarray:
    return np.array(
        [optimize.brentq(lambda x, v=v: irwin_hall_cdf(x, n) - v, 0, n, xtol=1e-14) for v in q]
    )


# Float rounding in the grid's cumulative sums: the error bound cannot see below it.
NOISE = 1e-11


@pytest.mark.parametrize("n", range(1, 13))
def test_irwin_hall(n: int) -> None:
    total = exact_total([Uniform(0.0, 1.0)] * n)
    x = np.linspace(0.01, n - 0.01, 241)  # the grid reads the last half cell as flat
    expected = np.array([irwin_hall_cdf(v, n) for v in x])
    np.testing.assert_allclose(total.cdf(x), expected, atol=2e-7)
    err = np.max(np.abs(total.ppf(Q) - irwin_hall_ppf(Q, n)))
    # the reported error bound bounds the real error against the closed form
    assert err <= total.error_bound + NOISE * total.sd
    assert total.error_bound < 1e-5 * total.sd
    assert (total.mean, total.sd) == pytest.approx((n / 2, math.sqrt(n / 12)), rel=1e-14)


@pytest.mark.parametrize("n", [1, 2, 6, 20])
def test_sum_of_exponentials_is_gamma(n: int) -> None:
    # sum of n exponential(1) is gamma(n, 1) (Erlang); scipy.stats.gamma as the closed form
    total = exact_total([Exponential(1.0)] * n)
    ref = stats.gamma(n)
    err = np.max(np.abs(total.ppf(Q) - ref.ppf(Q)))
    assert err <= total.error_bound + NOISE * total.sd
    assert err < 1e-5 * total.sd
    x = ref.ppf(np.linspace(0.001, 0.999, 60))
    np.testing.assert_allclose(total.cdf(x), ref.cdf(x), atol=2e-7)
    assert total.skewness == pytest.approx(2 / math.sqrt(n), rel=1e-12)


def test_sum_of_normals_is_normal() -> None:
    # closed form: normal with the summed means and variances
    parts = [Normal(1.0, 2.0), Normal(5.0, 0.5), Normal(-3.0, 4.0), Normal(100.0, 1.0)]
    total = exact_total(parts)
    ref = stats.norm(103.0, math.sqrt(4 + 0.25 + 16 + 1))
    err = np.max(np.abs(total.ppf(Q) - ref.ppf(Q)))
    assert err <= total.error_bound + NOISE * total.sd
    assert err < 1e-5 * ref.std()


def _ot_event(impact, p: float):
    """A risk event as OpenTURNS writes it: a mixture of a point at 0 and the impact."""
    return ot.Mixture([ot.Dirac(0.0), impact], [1 - p, p])


def test_mixed_families_with_risk_events_against_openturns() -> None:
    # OpenTURNS LinearCombinationDistribution: exact sum by characteristic-function inversion
    p1 = pert(5.0, 6.0, 20.0)
    ours = [
        Triangular(10.0, 14.0, 30.0),
        p1,
        Uniform(3.0, 9.0),
        Normal(20.0, 3.0),
        Lognormal(2.0, 0.5),
        Occurrence(Triangular(10.0, 20.0, 60.0), 0.3),
        Occurrence(Fixed(25.0), 0.2),
        Occurrence(Uniform(-8.0, -2.0), 0.5),  # an opportunity: a saving if it occurs
    ]
    theirs = [
        ot.Triangular(10.0, 14.0, 30.0),
        ot.Beta(p1.alpha, p1.beta, 5.0, 20.0),
        ot.Uniform(3.0, 9.0),
        ot.Normal(20.0, 3.0),
        ot.LogNormal(2.0, 0.5),
        _ot_event(ot.Triangular(10.0, 20.0, 60.0), 0.3),
        _ot_event(ot.Dirac(25.0), 0.2),
        _ot_event(ot.Uniform(-8.0, -2.0), 0.5),
    ]
    ref = ot.LinearCombinationDistribution(theirs, [1.0] * len(theirs))
    total = exact_total(ours)
    expected = np.array([ref.computeQuantile(float(q))[0] for q in Q])
    assert np.max(np.abs(total.ppf(Q) - expected)) < 1e-5 * total.sd
    assert total.mean == pytest.approx(ref.getMean()[0], rel=1e-12)
    assert total.sd == pytest.approx(ref.getStandardDeviation()[0], rel=1e-12)
    x = np.linspace(*total.ppf(np.array([0.001, 0.999])), 40)
    np.testing.assert_allclose(total.cdf(x), [ref.computeCDF(float(v)) for v in x], atol=1e-6)


def test_risk_register_alone_is_discrete_and_exact() -> None:
    # A register of fixed-impact events has no continuous part: the total is 2^n atoms.
    # Direct enumeration of the outcomes is the reference.
    impacts = [25.0, 40.0, 110.0, 7.0, 63.0]
    probs = [0.2, 0.3, 0.05, 0.6, 0.15]
    total = exact_total([Occurrence(Fixed(v), p) for v, p in zip(impacts, probs, strict=True)])
    atoms: dict[float, float] = {}
    for hits in itertools.product((0, 1), repeat=len(impacts)):
        value = sum(v for v, h in zip(impacts, hits, strict=True) if h)
        chance = math.prod(p if h else 1 - p for p, h in zip(probs, hits, strict=True))
        atoms[value] = atoms.get(value, 0.0) + chance
    values = np.array(sorted(atoms))
    cum = np.cumsum([atoms[v] for v in values])
    # between atoms the cdf is flat at the enumerated value: no mass smeared across
    mids = (values[:-1] + values[1:]) / 2
    np.testing.assert_allclose(total.cdf(mids), cum[:-1], atol=1e-12)
    # P(total = 0) = prod(1 - p), all of it on the grid point at 0
    assert isinstance(total, GridTotal)
    at_zero = total.masses[np.argmin(np.abs(total.values))]
    assert total.values[np.argmin(np.abs(total.values))] == pytest.approx(0.0, abs=1e-9)
    assert at_zero == pytest.approx(math.prod(1 - p for p in probs), rel=1e-12)
    # a percentile falling inside an atom's probability sits on that atom
    for q in (0.1, 0.5, 0.9, 0.99):
        k = int(np.searchsorted(cum, q))
        if cum[k] - q > 1e-6 and (k == 0 or q - cum[k - 1] > 1e-6):
            assert total.ppf(q).item() == pytest.approx(values[k], abs=total.step)


def test_point_mass_of_a_register_on_a_continuous_base_is_kept() -> None:
    # base items above zero plus events: the events' zero shows as a jump of prod(1 - p)
    # at the base's own value when the base is fixed
    events = [
        Occurrence(Triangular(10.0, 20.0, 60.0), 0.3),
        Occurrence(Triangular(5.0, 5.0, 9.0), 0.1),
    ]
    total = exact_total([Fixed(100.0), *events])
    jump = total.cdf(100.0 + 0.5 * total.step) - total.cdf(100.0 - 0.5 * total.step)
    assert float(jump) == pytest.approx(0.7 * 0.9, rel=1e-12)


def test_all_fixed_is_a_point_total() -> None:
    total = exact_total([Fixed(3.0), Fixed(4.5)])
    assert isinstance(total, PointTotal)
    assert total.ppf(np.array([0.1, 0.9])).tolist() == [7.5, 7.5]
    assert total.sd == 0.0


def test_error_bound_shrinks_with_the_step() -> None:
    # halving the step cuts the discretisation error about fourfold (second order); without
    # the check at twice the step, which would send the coarse grid to a finer one
    parts = [Exponential(1.0)] * 4
    ref = stats.gamma(4).ppf(Q)
    errs = [
        np.max(np.abs(exact_total(parts, resolution=r, check_error=False).ppf(Q) - ref))
        for r in (100, 200)
    ]
    assert 3.0 < errs[0] / errs[1] < 5.0


@pytest.mark.parametrize(
    "dists",
    [
        [Triangular(0.0, 2.0, 3.0), Uniform(1.0, 5.0), Triangular(2.0, 2.5, 9.0)],
        [Occurrence(Fixed(3.0), 0.4), Occurrence(Triangular(1.0, 2.0, 4.0), 0.3)],  # point masses
    ],
)
def test_the_cdf_at_the_cells_edges_is_their_running_sum(dists) -> None:
    # the Kolmogorov gap reads `edges_cdf` instead of evaluating the cdf at every edge
    total = exact_total(dists)
    assert isinstance(total, GridTotal)
    np.testing.assert_allclose(total.cdf(total.edges), total.edges_cdf, rtol=0, atol=1e-15)
