"""The nearest valid correlation matrix to one that is not, by Higham (2002).

Correlations stated pair by pair can contradict each other (A with B 0.9, B with C 0.9, A with
C -0.5): no set of quantities has them all, and the matrix is not positive semi-definite.
Higham, "Computing the nearest correlation matrix - a problem from finance", IMA Journal of
Numerical Analysis 22 (2002), finds the valid matrix closest in the Frobenius norm by
alternating projections onto the positive semi-definite cone and onto the matrices with a
unit diagonal, with Dykstra's correction so the alternation converges to the nearest point
of the intersection rather than to any point of it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

# Smallest eigenvalue still counted as non-negative: rounding in a matrix of coefficients
# typed to two or three decimals is far above this, a real contradiction far below.
PSD_TOLERANCE = 1e-10


@dataclass(frozen=True)
class NearestCorrelation:
    matrix: np.ndarray
    iterations: int
    converged: bool


def smallest_eigenvalue(a: np.ndarray) -> float:
    return float(np.linalg.eigvalsh(a)[0]) if a.size else 1.0


def is_positive_semidefinite(a: np.ndarray, tolerance: float = PSD_TOLERANCE) -> bool:
    return smallest_eigenvalue(a) >= -tolerance


def _project_psd(r: np.ndarray) -> np.ndarray:
    w, v = np.linalg.eigh(r)
    x = (v * np.maximum(w, 0.0)) @ v.T
    return (x + x.T) / 2


def nearest_correlation(
    a: np.ndarray, *, tolerance: float = 1e-12, max_iterations: int = 2000
) -> NearestCorrelation:
    """Higham (2002), algorithm 3.3 with unit weights: Y = A, dS = 0; repeat R = Y - dS,
    X = P_S(R), dS = X - R, Y = P_U(X) until ||Y - X|| / ||Y|| is below `tolerance`."""
    a = np.asarray(a, dtype=float)
    y = (a + a.T) / 2
    correction = np.zeros_like(y)
    for iteration in range(1, max_iterations + 1):
        r = y - correction
        x = _project_psd(r)
        correction = x - r
        y_next = x.copy()
        np.fill_diagonal(y_next, 1.0)
        scale = max(np.linalg.norm(y_next), 1.0)
        y = y_next
        if np.linalg.norm(y - x) / scale < tolerance:
            return NearestCorrelation(np.clip(y, -1.0, 1.0), iteration, True)
    return NearestCorrelation(np.clip(y, -1.0, 1.0), max_iterations, False)
