"""The planar surface code on every lattice family, checked against outside sources.

Sources (shared/REFERENCES.md):

* item 10 -- square-lattice planar surface code of distance d, qubits on edges:
  n = d^2 + (d-1)^2, k = 1, both distances d (structural fact, common practice);
* item 11 -- k = n - rank_GF(2)(generators); generators commute iff every pairwise
  symplectic product is 0; a logical of a planar surface code is a shortest path and
  networkx shortest paths give its distance independently (common practice).

GF(2) ranks, symplectic products and distances are computed here, by elimination
written in this file and by networkx on a graph built in this file; nothing comes
from ``tnarena.gf2``, ``tnarena.pauli`` or the shortest paths inside the module
under test.
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest

from tnarena.codes.surface import planar_surface_code
from reference import gf2_rank as _rank_gf2  # independent bitmask elimination (test side)
from tnarena.lattices import (
    LATTICE_FAMILIES,
    build_lattice,
    read_lattice_file,
    write_lattice_file,
)

RANDOM_FAMILIES = ("delaunay", "voronoi")


def _sizes(lattice: str) -> tuple[int, int]:
    # the 3.12.12 patch jumps from distance 2 to 4 and cannot be cut to exactly 3
    return (2, 5) if lattice == "truncated_hexagonal" else (3, 5)


CASES = [(lattice, size) for lattice in LATTICE_FAMILIES for size in _sizes(lattice)]
CASE_IDS = [f"{lattice}-{size}" for lattice, size in CASES]

_CODES: dict[tuple[str, int, int], object] = {}


def _code(catalog, lattice: str, size: int, seed: int = 0):
    """The catalog's surface code, built once per (lattice, size, seed) in this module."""
    key = (lattice, size, seed)
    if key not in _CODES:
        _CODES[key] = catalog.build_code("surface", lattice, size, seed=seed)
    return _CODES[key]


# ---- independent GF(2) and symplectic algebra --------------------------------------


