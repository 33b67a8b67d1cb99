"""Pauli operators in symplectic form, modulo phase.

An n-qubit Pauli is a length-2n GF(2) vector ``[x | z]``: qubit q carries
X if (x_q, z_q) = (1, 0), Z if (0, 1), Y if (1, 1). Noise tables index the
single-qubit Paulis in the column order I, X, Y, Z (see :data:`PAULI_LABELS`).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from tnarena.errors import TnarenaError

PAULI_LABELS = ("I", "X", "Y", "Z")
_BITS = {"I": (0, 0), "X": (1, 0), "Y": (1, 1), "Z": (0, 1)}


def column_of(x: np.ndarray, z: np.ndarray) -> np.ndarray:
    """Noise-table column (0=I, 1=X, 2=Y, 3=Z) of single-qubit Paulis with bits x, z."""
    x = np.asarray(x, dtype=np.uint8)
    z = np.asarray(z, dtype=np.uint8)
    return 2 * z + (x ^ z)


def symplectic_products(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Matrix of symplectic products (0 commute, 1 anticommute).

    a : shape (r, 2n); b : shape (s, 2n). Returns shape (r, s), uint8.
    """
    a = np.atleast_2d(np.asarray(a, dtype=np.int64))
    b = np.atleast_2d(np.asarray(b, dtype=np.int64))
    n = a.shape[1] // 2
    out = a[:, :n] @ b[:, n:].T + a[:, n:] @ b[:, :n].T
    return (out % 2).astype(np.uint8)


def from_string(text: str) -> np.ndarray:
    """Symplectic vector of a dense Pauli string such as ``"XIZY"``."""
    try:
        bits = [_BITS[c] for c in text.strip().upper()]
    except KeyError as exc:
        raise TnarenaError(
            f"Pauli string {text!r} has the letter {exc.args[0]!r}; use only I, X, Y and Z."
        ) from None
    x = [b[0] for b in bits]
    z = [b[1] for b in bits]
    return np.array(x + z, dtype=np.uint8)


def from_sparse(support: Mapping[int | str, str], n: int) -> np.ndarray:
    """Symplectic vector of a sparse map {qubit index: 'X' | 'Y' | 'Z'} on n qubits."""
    vec = np.zeros(2 * n, dtype=np.uint8)
    for key, letter in support.items():
        try:
            q = int(key)
        except (TypeError, ValueError):
            raise TnarenaError(f"qubit index {key!r} in a sparse Pauli is not an integer.") from None
        if not 0 <= q < n:
            raise TnarenaError(f"qubit index {q} in a sparse Pauli is outside 0..{n - 1}.")
        letter = str(letter).upper()
        if letter not in _BITS:
            raise TnarenaError(f"qubit {q} in a sparse Pauli has {letter!r}; use I, X, Y or Z.")
        vec[q], vec[n + q] = _BITS[letter]
    return vec


def to_string(vec: np.ndarray) -> str:
    """Dense Pauli string of a symplectic vector."""
    vec = np.asarray(vec, dtype=np.uint8)
    n = vec.size // 2
    return "".join(PAULI_LABELS[c] for c in column_of(vec[:n], vec[n:]))


def to_sparse(vec: np.ndarray) -> dict[str, str]:
    """Sparse map {str(qubit): letter} of the non-identity qubits of a symplectic vector."""
    vec = np.asarray(vec, dtype=np.uint8)
    n = vec.size // 2
    cols = column_of(vec[:n], vec[n:])
    return {str(q): PAULI_LABELS[c] for q, c in enumerate(cols) if c}


def support(vec: np.ndarray) -> np.ndarray:
    """Indices of the qubits where a symplectic vector acts non-trivially."""
    vec = np.asarray(vec, dtype=np.uint8)
    n = vec.size // 2
    return np.flatnonzero(vec[:n] | vec[n:])
