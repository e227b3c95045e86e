"""Ranking: packed-key orders are argsort's, permutations are uniform, ties share ranks."""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from engine.simulation.ranking import orders, random_permutations
from engine.simulation.sample_statistics import tie_averaged_ranks


def test_orders_is_stable_argsort_including_ties_and_signs():
    rng = np.random.default_rng(5)
    t = rng.standard_normal((6, 1000)).astype(np.float32)
    t[0, :500] = t[0, 500:]  # ties, which argsort's stable kind keeps in index order
    t[1, ::7] = 0.0
    t[1, 3::7] = -0.0  # -0.0 == 0.0, so the two tie as well
    t[2] = np.abs(t[2]) * -1e-30  # tiny negatives
    t[3, :10] = [np.inf, -np.inf, 3e38, -3e38, 1e-45, -1e-45, 0.0, 1.0, -1.0, 2.0]
    expected = np.argsort(t, axis=1, kind="stable")
    assert np.array_equal(orders(t), expected)


def test_random_permutations_are_permutations():
    perms = random_permutations(np.random.default_rng(1), 50, 777)
    assert np.array_equal(np.sort(perms, axis=1), np.broadcast_to(np.arange(777), (50, 777)))


def test_random_permutations_put_each_element_everywhere_equally_often():
    # Under a uniform permutation, element i lands in each of the n positions with
    # probability 1/n: Pearson's chi-square on the (element, position) counts, a two-way
    # table with both margins fixed, df (n-1)^2 (from memory).
    n, rows = 8, 40_000
    perms = random_permutations(np.random.default_rng(2), rows, n)
    counts = np.zeros((n, n))
    np.add.at(counts, (perms.ravel(), np.tile(np.arange(n), rows)), 1)
    expected = rows / n
    chi2 = float(((counts - expected) ** 2 / expected).sum())
    assert stats.chi2.sf(chi2, (n - 1) ** 2) > 1e-3
    # and the pairs: element 0 before element 1 half of the time
    before = np.mean(np.argmax(perms == 0, axis=1) < np.argmax(perms == 1, axis=1))
    assert abs(before - 0.5) < 4 * math.sqrt(0.25 / rows)


def test_random_permutations_are_reproducible_and_row_independent():
    a = random_permutations(np.random.default_rng(3), 5, 100)
    b = random_permutations(np.random.default_rng(3), 5, 100)
    assert np.array_equal(a, b)
    # Spearman correlation between rows of independent permutations is ~N(0, 1/(n-1))
    rho = stats.spearmanr(random_permutations(np.random.default_rng(4), 2, 10_000).T).statistic
    assert abs(rho) < 4 / math.sqrt(10_000 - 1)


def test_tie_averaged_ranks_are_scipys_average_ranks():
    # scipy.stats.rankdata(method="average") counts from 1; ours from 0
    rng = np.random.default_rng(6)
    rows = np.sort(rng.integers(0, 12, (5, 300)).astype(float), axis=1)
    rows[0] = 3.0  # one long tie
    rows[1] = np.arange(300.0)  # none
    expected = stats.rankdata(rows, method="average", axis=1) - 1
    np.testing.assert_array_equal(tie_averaged_ranks(rows), expected)
    np.testing.assert_array_equal(tie_averaged_ranks(rows[2]), expected[2])


def test_unit_score_orders_agree_with_argsort_but_for_ties_within_a_step():
    # numpy's stable argsort is the reference; a 32-bit key reads the score on a grid of
    # 2^23 steps over [-8, 8] for 500 columns, so only scores closer than 2e-6 may swap.
    from engine.simulation.ranking import unit_score_orders

    z = np.random.default_rng(4).standard_normal((300, 500), dtype=np.float32)
    got = unit_score_orders(z.copy())
    expected = np.argsort(z, axis=1, kind="stable")
    differ = got != expected
    assert differ.mean() < 1e-3
    ranked = np.take_along_axis(z, got, axis=1)
    assert np.all(np.diff(ranked, axis=1) > -2e-6)  # in order up to one step
    equal_rows = unit_score_orders(np.repeat(z[:1], 3, axis=0))  # comonotone items
    assert (equal_rows == equal_rows[0]).all()
