"""A default and group coefficients in block form: the same matrix, eigenvalues, shortcut
variance and factor correlations as the dense n x n route, without building it; and the
simulation that induces them at a size the dense route cannot reach."""

from __future__ import annotations

import numpy as np
import pytest
from report_fixtures import normal_item
from scipy import special

from engine import CorrelationPair, CorrelationSpec, Estimate, LineItem, analyze
from engine.dependence.block_structure import (
    BlockStructure,
    correlated_counts,
    factor_model,
    is_valid,
)
from engine.dependence.correlation import build_matrix, repair_preview
from engine.simulation.iman_conover import rank_to_pearson


def _items(n: int, groups: int = 4) -> list[LineItem]:
    """Invented packages of a made-up depot, in k; the last few in no group."""
    return [
        LineItem(
            f"package {k}",
            "triangular",
            10 + k % 7,
            20 + k % 11,
            45 + k % 13,
            group=f"zone {k % groups}" if k < n - 3 else "",
        )
        for k in range(n)
    ]


SPECS = [
    CorrelationSpec(default=0.3),
    CorrelationSpec(groups={"Zone 0": 0.6, "zone 2 ": 0.9}),
    CorrelationSpec(default=0.2, groups={"zone 0": 0.5, "zone 1": 0.1, "zone 3": 1.0}),
    CorrelationSpec(
        default=0.25,
        groups={"zone 1": 0.5},
        pairs=[
            CorrelationPair("package 1", "package 5", 0.8),
            CorrelationPair("package 2", "package 3", -0.3),
        ],
    ),
    CorrelationSpec(default=-0.05, groups={"zone 0": 0.4}),
    CorrelationSpec(default=-0.3),  # invalid for 23 items: the least possible is -1/22
    CorrelationSpec(groups={"zone 1": -0.4}),  # invalid for a group of 5 (at least -1/4)
]


@pytest.mark.parametrize("spec", SPECS)
def test_block_form_is_the_dense_matrix(spec):
    estimate = Estimate(_items(23), correlation=spec)
    structure = BlockStructure.from_estimate(estimate)
    _, dense = build_matrix(estimate)
    assert np.array_equal(structure.dense(), dense)
    measured = np.array([0, 1, 5, 9, 22])
    assert np.array_equal(structure.dense(measured), dense[np.ix_(measured, measured)])
    assert structure.linked_pairs() == np.count_nonzero(np.triu(dense, k=1))
    # s' R s in block form against the double sum (REFERENCES.md, correlated normals)
    s = np.linspace(1.0, 3.0, 23)
    pearson = structure.pearson()
    assert pearson.quadratic_form(s) == pytest.approx(s @ pearson.dense() @ s, rel=1e-12)
    # Eigenvalues in closed form against numpy's dense eigvalsh (LAPACK)
    smallest = structure.smallest_eigenvalue()
    if smallest is not None:
        assert smallest == pytest.approx(np.linalg.eigvalsh(dense)[0], abs=1e-9)
    valid = bool(np.linalg.eigvalsh(dense)[0] >= -1e-10)
    assert is_valid(structure) in (valid, None)
    assert (repair_preview(estimate) is None) == valid


@pytest.mark.parametrize("spec", [SPECS[0], SPECS[1], SPECS[3]])
def test_factor_model_has_the_stated_correlations(spec):
    # z = loading F[block] + own e (+ pair terms): Cov(z) = L corr(F) L' + diag(own^2) +
    # pair terms, which must equal the normal-score matrix with a unit diagonal.
    estimate = Estimate(_items(23), correlation=spec)
    pearson = BlockStructure.from_estimate(estimate).pearson()
    model = factor_model(pearson)
    assert model is not None
    onto = np.zeros((23, len(model.factor_root)))
    onto[np.arange(23), model.block] = model.loading
    shared = onto @ model.factor_root
    covariance = shared @ shared.T + np.diag(model.own**2)
    for (a, b), (wa, wb) in zip(model.pair_items, model.pair_weights, strict=True):
        covariance[a, b] += wa * wb
        covariance[b, a] += wa * wb
        covariance[a, a] += wa * wa
        covariance[b, b] += wb * wb
    assert np.allclose(covariance, pearson.dense(), atol=1e-12)


