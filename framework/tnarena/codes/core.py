"""The one code type: a Pauli (stabilizer or subsystem) code in symplectic form."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from tnarena import gf2
from tnarena.errors import TnarenaError
from tnarena.pauli import symplectic_products

STABILIZER = "stabilizer"
GAUGE = "gauge"
GENERATOR_KINDS = (STABILIZER, GAUGE)


@dataclass(frozen=True, eq=False)
class PauliCode:
    """A Pauli code on n qubits, validated when built.

    Attributes
    ----------
    name : str
        Human-readable label, e.g. ``"surface/square/d3"``.
    qubit_positions : ndarray, shape (n, 2), float
        Planar coordinates of the qubits.
    generators : ndarray, shape (m, 2n), uint8
        Symplectic rows ``[x | z]`` of the stabilizer and gauge generators.
    kinds : tuple of {'stabilizer', 'gauge'}, length m
        Kind of each generator. Gauge generators need not commute with each
        other; stabilizers commute with everything.
    generator_positions : ndarray, shape (m, 2), float
        Where each generator sits in the plane (default: centroid of support).
    logicals : ndarray, shape (k, 2, 2n), uint8
        Logical pairs: ``logicals[i, 0]`` is X-bar_i, ``logicals[i, 1]`` is Z-bar_i.
    distances : dict
        Known distances, e.g. ``{"x": 3, "z": 3}`` (weights of the lightest
        X-type and Z-type logicals); empty where not computed.
    """

    name: str
    qubit_positions: np.ndarray
    generators: np.ndarray
    kinds: tuple[str, ...]
    logicals: np.ndarray
    generator_positions: np.ndarray | None = None
    distances: dict[str, int] = field(default_factory=dict)
    metadata: dict[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        qpos = _positions(self.qubit_positions, "qubit_positions")
        n = qpos.shape[0]
        gens = _binary_matrix(self.generators, 2 * n, "generators")
        logs = np.asarray(self.logicals, dtype=np.int64)
        if logs.size == 0:
            logs = logs.reshape(0, 2, 2 * n)
        if logs.ndim != 3 or logs.shape[1:] != (2, 2 * n):
            raise TnarenaError(
                f"logicals have shape {logs.shape}; expected (k, 2, {2 * n}): "
                "k pairs of (X-bar, Z-bar) symplectic rows."
            )
        logs = _binary_matrix(logs.reshape(-1, 2 * n), 2 * n, "logicals").reshape(-1, 2, 2 * n)
        kinds = tuple(self.kinds)
        if len(kinds) != gens.shape[0]:
            raise TnarenaError(
                f"{len(kinds)} generator kinds given for {gens.shape[0]} generators; give one each."
            )
        bad = sorted({k for k in kinds if k not in GENERATOR_KINDS})
        if bad:
            raise TnarenaError(f"generator kind {bad[0]!r} is unknown; use 'stabilizer' or 'gauge'.")
        if self.generator_positions is None:
            gpos = _centroids(gens, qpos)
        else:
            gpos = _positions(self.generator_positions, "generator_positions")
            if gpos.shape[0] != gens.shape[0]:
                raise TnarenaError(
                    f"{gpos.shape[0]} generator positions for {gens.shape[0]} generators."
                )
        for name, value in (
            ("qubit_positions", qpos),
            ("generators", gens),
            ("kinds", kinds),
            ("logicals", logs),
            ("generator_positions", gpos),
        ):
            object.__setattr__(self, name, value)
        for arr in (qpos, gens, logs, gpos):
            arr.setflags(write=False)
        self._validate()

    # ---- sizes -------------------------------------------------------------
    @property
    def n(self) -> int:
        """Number of physical qubits."""
        return self.qubit_positions.shape[0]

    @property
    def k(self) -> int:
        """Number of logical qubits."""
        return self.logicals.shape[0]

    @property
    def stabilizers(self) -> np.ndarray:
        """Symplectic rows of the stabilizer generators, shape (s, 2n)."""
        return self.generators[self.stabilizer_indices]

    @property
    def stabilizer_indices(self) -> np.ndarray:
        """Indices of the generators marked 'stabilizer', shape (s,)."""
        return np.array([i for i, k in enumerate(self.kinds) if k == STABILIZER], dtype=int)

    @property
    def is_css(self) -> bool:
        """True when every generator is purely X-type or purely Z-type."""
        n = self.n
        has_x = self.generators[:, :n].any(axis=1)
        has_z = self.generators[:, n:].any(axis=1)
        return bool(not np.any(has_x & has_z))

    def logical_operator(self, cls: tuple[int, ...]) -> np.ndarray:
        """Symplectic row of the logical class ``cls`` = (a_1, b_1, ..., a_k, b_k).

        The operator is prod_i X-bar_i^a_i Z-bar_i^b_i (mod phase).
        """
        out = np.zeros(2 * self.n, dtype=np.uint8)
        for i in range(self.k):
            if cls[2 * i]:
                out ^= self.logicals[i, 0]
            if cls[2 * i + 1]:
                out ^= self.logicals[i, 1]
        return out

    def syndrome(self, error: np.ndarray) -> np.ndarray:
        """Syndrome of ``error`` (shape (2n,)) against the stabilizer generators, shape (s,)."""
        return symplectic_products(self.stabilizers, error)[:, 0]

    def error_vector(self, error: np.ndarray) -> np.ndarray:
        """``error`` as a flat uint8 symplectic vector, shape (2n,); refuses another length."""
        error = np.asarray(error, dtype=np.uint8).reshape(-1)
        if error.size != 2 * self.n:
            raise TnarenaError(f"the error has {error.size} symplectic entries; the code needs 2n = {2 * self.n}.")
        return error

    def error_rows(self, errors: np.ndarray) -> np.ndarray:
        """``errors`` as uint8 symplectic rows, shape (B, 2n); refuses another shape."""
        errors = np.asarray(errors, dtype=np.uint8)
        if errors.ndim != 2 or errors.shape[1] != 2 * self.n:
            raise TnarenaError(
                f"the errors have shape {errors.shape}; the code needs (B, 2n) = (B, {2 * self.n}): one "
                "symplectic row per error."
            )
        return errors

    def syndromes(self, errors: np.ndarray) -> np.ndarray:
        """Syndromes of many errors: shape (B, 2n) -> (B, s), uint8, row i the syndrome of errors[i]."""
        errors = self.error_rows(errors)
        # float products of 0/1 matrices are exact here and far faster than integer ones
        rows = self.syndrome_matrix.astype(float)
        return ((errors.astype(float) @ rows.T).astype(np.int64) & 1).astype(np.uint8)

    @property
    def syndrome_matrix(self) -> np.ndarray:
        """M, shape (s, 2n), uint8, with syndrome = M E (mod 2): <g, E> = g_x . E_z + g_z . E_x."""
        n, stab = self.n, self.stabilizers
        return np.concatenate([stab[:, n:], stab[:, :n]], axis=1)

    def summary(self) -> str:
        dist = ", ".join(f"d_{k}={v}" for k, v in sorted(self.distances.items()))
        return f"{self.name}: n={self.n}, k={self.k}, {self.generators.shape[0]} generators" + (
            f", {dist}" if dist else ""
        )

    # ---- validation --------------------------------------------------------
    def _validate(self) -> None:
        gens, kinds = self.generators, self.kinds
        stab = np.array([k == STABILIZER for k in kinds], dtype=bool)
        comm = symplectic_products(gens, gens)
        for i, j in zip(*np.nonzero(comm)):
            if i < j and (stab[i] or stab[j]):
                other = "stabilizer" if stab[i] and stab[j] else "gauge"
                a, b = (i, j) if stab[i] else (j, i)
                raise TnarenaError(
                    f"stabilizer generator {a} does not commute with {other} generator {b}; "
                    "every stabilizer must commute with every generator."
                )
        logs = self.logicals.reshape(-1, 2 * self.n)
        with_gens = symplectic_products(logs, gens)
        if with_gens.any():
            row, g = np.argwhere(with_gens)[0]
            raise TnarenaError(
                f"logical {_logical_name(row)} does not commute with generator {g}; "
                "logicals must commute with the stabilizer and gauge generators."
            )
        among = symplectic_products(logs, logs).astype(int)
        expected = np.zeros_like(among)
        for i in range(self.k):
            expected[2 * i, 2 * i + 1] = expected[2 * i + 1, 2 * i] = 1
        if not np.array_equal(among, expected):
            a, b = np.argwhere(among != expected)[0]
            verb = "commute" if expected[a, b] else "anticommute"
            raise TnarenaError(
                f"logicals {_logical_name(a)} and {_logical_name(b)} {verb}; X-bar_i and Z-bar_i "
                "must anticommute and every other pair of logicals must commute."
            )
        rank_all = gf2.rank(gens) if gens.size else 0
        rank_stab = gf2.rank(gens[stab]) if stab.any() else 0
        twice_gauge = gf2.rank(comm) if gens.size else 0  # 2 x number of gauge qubits
        centre = rank_all - twice_gauge
        if rank_stab != centre:
            raise TnarenaError(
                f"the gauge group has a centre of rank {centre} but the generators marked "
                f"'stabilizer' span rank {rank_stab}; mark as 'stabilizer' every generator "
                "in the centre of the gauge group."
            )
        k_expected = self.n - rank_all + twice_gauge // 2
        if k_expected != self.k:
            raise TnarenaError(
                f"the code has k = n - rank = {k_expected} logical qubits but {self.k} logical "
                f"pairs were given; give exactly {k_expected}."
            )


def _positions(value: Any, what: str) -> np.ndarray:
    try:
        arr = np.array(value, dtype=float)
    except (TypeError, ValueError):
        raise TnarenaError(f"{what} must be pairs of numbers (x, y).") from None
    if arr.size % 2 or (arr.ndim == 2 and arr.shape[1] != 2) or arr.ndim > 2:
        raise TnarenaError(f"{what} has shape {arr.shape}; give one (x, y) pair per entry.")
    arr = arr.reshape(-1, 2)
    if not np.isfinite(arr).all():
        raise TnarenaError(f"{what} holds NaN or infinity; give finite coordinates.")
    return arr


def _logical_name(row: int) -> str:
    return f"{'XZ'[row % 2]}-bar_{row // 2}"


def _binary_matrix(value: Any, width: int, what: str) -> np.ndarray:
    arr = np.asarray(value)
    if arr.size == 0:
        return np.zeros((0, width), dtype=np.uint8)
    if arr.ndim != 2 or arr.shape[1] != width:
        raise TnarenaError(f"{what} have shape {arr.shape}; expected (rows, {width}) for 2n = {width}.")
    if not np.isin(arr, (0, 1)).all():
        raise TnarenaError(f"{what} must hold only 0 and 1 (a symplectic GF(2) matrix).")
    return arr.astype(np.uint8)


def _centroids(gens: np.ndarray, qpos: np.ndarray) -> np.ndarray:
    n = qpos.shape[0]
    support = (gens[:, :n] | gens[:, n:]).astype(float)
    weight = np.maximum(support.sum(axis=1, keepdims=True), 1.0)
    return support @ qpos / weight
