"""The network builder shared by every strategy: (code, noise, error, class) -> network.

For an error E and a logical class L the class probability is

    P(E L G) = 2^-(m - rank) * sum_{s in {0,1}^m} prod_q P_q((E L g^s)_q)

(shared/DESIGN.md). :class:`NetworkBuilder` turns this sum into a
:class:`DecodingNetwork` in three steps, the first two done once per
(code, noise support):

1. *Elimination.* Where a qubit's noise lives in a subgroup ({I, X}, {I, Z},
   {I, Y} or {I}), a term is non-zero only if the Pauli there stays in it:
   linear constraints ``M s = b`` over GF(2). Generators that no constraint
   sees stay free variables; the others are fixed to a particular solution
   (absorbed into E L) plus their null space (products that are again free;
   products that are the identity become a factor 2 each). For a CSS code
   under pure X noise this drops every Z-type generator.
2. *Splitting.* Where a qubit's channel factorises into independent X and Z
   flips (P_I P_Y = P_X P_Z) and no generator acts on it by Y, the qubit
   becomes two nodes, one for its X bit and one for its Z bit. For a CSS
   code under independent X/Z noise the network falls into two pieces.
3. *Arrays* (per error and class): each qubit node gets the probabilities of
   the Pauli the incident generator variables produce, normalised to a
   largest entry of 1 with the logarithm of the factor carried in
   ``log_scale``. They depend on the error only through the node's two bits,
   so the four normalised arrays of every node are tabulated once and each
   error picks its rows: :meth:`NetworkBuilder.network_batch` does this for
   many errors at once (numpy over a leading batch axis), and
   :meth:`NetworkBuilder.network` is its batch of one.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from tnarena import gf2
from tnarena.codes.core import PauliCode
from tnarena.network.batch import NetworkBatch
from tnarena.network.structure import GENERATOR, QUBIT, DecodingNetwork, NetworkStructure
from tnarena.noise import validate_table
from tnarena.pauli import column_of

#: Relative tolerance for "this channel factorises into independent X and Z flips".
FACTOR_TOLERANCE = 1e-12

_FULL, _XBIT, _ZBIT = "full", "x", "z"


@dataclass(frozen=True)
class _QubitNode:
    qubit: int
    mode: str  # 'full', 'x' or 'z'
    generators: tuple[int, ...]  # effective generator ids, axis order


def copy_tensor(degree: int) -> np.ndarray:
    """COPY tensor of ``degree`` legs of dimension 2: 1 where all indices agree."""
    t = np.zeros((2,) * degree)
    t[(0,) * degree] = 1.0
    t[(1,) * degree] = 1.0
    t.setflags(write=False)
    return t


class NetworkBuilder:
    """Builds decoding networks for one code under one noise table.

    Parameters
    ----------
    code : PauliCode
    noise : array-like, shape (n, 4)
        Per-qubit probabilities of I, X, Y, Z.

    The structure is computed once here; :meth:`network` fills in the arrays
    for an error (shape (2n,)) and a logical class.
    """

    def __init__(self, code: PauliCode, noise: np.ndarray) -> None:
        self.code = code
        self.table = validate_table(noise, code.n)
        n, gens = code.n, code.generators
        m = gens.shape[0]
        self._constraints = _constraint_rows(self.table)
        self._constraints_t = self._constraints.T.astype(float)
        # float64 products of 0/1 matrices are exact here and far faster than int64 ones
        coupling = (self._constraints.astype(float) @ gens.T.astype(float)).astype(np.int64) % 2
        free = np.flatnonzero(~coupling.any(axis=0))
        fixed = np.flatnonzero(coupling.any(axis=0))
        self._fixed_gens = gens[fixed]
        self._fixed_gens_f = self._fixed_gens.astype(float)
        m_fixed = coupling[:, fixed].astype(np.uint8)
        self._solver = _LinearSolver(m_fixed)
        combos = (gf2.nullspace(m_fixed).astype(np.int64) @ self._fixed_gens) % 2 if fixed.size else []
        combos = np.asarray(combos, dtype=np.uint8).reshape(-1, 2 * n)
        identity = ~combos.any(axis=1)
        eff = np.vstack([gens[free], combos[~identity]]) if free.size or (~identity).any() else np.zeros((0, 2 * n), np.uint8)
        self._effective = eff.astype(np.uint8)
        self._eff_labels = [int(i) for i in free] + [-1] * int((~identity).sum())
        rank = gf2.rank(gens) if m else 0
        self.log_norm = (int(identity.sum()) - (m - rank)) * math.log(2.0)
        self._build_structure()

    # ---- structure -----------------------------------------------------------
    def _build_structure(self) -> None:
        n, eff, table = self.code.n, self._effective, self.table
        acts_x = eff[:, :n].astype(bool)
        acts_z = eff[:, n:].astype(bool)
        nodes: list[_QubitNode] = []
        constants: list[_QubitNode] = []
        for q in range(n):
            on = np.flatnonzero(acts_x[:, q] | acts_z[:, q])
            split = _factorises(table[q]) and not (acts_x[on, q] & acts_z[on, q]).any()
            parts = (
                [(_XBIT, on[acts_x[on, q]]), (_ZBIT, on[acts_z[on, q]])] if split else [(_FULL, on)]
            )
            for mode, attached in parts:
                node = _QubitNode(q, mode, tuple(int(g) for g in attached))
                (nodes if attached.size else constants).append(node)
        used = sorted({g for node in nodes for g in node.generators})
        gen_node = {g: i for i, g in enumerate(used)}
        offset = len(used)
        bonds: list[tuple[int, int]] = []
        gen_bonds: list[list[int]] = [[] for _ in used]
        qubit_bonds: list[tuple[int, ...]] = []
        for j, node in enumerate(nodes):
            mine = []
            for g in node.generators:
                bonds.append((gen_node[g], offset + j))
                gen_bonds[gen_node[g]].append(len(bonds) - 1)
                mine.append(len(bonds) - 1)
            qubit_bonds.append(tuple(mine))
        qpos = self.code.qubit_positions
        gpos = []
        for g in used:
            label = self._eff_labels[g]
            if label >= 0:
                gpos.append(self.code.generator_positions[label])
            else:
                gpos.append(qpos[np.flatnonzero(acts_x[g] | acts_z[g])].mean(axis=0))
        positions = np.array(gpos + [qpos[node.qubit] for node in nodes], dtype=float).reshape(-1, 2)
        self.structure = NetworkStructure(
            kinds=(GENERATOR,) * len(used) + (QUBIT,) * len(nodes),
            labels=tuple(self._eff_labels[g] for g in used) + tuple(node.qubit for node in nodes),
            positions=positions,
            bonds=np.array(bonds, dtype=np.int64).reshape(-1, 2),
            node_bonds=tuple(tuple(b) for b in gen_bonds) + tuple(qubit_bonds),
        )
        self._copies = tuple(copy_tensor(len(b)) for b in gen_bonds)
        by_degree: dict[int, list[int]] = {}
        for v, bonds_of in enumerate(gen_bonds):
            by_degree.setdefault(len(bonds_of), []).append(v)
        self._copy_blocks = [(np.array(vs), np.array([self._copies[v] for v in vs])) for vs in by_degree.values()]
        self._zero_arrays: tuple[np.ndarray, ...] | None = None  # built on the first impossible class
        self._groups = _group_by_degree(nodes, offset, eff, table)
        self._constant = _group_by_degree(constants, -1, eff, table)

    # ---- arrays --------------------------------------------------------------
    def network(self, error: np.ndarray, logical_class: tuple[int, ...] | None = None) -> DecodingNetwork:
        """The network whose value times exp(log_scale) is P(E L G).

        error : shape (2n,), symplectic; logical_class : (a_1, b_1, ...) or None for L = I.
        An impossible class gives log_scale -inf and zero qubit arrays.
        """
        base = self.code.error_vector(error)
        possible, log_scales, blocks = self._qubit_blocks(base[None, :], logical_class)
        if not possible[0]:
            return self._zero()
        arrays = list(self._copies) + [None] * (self.structure.num_nodes - len(self._copies))
        _place(arrays, [(nodes, block[:, 0]) for nodes, block in blocks])
        return DecodingNetwork(self.structure, tuple(arrays), float(log_scales[0]))

    def network_batch(self, errors: np.ndarray,
                      logical_class: tuple[int, ...] | None = None) -> tuple[NetworkBatch, np.ndarray]:
        """The networks of many errors for one class: ``(batch of the possible ones, possible)``.

        errors : shape (B, 2n), symplectic; logical_class as in :meth:`network`.
        ``possible`` has shape (B,), bool; element j of the batch is
        ``network(errors[i], logical_class)`` for the j-th i where ``possible[i]``
        (the others are impossible: log_scale -inf).
        """
        possible, log_scales, blocks = self._qubit_blocks(self.code.error_rows(errors), logical_class)
        batch = log_scales.size
        stacks: list = [None] * self.structure.num_nodes
        shared = [(nodes, np.broadcast_to(copies[:, None], (len(nodes), batch) + copies.shape[1:]))
                  for nodes, copies in self._copy_blocks]  # read-only, stride 0 on the batch axis
        _place(stacks, shared + blocks)
        return NetworkBatch(self.structure, tuple(stacks), log_scales), possible

    def _qubit_blocks(self, errors: np.ndarray, logical_class: tuple[int, ...] | None
                      ) -> tuple[np.ndarray, np.ndarray, list[tuple[np.ndarray, np.ndarray]]]:
        """``(possible (B,), log_scales (P,), [(node ids (g,), arrays (g, P) + (2,) * degree), ...])``
        for errors (B, 2n): the qubit arrays of the P possible elements, by degree group."""
        n = self.code.n
        base = errors if logical_class is None else errors ^ self.code.logical_operator(logical_class)
        fixed, possible = self._solver.solve_many((base.astype(float) @ self._constraints_t).astype(np.int64) & 1)
        rows = np.flatnonzero(possible)
        if rows.size < possible.size:
            base, fixed = base[rows], fixed[rows]
        if fixed.shape[1]:
            base = base ^ ((fixed.astype(float) @ self._fixed_gens_f).astype(np.int64) & 1).astype(np.uint8)
        log_scales = np.full(rows.size, self.log_norm)
        picks = []
        for group in ([self._constant] if self._constant is not None else []) + self._groups:
            at = group.table_rows(base, n)
            log_scales += group.tables[1][at].sum(axis=1)
            if group is not self._constant:
                picks.append((group, at))
        dead = np.isneginf(log_scales)  # a qubit's Pauli has probability 0 in every term
        if dead.any():
            possible[rows[dead]] = False
            log_scales, picks = log_scales[~dead], [(g, at[~dead]) for g, at in picks]
        shape = (log_scales.size,)
        blocks = [(g.nodes, g.tables[0][at.T].reshape((g.size,) + shape + (2,) * g.degree)) for g, at in picks]
        return possible, log_scales, blocks

    def _zero(self) -> DecodingNetwork:
        """An impossible class: log_scale -inf and zero qubit arrays (made once, shared, read-only)."""
        if self._zero_arrays is None:
            zeros = []
            for i, a in enumerate(self._copies + (None,) * (self.structure.num_nodes - len(self._copies))):
                if a is None:
                    a = np.zeros((2,) * self.structure.degree(i))
                    a.flags.writeable = False
                zeros.append(a)
            self._zero_arrays = tuple(zeros)
        return DecodingNetwork(self.structure, self._zero_arrays, -math.inf)


def _place(arrays: list, blocks) -> None:
    """arrays[node] = the node's slice of its block, for every (node ids, block) pair."""
    for nodes, block in blocks:
        for node, array in zip(nodes, list(block)):  # views, made by numpy's own iteration
            arrays[node] = array