def test_factor_model_refuses_what_it_cannot_carry():
    # Valid for these few items, but a negative default, or a group below the default, has
    # no block-factor form (at scale neither is valid at all); the dense route takes them.
    for spec in (SPECS[2], SPECS[4]):
        estimate = Estimate(_items(23), correlation=spec)
        assert factor_model(BlockStructure.from_estimate(estimate).pearson()) is None
    chained = [CorrelationPair(f"package {k}", f"package {k + 1}", 0.9) for k in range(10)]
    estimate = Estimate(_items(23), correlation=CorrelationSpec(pairs=chained))
    assert factor_model(BlockStructure.from_estimate(estimate).pearson()) is None


@pytest.mark.parametrize(
    "spec",
    [
        CorrelationSpec(default=0.3),
        CorrelationSpec(default=0.1, groups={"crew 0": 0.7, "crew 1": 0.4}),
        CorrelationSpec(groups={"crew 2": 0.5}, pairs=[CorrelationPair("task 0", "task 1", -0.4)]),
        CorrelationSpec(groups={"crew 0": 1.0, "crew 1": 1.0, "crew 2": 1.0}),  # comonotone
        CorrelationSpec(default=1.0),
        CorrelationSpec(default=0.95, groups={"crew 1": 1.0}),
    ],
)
def test_many_correlated_normals_by_block_factors_match_the_closed_form(spec):
    # 1,100 items take the block-factor route (no n x n matrix), in three blocks of rows
    # (BLOCK_ROWS 512, the last one short); the total of jointly normal
    # items is normal with variance s' R s, R = 2 sin(pi r_s / 6) (Pearson 1907).
    n = 1_100
    sds = 2.0 + np.arange(n) % 5
    items = [normal_item(f"task {k}", 50.0, sds[k], f"crew {k % 3}") for k in range(n)]
    estimate = Estimate(items, correlation=spec)
    analysis = analyze(estimate, trials=40_000, seed=5, levels=(5, 50, 80, 95))
    dependence = analysis.dependence
    assert "block factors" in analysis.method_reason
    assert dependence.target is None and dependence.achieved is None  # no n x n kept
    _, rank = build_matrix(estimate)
    variance = sds @ np.clip(rank_to_pearson(rank), -1, 1) @ sds
    assert dependence.shortcut_variance == pytest.approx(variance, rel=1e-12)
    for row in analysis.levels:
        exact = 50.0 * n + np.sqrt(variance) * special.ndtri(row.level / 100)
        assert abs(row.value - exact) < 4 * row.standard_error
    summary = dependence.achieved_summary
    assert summary.items == 300
    assert summary.mean_abs_deviation < 0.01
    for _group, _pairs, aimed, achieved in summary.by_group:
        assert abs(achieved - aimed) < 0.01


def _many(n: int, spec: CorrelationSpec) -> Estimate:
    items = [LineItem(f"item {k}", "uniform", 10, None, 20, group=f"g{k % 8}") for k in range(n)]
    return Estimate(items, correlation=spec)


@pytest.mark.parametrize(
    "spec",
    [CorrelationSpec(default=0.3), CorrelationSpec(default=0.1, groups={"g1": 0.5, "G2": 0.4})],
)
def test_ten_thousand_items_are_checked_without_a_dense_matrix(spec, monkeypatch):
    from engine.dependence import correlation

    def refuse(*_args):
        raise AssertionError("an n x n matrix was built")

    monkeypatch.setattr(correlation, "build_matrix", refuse)
    estimate = _many(10_000, spec)
    assert estimate.problems == []
    assert repair_preview(estimate) is None
    aims = correlation.targets(estimate)
    assert aims.model is not None and aims.target is None


@pytest.mark.parametrize(
    ("spec", "words"),
    [
        (CorrelationSpec(default=-0.1), "not positive semi-definite"),
        (CorrelationSpec(default=0.3, groups={"g0": 0.1}), "not positive semi-definite"),
        (
            CorrelationSpec(
                pairs=[CorrelationPair(f"item {k}", f"item {k + 1}", 0.9) for k in range(50)]
            ),
            "need the full",
        ),
    ],
)
def test_beyond_the_dense_route_what_blocks_cannot_carry_is_refused_in_words(spec, words):
    problems = _many(3_001, spec).problems
    assert len(problems) == 1
    assert words in problems[0].message and problems[0].column == "Coefficient"


