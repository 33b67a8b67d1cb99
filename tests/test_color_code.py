"""The triangular 6.6.6 color code family, checked against closed forms and brute force.

GF(2) algebra here is written out in the test (bit masks as Python ints), so
nothing is computed by the module under test or by ``tnarena.gf2``.
"""

from __future__ import annotations

from itertools import combinations

import numpy as np
import pytest

from tnarena.codes.color import color_666
from tnarena.errors import TnarenaError


def _masks(rows: np.ndarray) -> list[int]:
    return [int("".join(map(str, r[::-1])), 2) for r in rows.astype(int)]


def _reduce(masks: list[int]) -> list[int]:
    """Echelon basis of the span of the masks (GF(2) elimination)."""
    basis: list[int] = []
    for v in masks:
        for b in basis:
            v = min(v, v ^ b)
        if v:
            basis.append(v)
            basis.sort(reverse=True)
    return basis


def _in_span(basis: list[int], v: int) -> bool:
    for b in basis:
        v = min(v, v ^ b)
    return v == 0


def _faces(code) -> np.ndarray:
    n = code.n
    return code.generators[:, :n] | code.generators[:, n:]


def _x_part(code) -> np.ndarray:
    x = code.generators[:, : code.n]
    return x[x.any(axis=1)]


def _z_part(code) -> np.ndarray:
    z = code.generators[:, code.n :]
    return z[z.any(axis=1)]


@pytest.mark.parametrize("d", [3, 5, 7])
def test_qubit_count_and_one_logical_qubit(d):
    """n = (3 d^2 + 1) / 4 and k = n - rank = 1 (closed form, common practice)."""
    code = color_666(d)
    assert code.n == (3 * d * d + 1) // 4
    rank = len(_reduce(_masks(code.generators)))
    assert code.n - rank == 1


@pytest.mark.parametrize("d", [3, 5, 7])
def test_faces_have_weight_four_or_six_and_qubits_meet_at_most_three(d):
    """Hexagons inside, 4-qubit faces on the boundary; honeycomb degree 3 (common practice)."""
    faces = _faces(color_666(d))
    assert set(faces.sum(axis=1).tolist()) <= {4, 6}
    per_face = faces[: len(faces) // 2]
    assert per_face.sum(axis=0).max() <= 3
    assert per_face.sum(axis=0).min() >= 1


@pytest.mark.parametrize("d", [3, 5, 7])
def test_css_and_self_dual(d):
    """Each face carries one X-type and one Z-type stabilizer on the same qubits
    (common practice)."""
    code = color_666(d)
    n = code.n
    kinds = [(bool(g[:n].any()), bool(g[n:].any())) for g in code.generators]
    assert all(kx != kz for kx, kz in kinds)
    xs = {tuple(r) for r in _x_part(code)}
    zs = {tuple(r) for r in _z_part(code)}
    assert xs == zs and len(xs) == len(code.generators) // 2


@pytest.mark.parametrize("d", [3, 5, 7])
def test_faces_are_hexagon_pieces_around_their_centres(d):
    """Every qubit of a face is one lattice spacing from the face centre; faces sharing
    two qubits (an edge) have different colours (honeycomb 3-colourability, common practice)."""
    code = color_666(d)
    faces = _faces(code)
    for f, pos in zip(faces, code.generator_positions):
        dist = np.linalg.norm(code.qubit_positions[f.astype(bool)] - pos, axis=1)
        np.testing.assert_allclose(dist, 1.0, atol=1e-9)
    colors = code.metadata["colors"]
    half = len(faces) // 2
    for a, b in combinations(range(half), 2):
        if int(faces[a] @ faces[b]) == 2:
            assert colors[a] != colors[b]


@pytest.mark.parametrize("d", [3, 5])
def test_minimum_logical_weight_is_d_by_enumeration(d):
    """Lightest X-type (and Z-type) logical has weight d: enumerate subsets by increasing
    weight, keep those commuting with all opposite-type stabilizers and outside the
    same-type stabilizer span (brute force in the test; definition of distance)."""
    code = color_666(d)
    n = code.n
    for checks, same in ((_z_part(code), _x_part(code)), (_x_part(code), _z_part(code))):
        check_masks, span = _masks(checks), _reduce(_masks(same))
        lightest = None
        for w in range(1, d + 1):
            for subset in combinations(range(n), w):
                v = sum(1 << q for q in subset)
                if any(bin(v & c).count("1") % 2 for c in check_masks):
                    continue
                if not _in_span(span, v):
                    lightest = w
                    break
            if lightest is not None:
                break
        assert lightest == d
    assert code.distances == {"x": d, "z": d}


@pytest.mark.parametrize("d", [3, 5, 7])
def test_logicals_lie_on_one_boundary_with_weight_d(d):
    """X-bar and Z-bar are boundary strings of weight d, collinear qubits (common practice)."""
    code = color_666(d)
    n = code.n
    xbar, zbar = code.logicals[0]
    assert xbar[:n].sum() == d and not xbar[n:].any()
    assert zbar[n:].sum() == d and not zbar[:n].any()
    ys = code.qubit_positions[xbar[:n].astype(bool), 1]
    np.testing.assert_allclose(ys, ys[0])


def test_distance_three_is_the_steane_code():
    """The X-part rows span a 3-dimensional space whose 7 nonzero words all have weight 4:
    the [7,3,4] simplex code, dual of the [7,4] Hamming code (common practice)."""
    code = color_666(3)
    basis = _reduce(_masks(_x_part(code)))
    assert len(basis) == 3
    words = {a ^ b ^ c for a in (0, basis[0]) for b in (0, basis[1]) for c in (0, basis[2])}
    words.discard(0)
    assert len(words) == 7
    assert {bin(w).count("1") for w in words} == {4}


@pytest.mark.parametrize("bad", [4, 1, 2, -3, 0])
def test_bad_distance_value_is_refused(bad):
    """Even or < 3 distances raise with the value and the fix (project error rule)."""
    with pytest.raises(TnarenaError, match=rf"distance {bad} is not allowed; give an odd integer"):
        color_666(bad)


@pytest.mark.parametrize("bad", [3.0, "3", True, None])
def test_non_integer_distance_is_refused(bad):
    """A distance that is not an int raises naming the value (project error rule)."""
    with pytest.raises(TnarenaError, match="is not an integer; give an odd integer >= 3"):
        color_666(bad)
