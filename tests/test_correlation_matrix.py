"""Stated correlations: precedence, the problems users make, the nearest valid matrix."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import optimize

from engine import CorrelationPair, CorrelationSpec, Estimate, InputError, LineItem, analyze
from engine.dependence.correlation import build_matrix, repair_preview
from engine.dependence.nearest_correlation import is_positive_semidefinite, nearest_correlation


def _items(*names: str, group: str = "") -> list[LineItem]:
    return [
        LineItem(n, "triangular", 8, 10, 15, group=group, row=k + 2) for k, n in enumerate(names)
    ]


def test_pair_beats_group_beats_default():
    items = [
        *_items("Civil works", "Steel", group="site"),
        *_items("Design"),
        *_items("Cladding", group="site"),
    ]
    spec = CorrelationSpec(
        pairs=[CorrelationPair("civil works ", "STEEL", 0.8, row=2)],
        groups={"Site": 0.6},
        default=0.2,
    )
    names, m = build_matrix(Estimate(items, correlation=spec))
    k = {n: i for i, n in enumerate(names)}
    assert m[k["Civil works"], k["Steel"]] == m[k["Steel"], k["Civil works"]] == 0.8
    assert m[k["Civil works"], k["Cladding"]] == 0.6
    assert m[k["Design"], k["Steel"]] == 0.2
    assert np.all(np.diag(m) == 1.0)


def _problems(spec: CorrelationSpec, items=None) -> list:
    estimate = Estimate(items or _items("Civil works", "Steel", "Design"), correlation=spec)
    found = [p for p in estimate.problems if p.sheet == "Correlations"]
    with pytest.raises(InputError):
        analyze(estimate, trials=2000, seed=1)
    return found


def test_unknown_item_is_named_with_row_column_and_a_suggestion():
    (p,) = _problems(CorrelationSpec(pairs=[CorrelationPair("Civil works", "Steal", 0.5, row=4)]))
    assert (p.row, p.column) == (4, "Item B")
    assert "did you mean 'Steel'" in p.message and "Item column" in p.fix


def test_self_pair_and_out_of_range_coefficients():
    problems = _problems(
        CorrelationSpec(
            pairs=[
                CorrelationPair("Steel", "steel", 0.5, row=3),
                CorrelationPair("Steel", "Design", 1.5, row=5),
            ],
            groups={"nowhere": 0.4},
            default=-2.0,
        )
    )
    where = {(p.row, p.column) for p in problems}
    assert (3, "Item B") in where  # paired with itself
    assert (5, "Coefficient") in where  # 1.5
    assert (None, "Coefficient") in where  # default -2
    assert (None, "Item B") in where  # a group no item belongs to
    assert all(p.fix for p in problems)


def test_a_pair_stated_twice_with_different_coefficients():
    (p,) = _problems(
        CorrelationSpec(
            pairs=[
                CorrelationPair("Steel", "Design", 0.3, row=3),
                CorrelationPair("Design", "Steel", 0.5, row=6),
            ]
        )
    )
    assert p.row == 6 and "row 3" in p.message


# Higham (2002), IMA J. Numer. Anal. 22, section 4's example (the check value of REFERENCES.md):
# [[1,1,0],[1,1,1],[0,1,1]] -> off-diagonals about 0.7607 and 0.1573.
HIGHAM_A = np.array([[1.0, 1.0, 0.0], [1.0, 1.0, 1.0], [0.0, 1.0, 1.0]])


def test_higham_example():
    x = nearest_correlation(HIGHAM_A)
    assert x.converged
    assert x.matrix[0, 1] == pytest.approx(0.7607, abs=1e-4)
    assert x.matrix[1, 2] == pytest.approx(0.7607, abs=1e-4)
    assert x.matrix[0, 2] == pytest.approx(0.1573, abs=1e-4)


def test_higham_against_a_direct_constrained_minimisation():
    # Independent check: minimise ||X - A||_F over unit-diagonal X with smallest eigenvalue >= 0
    # by scipy's SLSQP (a different algorithm on the same problem).
    def matrix(v):
        return np.array([[1, v[0], v[1]], [v[0], 1, v[2]], [v[1], v[2], 1]])

    found = optimize.minimize(
        lambda v: np.sum((matrix(v) - HIGHAM_A) ** 2),
        x0=np.zeros(3),
        constraints=[{"type": "ineq", "fun": lambda v: np.linalg.eigvalsh(matrix(v))[0]}],
        method="SLSQP",
        options={"ftol": 1e-14, "maxiter": 500},
    )
    x = nearest_correlation(HIGHAM_A).matrix
    assert np.allclose(matrix(found.x), x, atol=1e-4)


def test_valid_matrix_left_alone():
    a = np.array([[1.0, 0.5, 0.2], [0.5, 1.0, 0.3], [0.2, 0.3, 1.0]])
    assert np.allclose(nearest_correlation(a).matrix, a, atol=1e-12)


def _contradiction(accept: bool) -> Estimate:
    spec = CorrelationSpec(
        pairs=[
            CorrelationPair("Civil works", "Steel", 0.9, row=2),
            CorrelationPair("Steel", "Design", 0.9, row=3),
            CorrelationPair("Civil works", "Design", -0.9, row=4),
        ],
        accept_repair=accept,
    )
    return Estimate(_items("Civil works", "Steel", "Design"), correlation=spec)


def test_invalid_matrix_refused_with_the_worst_pairs_named():
    estimate = _contradiction(accept=False)
    assert estimate.problems == []  # each pair on its own is fine
    with pytest.raises(InputError) as refused:
        analyze(estimate, trials=2000, seed=1)
    (p,) = refused.value.problems
    assert p.column == "Coefficient" and p.row == 4  # the -0.9 pair changes most
    assert "'Civil works'-'Design' -0.90" in p.message and "accept" in p.fix


def test_repair_preview_and_accepted_repair_flagged():
    preview = repair_preview(_contradiction(accept=False))
    assert preview is not None and preview.smallest_eigenvalue < 0
    assert is_positive_semidefinite(preview.repaired)
    assert preview.largest_change.item_b == "Design" and preview.largest_change.change > 0
    analysis = analyze(_contradiction(accept=True), trials=4000, seed=3)
    dep = analysis.dependence
    assert dep.repaired and dep.largest_change[:2] == ("Civil works", "Design")
    assert dep.largest_change[3] == pytest.approx(preview.largest_change.repaired)
    assert "repair accepted" in analysis.method_reason
    assert any("not a valid correlation matrix" in r for r in analysis.reasons)
    assert repair_preview(Estimate(_items("Steel", "Design"))) is None