def _symplectic(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """(x_a . z_b + z_a . x_b) mod 2 for every pair of rows of a and b."""
    a = np.asarray(a, dtype=np.int64)
    b = np.asarray(b, dtype=np.int64)
    n = a.shape[1] // 2
    return (a[:, :n] @ b[:, n:].T + a[:, n:] @ b[:, :n].T) % 2


def _x_type(code) -> np.ndarray:
    """X parts of the purely X-type generators, shape (s_x, n)."""
    n = code.n
    g = code.stabilizers
    return g[g[:, :n].any(axis=1) & ~g[:, n:].any(axis=1), :n]


def _z_type(code) -> np.ndarray:
    """Z parts of the purely Z-type generators, shape (s_z, n)."""
    n = code.n
    g = code.stabilizers
    return g[g[:, n:].any(axis=1) & ~g[:, :n].any(axis=1), n:]


def _doubled_graph_distance(checks: np.ndarray, flips: np.ndarray) -> int:
    """Least weight of an edge set with even degree at every check and odd overlap with flips.

    checks : shape (s, n), each qubit in at most two rows; flips : shape (n,).
    Nodes are (check, parity) and ("boundary", parity); qubit q joins the (at most
    two) checks that hold it -- "boundary" standing in for a missing end -- and
    flips the parity iff flips[q] = 1. The answer is the least networkx shortest
    path length from (v, 0) to (v, 1) over all nodes v.
    """
    graph = nx.Graph()
    for q in range(checks.shape[1]):
        ends = [int(s) for s in np.flatnonzero(checks[:, q])]
        assert len(ends) <= 2, f"qubit {q} is in {len(ends)} checks; the graph needs <= 2"
        ends += ["boundary"] * (2 - len(ends))
        a, b = ends
        f = int(flips[q])
        for parity in (0, 1):
            graph.add_edge((a, parity), (b, parity ^ f))
    best = None
    for v in {node for node, _ in graph.nodes}:
        if (v, 0) in graph and (v, 1) in graph and nx.has_path(graph, (v, 0), (v, 1)):
            length = nx.shortest_path_length(graph, (v, 0), (v, 1))
            best = length if best is None else min(best, length)
    assert best is not None, "no odd-parity cycle: the logical is not a logical"
    return best


def _d_z(code) -> int:
    """Z distance from the X-type stabilizers and X-bar (doubled graph, networkx)."""
    return _doubled_graph_distance(_x_type(code), code.logicals[0, 0, : code.n])


def _d_x(code) -> int:
    """X distance from the Z-type stabilizers and Z-bar (doubled graph, networkx)."""
    return _doubled_graph_distance(_z_type(code), code.logicals[0, 1, code.n :])


# ---- the square lattice: closed forms -----------------------------------------------


@pytest.mark.parametrize("d", range(2, 8))
def test_square_qubit_count_is_d2_plus_dm1_2(catalog, d):
    """n = d^2 + (d-1)^2 (REFERENCES 10, structural fact, common practice)."""
    assert _code(catalog, "square", d).n == d * d + (d - 1) ** 2


@pytest.mark.parametrize("d", range(2, 8))
def test_square_has_one_logical_qubit(catalog, d):
    """k = 1 (REFERENCES 10, structural fact, common practice)."""
    assert _code(catalog, "square", d).k == 1


@pytest.mark.parametrize("d", range(2, 8))
def test_square_distances_are_d(catalog, d):
    """Both distances equal d (REFERENCES 10, structural fact, common practice)."""
    assert _code(catalog, "square", d).distances == {"x": d, "z": d}


# ---- every lattice family: stabilizer-code structure ----------------------------------


@pytest.mark.parametrize(("lattice", "size"), CASES, ids=CASE_IDS)
def test_k_from_gf2_rank_is_one(catalog, lattice, size):
    """k = n - rank_GF(2)(stabilizers) = 1, rank by elimination in this test
    (REFERENCES 11, common practice)."""
    code = _code(catalog, lattice, size)
    assert code.n - _rank_gf2(code.stabilizers) == 1


@pytest.mark.parametrize(("lattice", "size"), CASES, ids=CASE_IDS)
def test_all_generators_commute(catalog, lattice, size):
    """Every pairwise symplectic product of the generators is 0
    (REFERENCES 11, common practice)."""
    code = _code(catalog, lattice, size)
    assert not _symplectic(code.generators, code.generators).any()


@pytest.mark.parametrize(("lattice", "size"), CASES, ids=CASE_IDS)
def test_every_generator_is_pure_x_or_pure_z(catalog, lattice, size):
    """Vertex stabilizers are X-type and face stabilizers Z-type, never mixed
    (CSS surface code, REFERENCES 11, common practice)."""
    code = _code(catalog, lattice, size)
    n = code.n
    has_x = code.generators[:, :n].any(axis=1)
    has_z = code.generators[:, n:].any(axis=1)
    assert np.array_equal(has_x, ~has_z)


@pytest.mark.parametrize(("lattice", "size"), CASES, ids=CASE_IDS)
def test_each_qubit_in_at_most_two_checks_of_each_type(catalog, lattice, size):
    """An edge has two end vertices and borders two faces, so a qubit lies in at most
    two X-type and two Z-type stabilizers (planar graph, REFERENCES 11, common practice)."""
    code = _code(catalog, lattice, size)
    assert _x_type(code).sum(axis=0).max() <= 2
    assert _z_type(code).sum(axis=0).max() <= 2


# ---- every lattice family: distances by independent shortest paths ---------------------
#
# A Z-type operator with trivial X-syndrome is an edge set of the doubled graph's base
# with even degree at every X-stabilizer node; it anticommutes with X-bar iff its
# overlap with X-bar is odd. Such a set splits into cycles, one of which has odd
# overlap, so a lightest one is a single cycle with odd parity: a shortest path from
# (v, 0) to (v, 1). With k = 1 every Z-type logical outside the stabilizer group
# anticommutes with X-bar, so this is d_Z (REFERENCES 11, common practice). Likewise
# d_X from the Z-type stabilizers and Z-bar.


@pytest.mark.parametrize(("lattice", "size"), CASES, ids=CASE_IDS)
def test_z_distance_equals_networkx_shortest_path(catalog, lattice, size):
    """distances['z'] equals the doubled-graph networkx shortest path over the X-type
    stabilizers (REFERENCES 11, common practice)."""
    code = _code(catalog, lattice, size)
    assert code.distances["z"] == _d_z(code)


@pytest.mark.parametrize(("lattice", "size"), CASES, ids=CASE_IDS)
def test_x_distance_equals_networkx_shortest_path(catalog, lattice, size):
    """distances['x'] equals the doubled-graph networkx shortest path over the Z-type
    stabilizers (REFERENCES 11, common practice)."""
    code = _code(catalog, lattice, size)
    assert code.distances["x"] == _d_x(code)


@pytest.mark.parametrize(("lattice", "size"), CASES, ids=CASE_IDS)
def test_both_distances_reach_the_requested_size(catalog, lattice, size):
    """The family promises both distances >= size; the distances here are the independent
    networkx ones (REFERENCES 11, common practice)."""
    code = _code(catalog, lattice, size)
    assert min(_d_x(code), _d_z(code)) >= size


@pytest.mark.parametrize(("lattice", "size"), CASES, ids=CASE_IDS)
def test_returned_logicals_are_shortest_representatives(catalog, lattice, size):
    """X-bar is pure X of weight d_X and Z-bar pure Z of weight d_Z, with d_X, d_Z the
    independent networkx distances (REFERENCES 11, common practice)."""
    code = _code(catalog, lattice, size)
    n = code.n
    x_bar, z_bar = code.logicals[0]
    assert not x_bar[n:].any() and not z_bar[:n].any()
    assert (int(x_bar[:n].sum()), int(z_bar[n:].sum())) == (_d_x(code), _d_z(code))


@pytest.mark.parametrize("d", [3, 5, 7, 9])
def test_square_logicals_run_through_the_middle(catalog, d):
    """On the square lattice (odd d) the straight column of horizontal edges and the straight row
    through the centre of the qubits' bounding box are minimum-weight X-bar and Z-bar (REFERENCES
    10, common practice); the module picks the shortest logicals nearest the middle, so it must
    return exactly these."""
    code = catalog.build_code("surface", "square", d)
    n, pos = code.n, code.qubit_positions
    x_bar, z_bar = code.logicals[0]
    mid = (pos.min(axis=0) + pos.max(axis=0)) / 2
    x_support, z_support = pos[np.flatnonzero(x_bar[:n])], pos[np.flatnonzero(z_bar[n:])]
    assert len(x_support) == len(z_support) == d
    assert np.allclose(x_support[:, 0], mid[0]) and np.allclose(z_support[:, 1], mid[1])


# ---- random lattices: the seed decides the code ----------------------------------------


@pytest.mark.parametrize("lattice", RANDOM_FAMILIES)
def test_random_lattice_same_seed_same_code(catalog, lattice):
    """Two builds with the same seed give identical generators and qubit positions
    (reproducibility from numpy.random.default_rng(seed), common practice)."""
    a = catalog.build_code("surface", lattice, 3, seed=0)
    b = catalog.build_code("surface", lattice, 3, seed=0)
    assert np.array_equal(a.generators, b.generators)
    assert np.array_equal(a.qubit_positions, b.qubit_positions)


@pytest.mark.parametrize("lattice", RANDOM_FAMILIES)
def test_random_lattice_other_seed_other_code(catalog, lattice):
    """Another seed draws other random points, hence other generators (common practice)."""
    a = catalog.build_code("surface", lattice, 3, seed=0)
    b = catalog.build_code("surface", lattice, 3, seed=1)
    assert a.generators.shape != b.generators.shape or not np.array_equal(
        a.generators, b.generators
    )


# ---- a lattice read from a user's file ------------------------------------------------


def test_code_from_lattice_file_is_the_distance_3_square_code(tmp_path):
    """A 3 x 2 square patch written to and read from a lattice file gives n = 13 and
    both distances 3 (REFERENCES 10 with d = 3, common practice)."""
    path = tmp_path / "square.json"
    write_lattice_file(build_lattice("square", 3, 2), path)
    code = planar_surface_code(read_lattice_file(path))
    assert (code.n, code.distances) == (13, {"x": 3, "z": 3})
