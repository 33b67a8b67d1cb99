"""The triangular 4.8.8 (square-octagon) color code family, against closed forms and brute force.

Sources: stabilizer formalism (REFERENCES 11: k = n - rank, commutation by symplectic
products); n = (d^2 - 1) / 2 + d and k = 1 for the triangular 4.8.8 patch (common
practice); the d = 3 patch is the Steane code, whose X (and Z) stabilizer group is the
[7,3,4] simplex code with weight enumerator 1 + 7 z^4 (common practice); distance by
enumeration (definition); class probabilities by the defining group sum (shared/DESIGN.md,
tests/reference.py). All GF(2) algebra is done here or in tests/reference.py.
"""

from __future__ import annotations

from itertools import combinations

import numpy as np
import pytest

from reference import css_group_sum, gf2_rank, group_sum, span_elements
from test_code_zoo import _check_classes
from tnarena.errors import TnarenaError

FAMILY = "color_488"


def _parts(code) -> tuple[np.ndarray, np.ndarray]:
    """(X-type rows, Z-type rows) of the generators, each shape (F, n)."""
    n, gens = code.n, code.generators
    return gens[gens[:, :n].any(axis=1), :n], gens[gens[:, n:].any(axis=1), n:]


@pytest.mark.parametrize("d", [3, 5, 7, 9])
def test_qubit_count_and_one_logical_qubit(catalog, d):
    """n = (d^2 - 1) / 2 + d (common practice) and k = n - rank_GF(2) = 1 (REFERENCES 11)."""
    code = catalog.build_code(FAMILY, None, d)
    assert code.n == (d * d - 1) // 2 + d
    assert code.n - gf2_rank(code.generators) == 1


@pytest.mark.parametrize("d", [3, 5, 7, 9])
def test_generators_and_logicals_commute(catalog, d):
    """Every pair of generators has symplectic product 0, the logicals commute with all of
    them, and X-bar anticommutes with Z-bar (REFERENCES 11)."""
    code = catalog.build_code(FAMILY, None, d)
    n = code.n
    rows = np.vstack([code.generators, code.logicals[0]]).astype(int)
    products = (rows[:, :n] @ rows[:, n:].T + rows[:, n:] @ rows[:, :n].T) % 2
    expected = np.zeros_like(products)
    expected[-2, -1] = expected[-1, -2] = 1
    assert np.array_equal(products, expected)


@pytest.mark.parametrize("d", [3, 5, 7, 9])
def test_faces_are_squares_and_octagons_carrying_both_types(catalog, d):
    """Each face carries an X and a Z stabilizer on the same qubits; squares (colour 2) have
    weight 4, octagons weight 8 inside or 4 where a side cuts them; faces sharing qubits have
    different colours (4.8.8 color code, common practice)."""
    code = catalog.build_code(FAMILY, None, d)
    xs, zs = _parts(code)
    assert np.array_equal(xs, zs)
    colors = code.metadata["colors"][: len(xs)]
    weights = xs.sum(axis=1)
    for w, c in zip(weights, colors):
        assert w == 4 if c == 2 else w in (4, 8)
    overlaps = xs.astype(int) @ xs.T.astype(int)
    for a, b in combinations(range(len(xs)), 2):
        if overlaps[a, b]:
            assert colors[a] != colors[b]


def test_distance_three_is_the_steane_code(catalog):
    """d = 3: three weight-4 X faces and three Z faces; each stabilizer group has weight
    enumerator 1 + 7 z^4, the [7,3,4] simplex code dual to the [7,4] Hamming code: the
    Steane code up to qubit relabelling (common practice)."""
    code = catalog.build_code(FAMILY, None, 3)
    for part in _parts(code):
        assert part.shape == (3, 7)
        weights = span_elements(part).sum(axis=1)
        assert sorted(weights.tolist()) == [0] + [4] * 7


def _lightest(checks: np.ndarray, same: np.ndarray, wmax: int) -> int | None:
    """Least weight of a binary word that meets every row of ``checks`` evenly and is not in
    the row span of ``same`` (brute force by increasing weight)."""
    n, base = checks.shape[1], gf2_rank(same)
    for w in range(1, wmax + 1):
        for support in combinations(range(n), w):
            v = np.zeros(n, dtype=np.uint8)
            v[list(support)] = 1
            if not (checks.astype(int) @ v % 2).any() and gf2_rank(np.vstack([same, v])) > base:
                return w
    return None


@pytest.mark.parametrize("d", [3, 5])
def test_distance_by_enumeration(catalog, d):
    """The lightest X-type and Z-type logicals have weight d: every word of weight < d that
    commutes with the opposite-type stabilizers is a stabilizer (brute force; definition)."""
    code = catalog.build_code(FAMILY, None, d)
    xs, zs = _parts(code)
    assert _lightest(zs, xs, d) == d
    assert _lightest(xs, zs, d) == d
    assert code.distances == {"x": d, "z": d}


def test_distance_seven_by_the_logical_coset(catalog):
    """d = 7: the lightest word in X-bar + (X stabilizer span), all 2^15 of them enumerated,
    has weight 7; with k = 1 these are all the X-type logicals (definition)."""
    code = catalog.build_code(FAMILY, None, 7)
    xs, _ = _parts(code)
    coset = span_elements(xs) ^ code.logicals[0, 0, : code.n]
    assert coset.sum(axis=1).min() == 7


@pytest.mark.parametrize("d", [3, 5, 7])
def test_logicals_are_one_side_of_weight_d(catalog, d):
    """X-bar and Z-bar are X (Z) on the d qubits of one boundary (common practice)."""
    code = catalog.build_code(FAMILY, None, d)
    n = code.n
    xbar, zbar = code.logicals[0]
    assert xbar[:n].sum() == d and not xbar[n:].any()
    assert np.array_equal(zbar[n:], xbar[:n]) and not zbar[:n].any()


@pytest.mark.parametrize("noise_name", ["depolarizing", "biased"])
def test_exact_class_probabilities_match_group_sum(catalog, noise_name):
    """ln P(E L S) from the exact strategy equals ln of the enumerated group sum, 1e-10
    relative: d = 3 by every product of the 6 generators, d = 5 by the X-type span times the
    Z-type span (2^16 elements) (definition, shared/DESIGN.md)."""
    _check_classes(catalog, catalog.build_code(FAMILY, None, 3), noise_name, 3, group_sum)
    _check_classes(catalog, catalog.build_code(FAMILY, None, 5), noise_name, 2, css_group_sum)


def test_a_lattice_is_refused(catalog):
    """The family has its own geometry; naming a lattice is a user error (project rule)."""
    with pytest.raises(TnarenaError, match="4.8.8 color code has its own geometry; do not name a lattice"):
        catalog.build_code(FAMILY, "square", 3)


@pytest.mark.parametrize("bad", [1, 0, -3, 2.5])
def test_sizes_below_three_or_not_whole_are_refused(catalog, bad):
    """Sizes below 3 or not whole numbers raise naming the value (project error rule)."""
    with pytest.raises(TnarenaError, match=rf"size {bad!r} must be a whole number >= 3"):
        catalog.build_code(FAMILY, None, bad)


@pytest.mark.parametrize("bad", [4, 6])
def test_even_distances_are_refused(catalog, bad):
    """Even distances raise with the value and the fix (project error rule)."""
    with pytest.raises(TnarenaError, match=rf"distance {bad} is not allowed; give an odd integer"):
        catalog.build_code(FAMILY, None, bad)
