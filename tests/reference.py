"""Test-side references, written independently of the code under test.

``group_sum`` evaluates the defining sum of shared/DESIGN.md by enumerating
the whole group the generators span (textbook definition of the error-class
probability; common practice):

    P(E L G) = 2^-(m - rank) * sum_{s in {0,1}^m} prod_q P_q((E L g^s)_q)
"""

from __future__ import annotations

import numpy as np

# noise-table column of a single-qubit Pauli with bits (x, z): I=0, X=1, Y=2, Z=3
_COLUMN = np.array([[0, 3], [1, 2]])


def gf2_rank(rows: np.ndarray) -> int:
    """Rank over GF(2) by plain Gaussian elimination on Python ints (bitmasks)."""
    basis: list[int] = []
    for row in np.asarray(rows, dtype=np.uint8):
        v = int("".join(map(str, row)), 2) if row.size else 0
        for b in basis:
            v = min(v, v ^ b)
        if v:
            basis.append(v)
    return len(basis)


def group_sum(generators: np.ndarray, table: np.ndarray, base: np.ndarray) -> float:
    """Sum over all 2^m products of the generators, times 2^-(m - rank)."""
    gens = np.asarray(generators, dtype=np.uint8)
    m, two_n = gens.shape
    n = two_n // 2
    if m > 22:
        raise ValueError(f"{m} generators: too many to enumerate 2^{m} terms in a test")
    elements = np.asarray(base, dtype=np.uint8)[None, :]
    for g in gens:
        elements = np.concatenate([elements, elements ^ g[None, :]], axis=0)
    cols = _COLUMN[elements[:, :n], elements[:, n:]]
    probs = np.take_along_axis(np.broadcast_to(table, (1, n, 4)), cols[:, :, None], axis=2)[..., 0]
    total = float(np.prod(probs, axis=1).sum())
    return total / 2.0 ** (m - gf2_rank(gens))


def random_table(n: int, rng: np.random.Generator) -> np.ndarray:
    """A generic per-qubit channel (Dirichlet rows skewed towards I)."""
    return rng.dirichlet([20.0, 1.0, 1.0, 1.0], size=n)
