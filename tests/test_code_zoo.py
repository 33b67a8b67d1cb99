"""The rotated, XZZX and subsystem surface codes, and surface codes on random lattices.

Sources: stabilizer / subsystem formalism (common practice; shared/REFERENCES.md item 11):
stabilizers commute with every generator, k = n - rank(gauge group) + (number of gauge
qubits); distance = lightest (dressed) logical, found here by enumerating low-weight
Paulis. n = d^2 for the rotated layout (REFERENCES 10). Class probabilities against the
defining group sum (shared/DESIGN.md; tests/reference.py enumerates the group). All GF(2)
algebra is done in this file or in tests/reference.py, not by ``tnarena.gf2``.
"""

from __future__ import annotations

import math
from itertools import combinations, product

import networkx as nx
import numpy as np
import pytest

from reference import css_group_sum, gf2_rank, group_sum
from tnarena.decode import Decoder
from tnarena.errors import TnarenaError
from tnarena.noise import make_noise, sample_errors

NEW_FAMILIES = ("rotated_surface", "xzzx", "subsystem_surface")


def _symplectic(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Symplectic products of the rows of a with the rows of b, mod 2."""
    n = a.shape[1] // 2
    return (a[:, :n].astype(int) @ b[:, n:].T + a[:, n:].astype(int) @ b[:, :n].T) % 2


def _lightest_logical(checks: np.ndarray, group: np.ndarray, n: int, paulis: str, wmax: int) -> int | None:
    """Least weight of a Pauli built from the letters in ``paulis`` that commutes with every row
    of ``checks`` and is not in the span of ``group`` (brute force by increasing weight)."""
    bits = {"X": (1, 0), "Y": (1, 1), "Z": (0, 1)}
    base = gf2_rank(group)
    for w in range(1, wmax + 1):
        for support in combinations(range(n), w):
            for letters in product(paulis, repeat=w):
                row = np.zeros(2 * n, dtype=np.uint8)
                for q, p in zip(support, letters):
                    row[q], row[n + q] = bits[p]
                if not _symplectic(checks, row[None, :]).any() and gf2_rank(np.vstack([group, row])) > base:
                    return w
    return None


def _stabilizers(code) -> np.ndarray:
    return code.generators[[k == "stabilizer" for k in code.kinds]]


# ---- structure -------------------------------------------------------------------------


@pytest.mark.parametrize("family", NEW_FAMILIES)
@pytest.mark.parametrize("d", [2, 3, 4, 5])
def test_stabilizers_commute_with_every_generator_and_logical(catalog, family, d):
    """Every stabilizer commutes with every generator and both logicals; X-bar and Z-bar
    anticommute (stabilizer formalism, REFERENCES 11)."""
    code = catalog.build_code(family, None, d)
    stab = _stabilizers(code)
    assert not _symplectic(stab, code.generators).any()
    assert not _symplectic(code.logicals[0], code.generators).any()
    assert _symplectic(code.logicals[0][:1], code.logicals[0][1:]).item() == 1


@pytest.mark.parametrize("family", ["rotated_surface", "xzzx"])
@pytest.mark.parametrize("d", [2, 3, 5, 7])
def test_rotated_layouts_have_d_squared_qubits_and_one_logical(catalog, family, d):
    """n = d^2 (REFERENCES 10, rotated layout) and k = n - rank = 1 (REFERENCES 11)."""
    code = catalog.build_code(family, None, d)
    assert code.n == d * d
    assert code.n - gf2_rank(code.generators) == 1


@pytest.mark.parametrize("d", [2, 3, 4])
def test_xzzx_faces_read_x_z_z_x(catalog, d):
    """Every weight-4 face is X on its lower-left and upper-right qubits and Z on the other
    two (the XZZX check, common practice)."""
    code = catalog.build_code("xzzx", None, d)
    n, pos = code.n, code.qubit_positions
    faces = [g for g in code.generators if (g[:n] | g[n:]).sum() == 4]
    assert len(faces) == (d - 1) ** 2
    for g in faces:
        qs = np.flatnonzero(g[:n] | g[n:])
        low_left = pos[qs].sum(axis=1).argmin()
        up_right = pos[qs].sum(axis=1).argmax()
        for i, q in enumerate(qs):
            want_x = i in (low_left, up_right)
            assert (g[q], g[n + q]) == ((1, 0) if want_x else (0, 1))


@pytest.mark.parametrize("d", [2, 3, 4])
def test_subsystem_code_has_weight_three_gauge_and_weight_six_stabilizers(catalog, d):
    """Gauge generators are weight-3 triangles that need not commute; bulk stabilizers have
    weight 6 (Bravyi, Duclos-Cianci, Poulin, Suchara 2013, construction)."""
    code = catalog.build_code("subsystem_surface", None, d)
    n = code.n
    gauge = code.generators[[k == "gauge" for k in code.kinds]]
    stab = _stabilizers(code)
    assert set((gauge[:, :n] | gauge[:, n:]).sum(axis=1).tolist()) == {3}
    assert _symplectic(gauge, gauge).any()
    weights = (stab[:, :n] | stab[:, n:]).sum(axis=1)
    assert (weights == 6).sum() == 2 * (d - 1) ** 2 and set(weights.tolist()) <= {2, 6}


@pytest.mark.parametrize("d", [2, 3, 4, 5])
def test_subsystem_code_counts(catalog, d):
    """n = 3 d^2 - 2 d (the layout documented in codes/subsystem.py: vertices and edges of a
    (d-1) x (d-1) block); k = n - rank(G) + g = 1 with g = (d-1)^2 gauge qubits, g = rank of
    the commutation matrix of the X-type and Z-type gauge parts (subsystem formalism, common
    practice)."""
    code = catalog.build_code("subsystem_surface", None, d)
    n, gens = code.n, code.generators
    assert n == 3 * d * d - 2 * d
    xs, zs = gens[gens[:, :n].any(axis=1), :n], gens[gens[:, n:].any(axis=1), n:]
    g = gf2_rank((xs.astype(int) @ zs.T.astype(int)) % 2)
    assert g == (d - 1) ** 2
    assert n - gf2_rank(gens) + g == 1


# ---- distances by enumeration ----------------------------------------------------------


@pytest.mark.parametrize("d", [2, 3])
def test_rotated_surface_distance_by_enumeration(catalog, d):
    """Lightest X-type and Z-type logicals have weight d (brute force; definition)."""
    code = catalog.build_code("rotated_surface", None, d)
    stab = code.generators
    assert _lightest_logical(stab, stab, code.n, "X", d) == d
    assert _lightest_logical(stab, stab, code.n, "Z", d) == d
    assert code.distances == {"x": d, "z": d}


@pytest.mark.parametrize("d", [2, 3, 4])
def test_xzzx_distance_by_enumeration(catalog, d):
    """Lightest logical of any Pauli type has weight d (brute force over X, Y, Z; definition)."""
    code = catalog.build_code("xzzx", None, d)
    stab = code.generators
    assert _lightest_logical(stab, stab, code.n, "XYZ", d) == d
    assert code.distances == {"min": d}


@pytest.mark.parametrize("d", [2, 3])
def test_subsystem_dressed_distance_by_enumeration(catalog, d):
    """Lightest dressed logical (commutes with the stabilizers, outside the gauge group) has
    weight d, for X-type and Z-type (the code is CSS: this is the distance; definition)."""
    code = catalog.build_code("subsystem_surface", None, d)
    stab, gens = _stabilizers(code), code.generators
    assert _lightest_logical(stab, gens, code.n, "X", d) == d
    assert _lightest_logical(stab, gens, code.n, "Z", d) == d
    assert code.distances == {"x": d, "z": d}


def _graph_distance(code, logical_type: str) -> int:
    """Lightest X-type (or Z-type) logical of a CSS code whose qubits each lie in at most two
    opposite-type stabilizers: shortest closed walk through a boundary node that crosses the
    opposite logical an odd number of times (networkx shortest path on a parity-doubled graph;
    REFERENCES 11)."""
    n = code.n
    part = slice(n, 2 * n) if logical_type == "x" else slice(0, n)
    checks = code.generators[:, part][code.generators[:, part].any(axis=1)]
    other = code.logicals[0, 1 if logical_type == "x" else 0, part]
    graph = nx.Graph()
    for q in range(n):
        ends = [int(c) for c in np.flatnonzero(checks[:, q])] + ["boundary"]
        a, b = ends[0], ends[1]
        assert len(ends) <= 3
        for s in (0, 1):
            graph.add_edge((a, s), (b, s ^ int(other[q])))
    return nx.shortest_path_length(graph, ("boundary", 0), ("boundary", 1))


@pytest.mark.parametrize("seed", range(4))
def test_random_delaunay_surface_codes_record_their_distances(catalog, seed, record_property):
    """Surface code on the seeded Delaunay family at size 7: both distances >= 7 and equal to
    shortest paths recomputed here from the generators (REFERENCES 11). The distances of each
    sample are printed and recorded as test properties."""
    code = catalog.build_code("surface", "delaunay", 7, seed=seed)
    want = {"x": _graph_distance(code, "x"), "z": _graph_distance(code, "z")}
    print(f"delaunay seed {seed}: n = {code.n}, distances {want}, recorded {code.distances}")
    record_property("distances", want)
    assert code.distances == want
    assert min(want.values()) >= 7
    assert code.metadata["seed"] == seed


# ---- class probabilities against the group sum ----------------------------------------


def _check_classes(catalog, code, noise_name, errors, brute):
    table = make_noise(noise_name, code.n, 0.12)
    decoder = Decoder(code, table, catalog.strategy("exact"), {"search_time": 0.2})
    rng = np.random.default_rng(7)
    for _ in range(errors):
        error = sample_errors(table, rng)
        pure = decoder.pure_error(code.syndrome(error))
        for c in decoder.class_log_probs(pure):
            expected = brute(code.generators, table, pure ^ code.logical_operator(c.cls))
            assert c.log_prob == pytest.approx(math.log(expected), rel=1e-10)


@pytest.mark.parametrize("family", ["rotated_surface", "xzzx"])
@pytest.mark.parametrize("noise_name", ["depolarizing", "biased"])
def test_exact_class_probabilities_match_group_sum(catalog, family, noise_name):
    """ln P(E L S) from the exact strategy equals ln of the enumerated group sum, 1e-10
    relative, at d = 3 (definition, shared/DESIGN.md)."""
    _check_classes(catalog, catalog.build_code(family, None, 3), noise_name, 3, group_sum)


@pytest.mark.parametrize("noise_name", ["depolarizing", "biased"])
def test_subsystem_class_probabilities_sum_over_the_gauge_group(catalog, noise_name):
    """Subsystem code, d = 2 and d = 3: ln P(E L G) from the exact strategy equals ln of the
    sum over the whole gauge group (d = 2: every product of the generators; d = 3: the X-type
    span times the Z-type span, 2^24 elements), 1e-10 relative (definition, shared/DESIGN.md)."""
    _check_classes(catalog, catalog.build_code("subsystem_surface", None, 2), noise_name, 3, group_sum)
    _check_classes(catalog, catalog.build_code("subsystem_surface", None, 3), noise_name, 1, css_group_sum)


# ---- refusals --------------------------------------------------------------------------


@pytest.mark.parametrize("family", NEW_FAMILIES)
def test_a_lattice_is_refused(catalog, family):
    """These families have their own geometry; naming a lattice is a user error (project rule)."""
    with pytest.raises(TnarenaError, match="has its own geometry; do not name a lattice"):
        catalog.build_code(family, "square", 3)


@pytest.mark.parametrize("family", NEW_FAMILIES)
@pytest.mark.parametrize("bad", [1, 0, -2, 2.5])
def test_impossible_sizes_are_refused(catalog, family, bad):
    """Sizes below 2 or not whole numbers raise naming the value (project error rule)."""
    with pytest.raises(TnarenaError, match=rf"size {bad!r} must be a whole number >= 2"):
        catalog.build_code(family, None, bad)