def test_report_summarises_achieved_correlations_by_group_when_no_matrix_is_kept():
    from reports import content

    items = [normal_item(f"task {k}", 50.0, 3.0, f"crew {k % 2}") for k in range(320)]
    spec = CorrelationSpec(default=0.2, groups={"crew 1": 0.6})
    analysis = analyze(Estimate(items, correlation=spec), trials=20_000, seed=2)
    dependence = analysis.dependence
    table = content.pair_table(dependence)
    rows = {row[0]: row for row in table.rows}
    assert set(rows) == {"(default)", "crew 1"}
    assert rows["crew 1"][2] == pytest.approx(0.6) and abs(rows["crew 1"][4] - 0.6) < 0.01
    assert "a sample of the items" in " ".join(content.dependence_lines(dependence))
    data = analysis.to_dict()["dependence"]
    assert data["target"] is None and data["achieved_summary"]["items"] == 300
    assert data["induced_by"] == "block factors"


def test_building_pert_tables_reports_progress_and_can_be_cancelled():
    from engine import Cancelled

    items = [LineItem(f"stage {k}", "pert", 10, 12 + k % 7, 30 + k % 5) for k in range(240)]
    estimate = Estimate(items, correlation=CorrelationSpec(default=0.2))
    seen: list[float] = []
    with pytest.raises(Cancelled):
        analyze(estimate, trials=20_000, seed=1, progress=seen.append, cancel=lambda: bool(seen))
    assert len(seen) == 1 and seen[0] <= 0.05  # stopped while the tables were being built


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_correlated_counts_from_blocks_equal_the_dense_matrix(seed):
    """The window's notice counts pairs without an n x n matrix; the dense matrix (the
    definition: every non-zero off-diagonal coefficient) must agree."""
    rng = np.random.default_rng(seed)
    groups = rng.choice(["A", "B", "C", ""], size=30)
    items = [LineItem(f"i{k}", "uniform", 0, None, 1, group=str(g)) for k, g in enumerate(groups)]
    pairs = [
        CorrelationPair(f"i{a}", f"i{b}", float(rng.choice([0.0, 0.4])))
        for a, b in rng.choice(30, size=(6, 2), replace=True)
        if a != b
    ]
    for default in (0.0, 0.2):
        spec = CorrelationSpec(pairs=pairs, groups={"A": 0.5, "B": 0.0, "C": 0.3}, default=default)
        estimate = Estimate(items=items, correlation=spec)
        _, matrix = build_matrix(estimate)
        upper = np.triu(matrix != 0, k=1)
        dense = int(upper.sum()), int((upper | upper.T).any(axis=0).sum())
        assert correlated_counts(BlockStructure.from_estimate(estimate)) == dense


def test_box_muller_own_scores_give_the_normal_copula_rank_correlation():
    # The own terms come from the Box-Muller transform (engine.simulation.normal_scores):
    # against scipy's normal cdf, and the rank correlation of a normal pair with score
    # correlation r, (6/pi) asin(r/2) (Pearson 1907); Spearman's coefficient from n pairs
    # has sd below 1/sqrt(n - 1).
    from scipy import stats

    from engine.dependence.block_structure import FactorModel
    from engine.simulation.factor_pairing import FactorPairing
    from engine.simulation.normal_scores import standard_normals
    from engine.simulation.workspace import Workspace

    scores = np.full((3, 333_333), np.nan, dtype=np.float32)  # an odd count of values
    standard_normals(np.random.default_rng(4), scores, np.empty(scores.size + 1, np.float32))
    assert np.isfinite(scores).all()
    assert stats.kstest(scores.ravel(), "norm").pvalue > 1e-3
    r, n = 0.5, 1_000_000
    model = FactorModel(
        block=np.zeros(2, dtype=np.intp),
        loading=np.full(2, np.sqrt(r)),
        own=np.full(2, np.sqrt(1 - r)),
        factor_root=np.ones((1, 1)),
        pair_items=np.zeros((0, 2), dtype=np.intp),
        pair_weights=np.zeros((0, 2)),
    )
    orders = FactorPairing(model)(np.random.default_rng(3), 2, n, Workspace())
    ranks = np.empty((2, n))
    ranks[0, orders[0]] = ranks[1, orders[1]] = np.arange(n)
    spearman = np.corrcoef(ranks)[0, 1]
    assert abs(spearman - 6 / np.pi * np.arcsin(r / 2)) < 4 / np.sqrt(n - 1)
