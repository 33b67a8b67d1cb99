"""Test-side references, written independently of the code under test.

``group_sum`` evaluates the defining sum of shared/DESIGN.md by enumerating
the whole group the generators span (textbook definition of the error-class
probability; common practice):

    P(E L G) = 2^-(m - rank) * sum_{s in {0,1}^m} prod_q P_q((E L g^s)_q)
"""

from __future__ import annotations

import math

import numpy as np
from scipy import integrate

from tnarena.network import copy_tensor
from tnarena.network.structure import GENERATOR, QUBIT, DecodingNetwork, NetworkStructure

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


def ising_grid(sites, coupling) -> DecodingNetwork:
    """Ising model on integer grid points in the framework's own network type: spins are COPY nodes
    at the points, each nearest-neighbour bond a degree-2 node at its midpoint holding
    exp(J sigma sigma') with J = coupling() drawn per bond in a fixed order (general positioned network)."""
    spin = {site: n for n, site in enumerate(sites)}
    kinds = [GENERATOR] * len(spin)
    positions = [tuple(map(float, site)) for site in spin]
    bonds, node_bonds, arrays_bond = [], [[] for _ in spin], []
    for (i, j), a in spin.items():
        for di, dj in ((1, 0), (0, 1)):
            if (i + di, j + dj) not in spin:
                continue
            node = len(kinds)
            kinds.append(QUBIT)
            positions.append((i + di / 2, j + dj / 2))
            mine = []
            for s_ in (a, spin[(i + di, j + dj)]):
                bonds.append((s_, node))
                node_bonds[s_].append(len(bonds) - 1)
                mine.append(len(bonds) - 1)
            node_bonds.append(mine)
            arrays_bond.append(np.exp(coupling() * np.array([[1.0, -1.0], [-1.0, 1.0]])))
    structure = NetworkStructure(
        kinds=tuple(kinds), labels=tuple(range(len(kinds))), positions=np.array(positions, dtype=float),
        bonds=np.array(bonds), node_bonds=tuple(tuple(b) for b in node_bonds),
    )
    arrays = [copy_tensor(len(node_bonds[v])) for v in range(len(spin))] + arrays_bond
    return DecodingNetwork(structure, tuple(arrays), 0.0)


def ising_network(length: int, beta: float) -> DecodingNetwork:
    """Open L x L ferromagnetic Ising model at inverse temperature beta (J = 1)."""
    return ising_grid([(i, j) for i in range(length) for j in range(length)], lambda: beta)


def onsager_free_energy(beta: float) -> float:
    """REFERENCES 1 (Onsager 1944): -beta f = ln 2 + 1/(8 pi^2) int int ln[cosh^2 2b - sinh 2b (cos t1 + cos t2)]."""
    c, s = math.cosh(2 * beta) ** 2, math.sinh(2 * beta)
    value, _ = integrate.dblquad(lambda t1, t2: math.log(c - s * (math.cos(t1) + math.cos(t2))),
                                 0, 2 * math.pi, 0, 2 * math.pi, epsabs=1e-12, epsrel=1e-12)
    return math.log(2) + value / (8 * math.pi**2)


def chi_errors(catalog, strategy: str, lattice: str, instances: int, chis=(2, 4, 8, 16)) -> list[float]:
    """Mean |error in ln P| of ``strategy`` against exact, per chi, over seeded instances of the size-5
    surface code on ``lattice`` under depolarizing noise 0.12 (one plan per chi for every instance)."""
    from tnarena.network import NetworkBuilder
    from tnarena.noise import make_noise, sample_errors

    code = catalog.build_code("surface", lattice, 5, seed=1)
    table = make_noise("depolarizing", code.n, 0.12)
    builder = NetworkBuilder(code, table)
    ex, approx = catalog.strategy("exact"), catalog.strategy(strategy)
    pe = ex.plan(builder.structure, ex.resolve({"search_time": 0.2}))
    plans = {chi: approx.plan(builder.structure, approx.resolve({"chi": chi})) for chi in chis}
    errors = {chi: [] for chi in chis}
    for seed in range(instances):
        network = builder.network(sample_errors(table, np.random.default_rng(seed)))
        want = ex.contract(pe, network).log_value
        for chi, plan in plans.items():
            errors[chi].append(abs(approx.contract(plan, network).log_value - want))
    return [float(np.mean(errors[chi])) for chi in chis]


def span_elements(rows: np.ndarray) -> np.ndarray:
    """Every element of the GF(2) row span, once each, shape (2^rank, width) (test-side elimination)."""
    rows = np.asarray(rows, dtype=np.uint8)
    basis: list[np.ndarray] = []
    for row in rows:
        if gf2_rank(np.array(basis + [row])) > len(basis):
            basis.append(row)
    elements = np.zeros((1, rows.shape[1]), dtype=np.uint8)
    for b in basis:
        elements = np.concatenate([elements, elements ^ b[None, :]], axis=0)
    return elements


def css_group_sum(generators: np.ndarray, table: np.ndarray, base: np.ndarray) -> float:
    """The group sum of ``group_sum`` for CSS generators (each row purely X-type or purely Z-type),
    with the group enumerated as (X-type span) x (Z-type span): every element once, no 2^-(m - rank).
    Handles ranks up to about 2 x 12 (two spans of 4096 elements, an Ax x Az float matrix per qubit)."""
    gens = np.asarray(generators, dtype=np.uint8)
    n = gens.shape[1] // 2
    if (gens[:, :n].any(axis=1) & gens[:, n:].any(axis=1)).any():
        raise ValueError("css_group_sum needs generators that are purely X-type or purely Z-type")
    xs = span_elements(gens[:, :n][gens[:, :n].any(axis=1)]) ^ np.asarray(base[:n], dtype=np.uint8)
    zs = span_elements(gens[:, n:][gens[:, n:].any(axis=1)]) ^ np.asarray(base[n:], dtype=np.uint8)
    total = np.ones((xs.shape[0], zs.shape[0]))
    for q in range(n):
        no_x = table[q][_COLUMN[0, zs[:, q]]]  # P_q(I or Z) per Z-type element
        with_x = table[q][_COLUMN[1, zs[:, q]]]  # P_q(X or Y)
        total *= np.where(xs[:, q, None] == 1, with_x[None, :], no_x[None, :])
    return float(total.sum())