class _LinearSolver:
    """Solves ``A x = b`` over GF(2) for many b with one elimination of A (r x k)."""

    def __init__(self, a: np.ndarray) -> None:
        r, k = a.shape
        aug = np.concatenate([a, np.eye(r, dtype=np.uint8)], axis=1)
        reduced, pivots = gf2.row_reduce(aug, ncols=k)
        self.k = k
        self.pivots = np.array(pivots, dtype=int)
        self.transform_t = reduced[:, k:].T.astype(float)  # exact: 0/1 entries, sums << 2^53

    def solve(self, b: np.ndarray) -> np.ndarray | None:
        """One solution x (shape (k,), uint8) for b (shape (r,)), or None if there is none."""
        x, ok = self.solve_many(np.asarray(b).reshape(1, -1))
        return x[0] if ok[0] else None

    def solve_many(self, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Solutions for many right-hand sides b (shape (B, r)): ``(x (B, k) uint8, solvable (B,) bool)``.

        Rows of x where ``solvable`` is False are meaningless.
        """
        b = np.asarray(b, dtype=float)
        tb = (b @ self.transform_t).astype(np.int64) & 1
        rank = self.pivots.size
        x = np.zeros((b.shape[0], self.k), dtype=np.uint8)
        x[:, self.pivots] = tb[:, :rank]
        return x, ~tb[:, rank:].any(axis=1)


@dataclass
class _DegreeGroup:
    """Qubit nodes of one degree, vectorised: values = V[q][x_bit, z_bit]."""

    degree: int
    nodes: np.ndarray  # node ids (or -1 for constants), shape (g,)
    qubits: np.ndarray  # shape (g,)
    flip_x: np.ndarray  # shape (g, 2^degree), x bit flipped by each assignment
    flip_z: np.ndarray
    value: np.ndarray  # shape (g, 4): V[x, z] flattened as 2 x + z

    @property
    def size(self) -> int:
        return int(self.qubits.size)

    def table_rows(self, base: np.ndarray, n: int) -> np.ndarray:
        """Row of :attr:`tables` each node takes for each error: base (B, 2n) -> shape (B, g).

        A node's values depend on the error only through its two bits there (4 cases).
        """
        return (2 * base[:, self.qubits] + base[:, n + self.qubits]) + self._offsets

    @cached_property
    def _offsets(self) -> np.ndarray:
        return 4 * np.arange(self.size, dtype=np.intp)

    @cached_property
    def tables(self) -> tuple[np.ndarray, np.ndarray]:
        """``(normalised, log_peak)``, shapes (4 g, 2^degree) and (4 g,): for node j and error bits
        (x, z), row 4 j + 2 x + z holds the node's values over the assignments divided by their
        largest, and the log of that largest (-inf, and a zero row, where every value is 0)."""
        bits = np.arange(4)
        x = (bits[None, :, None] >> 1) ^ self.flip_x[:, None, :]  # (g, 4, 2^degree)
        z = (bits[None, :, None] & 1) ^ self.flip_z[:, None, :]
        vals = np.take_along_axis(self.value[:, None, :], (2 * x + z).astype(np.intp), axis=2)
        peak = vals.max(axis=2, keepdims=True)
        with np.errstate(divide="ignore", invalid="ignore"):
            normalised = np.where(peak > 0, vals / peak, 0.0)
            log_peak = np.log(peak[..., 0])
        return normalised.reshape(4 * self.size, -1), log_peak.reshape(-1)


def _group_by_degree(nodes, offset, eff, table) -> list[_DegreeGroup] | _DegreeGroup | None:
    n = table.shape[0]
    by_degree: dict[int, list[tuple[int, _QubitNode]]] = {}
    for j, node in enumerate(nodes):
        by_degree.setdefault(len(node.generators), []).append((j, node))
    groups = []
    for degree, members in sorted(by_degree.items()):
        assign = ((np.arange(2**degree)[:, None] >> np.arange(degree)[::-1]) & 1).astype(np.uint8)
        fx, fz, vals = [], [], []
        for _, node in members:
            gx = eff[list(node.generators), node.qubit] if degree else np.zeros(0, np.uint8)
            gz = eff[list(node.generators), n + node.qubit] if degree else np.zeros(0, np.uint8)
            fx.append((assign.astype(np.int64) @ gx) % 2 if degree else np.zeros(1, np.int64))
            fz.append((assign.astype(np.int64) @ gz) % 2 if degree else np.zeros(1, np.int64))
            vals.append(_value_table(table[node.qubit], node.mode))
        groups.append(
            _DegreeGroup(
                degree=degree,
                nodes=np.array([offset + j if offset >= 0 else -1 for j, _ in members]),
                qubits=np.array([node.qubit for _, node in members]),
                flip_x=np.array(fx, dtype=np.uint8),
                flip_z=np.array(fz, dtype=np.uint8),
                value=np.array(vals),
            )
        )
    if offset < 0:
        return groups[0] if groups else None
    return groups


def _value_table(row: np.ndarray, mode: str) -> np.ndarray:
    """V[2 x + z] for one qubit node: full channel, or its X or Z marginal."""
    full = np.array([row[column_of(x, z)] for x in (0, 1) for z in (0, 1)])
    if mode == _FULL:
        return full
    px = full.reshape(2, 2).sum(axis=1)  # marginal of the X bit
    pz = full.reshape(2, 2).sum(axis=0)
    if mode == _XBIT:
        return np.repeat(px, 2)
    return np.tile(pz, 2)


def _factorises(row: np.ndarray) -> bool:
    p_i, p_x, p_y, p_z = row
    return abs(p_i * p_y - p_x * p_z) <= FACTOR_TOLERANCE * max(row.max() ** 2, 1e-300)


def _constraint_rows(table: np.ndarray) -> np.ndarray:
    """Linear functionals on [x | z] that must vanish where a qubit's noise lives in a subgroup."""
    n = table.shape[0]
    rows = []
    allowed = table > 0  # columns I, X, Y, Z
    for q in range(n):
        a_x, a_y, a_z = allowed[q, 1], allowed[q, 2], allowed[q, 3]
        count = int(a_x) + int(a_y) + int(a_z)
        if count >= 2:
            continue
        picks = []
        if count == 0:
            picks = [(1, 0), (0, 1)]
        elif a_x:
            picks = [(0, 1)]  # z bit must be 0
        elif a_z:
            picks = [(1, 0)]  # x bit must be 0
        else:
            picks = [(1, 1)]  # Y only: x + z must be 0
        for cx, cz in picks:
            row = np.zeros(2 * n, dtype=np.uint8)
            row[q], row[n + q] = cx, cz
            rows.append(row)
    return np.array(rows, dtype=np.uint8).reshape(-1, 2 * n)
