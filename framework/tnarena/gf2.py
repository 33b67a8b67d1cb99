"""Linear algebra over GF(2) on numpy uint8 arrays (entries 0 or 1).

Everything here is exact integer arithmetic: row reduction, rank, solving
``A x = b`` and null spaces. Matrices are small enough (a few thousand rows)
that a vectorised Gauss-Jordan elimination is fast.
"""

from __future__ import annotations

import numpy as np


def as_gf2(matrix: np.ndarray | list) -> np.ndarray:
    """Return ``matrix`` as a 2D uint8 array of 0/1 entries (copy)."""
    out = np.array(matrix, dtype=np.uint8, ndmin=2) & 1
    return out


def row_reduce(matrix: np.ndarray, *, ncols: int | None = None) -> tuple[np.ndarray, list[int]]:
    """Reduced row echelon form over GF(2).

    Parameters
    ----------
    matrix : ndarray, shape (m, k)
    ncols : int, optional
        Only pivot on the first ``ncols`` columns (used for augmented systems).

    Returns
    -------
    reduced : ndarray, shape (m, k), uint8
    pivots : list of int
        Pivot column of each of the first ``len(pivots)`` rows of ``reduced``.
    """
    a = as_gf2(matrix)
    m, k = a.shape
    limit = k if ncols is None else ncols
    pivots: list[int] = []
    row = 0
    for col in range(limit):
        if row == m:
            break
        hits = np.flatnonzero(a[row:, col])
        if hits.size == 0:
            continue
        pivot = row + hits[0]
        if pivot != row:
            a[[row, pivot]] = a[[pivot, row]]
        others = np.flatnonzero(a[:, col])
        others = others[others != row]
        if others.size:
            a[others] ^= a[row]
        pivots.append(col)
        row += 1
    return a, pivots


def rank(matrix: np.ndarray) -> int:
    """Rank over GF(2)."""
    a = as_gf2(matrix)
    if a.size == 0:
        return 0
    return len(row_reduce(a)[1])


def solve(a: np.ndarray, b: np.ndarray) -> np.ndarray | None:
    """One solution ``x`` of ``a @ x = b (mod 2)``, or None if there is none.

    a : shape (m, k); b : shape (m,). Returns x : shape (k,), uint8.
    """
    a = as_gf2(a)
    m, k = a.shape
    b = np.asarray(b, dtype=np.uint8).reshape(m) & 1
    aug = np.concatenate([a, b[:, None]], axis=1)
    reduced, pivots = row_reduce(aug, ncols=k)
    r = len(pivots)
    if reduced[r:, k].any():
        return None
    x = np.zeros(k, dtype=np.uint8)
    x[pivots] = reduced[:r, k]
    return x


def nullspace(a: np.ndarray) -> np.ndarray:
    """Basis of the right null space: rows ``v`` with ``a @ v = 0 (mod 2)``.

    a : shape (m, k). Returns shape (k - rank, k), uint8.
    """
    a = as_gf2(a)
    m, k = a.shape
    reduced, pivots = row_reduce(a)
    free = [c for c in range(k) if c not in set(pivots)]
    basis = np.zeros((len(free), k), dtype=np.uint8)
    for i, f in enumerate(free):
        basis[i, f] = 1
        for r, p in enumerate(pivots):
            basis[i, p] = reduced[r, f]
    return basis


def in_row_space(matrix: np.ndarray, vectors: np.ndarray) -> np.ndarray:
    """For each row of ``vectors``, whether it lies in the row space of ``matrix``.

    matrix : shape (m, k); vectors : shape (t, k). Returns bool array, shape (t,).
    """
    base = rank(matrix)
    vectors = as_gf2(vectors)
    return np.array([rank(np.vstack([matrix, v])) == base for v in vectors], dtype=bool)
