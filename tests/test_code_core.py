"""PauliCode refuses inconsistent codes with a clear message, and accepts subsystem codes.

Sources: the stabilizer / subsystem formalism (common practice; shared/REFERENCES.md
item 11): stabilizers commute with every generator, gauge generators need not commute
with each other, logicals commute with every generator and come in pairs X-bar_i,
Z-bar_i that anticommute with each other and commute with every other logical, and
k = n - (rank(gauge group) + rank(stabilizer group)) / 2. Small codes are written by
hand here; ranks and syndromes are computed in this file, not by ``tnarena.gf2`` or
``tnarena.pauli``.
"""

from __future__ import annotations

import re

import numpy as np
import pytest

from tnarena.codes.core import GAUGE, STABILIZER, PauliCode
from tnarena.errors import TnarenaError
from reference import gf2_rank as _rank_gf2  # independent bitmask elimination (test side)

_BITS = {"I": (0, 0), "X": (1, 0), "Y": (1, 1), "Z": (0, 1)}


def _pauli(text: str) -> list[int]:
    """Symplectic row [x | z] of a dense Pauli string, written out here."""
    return [_BITS[c][0] for c in text] + [_BITS[c][1] for c in text]


def _rows(*texts: str) -> np.ndarray:
    return np.array([_pauli(t) for t in texts], dtype=np.uint8)


def _pairs(*pairs: tuple[str, str]) -> np.ndarray:
    """Logicals array, shape (k, 2, 2n), from one or more (X-bar, Z-bar) strings."""
    return np.array([[_pauli(x), _pauli(z)] for x, z in pairs], dtype=np.uint8)


def _no_pairs(n: int) -> np.ndarray:
    return np.zeros((0, 2, 2 * n), dtype=np.uint8)


def _code(n: int, generators, kinds, logicals, **extra) -> PauliCode:
    return PauliCode(
        name="hand-made",
        qubit_positions=np.zeros((n, 2)),
        generators=generators,
        kinds=tuple(kinds),
        logicals=logicals,
        **extra,
    )


# 2 x 2 Bacon-Shor-like subsystem code, qubits  0 1 / 2 3:
# gauge XX on rows, ZZ on columns; stabilizers XXXX and ZZZZ; X-bar = X on the left
# column, Z-bar = Z on the top row.
BS_GAUGE = ("XXII", "IIXX", "ZIZI", "IZIZ")
BS_STABILIZERS = ("XXXX", "ZZZZ")
BS_LOGICAL = ("XIXI", "ZZII")


def _bacon_shor(logicals: np.ndarray) -> PauliCode:
    return _code(
        4,
        _rows(*BS_GAUGE, *BS_STABILIZERS),
        (GAUGE,) * 4 + (STABILIZER,) * 2,
        logicals,
    )


# ---- commutation of generators ---------------------------------------------------------


def test_noncommuting_stabilizers_are_refused_naming_both():
    """Stabilizers XX and ZI anticommute (one overlap of X with Z); both indices are
    named (stabilizer formalism, common practice)."""
    with pytest.raises(
        TnarenaError, match="stabilizer generator 0 does not commute with stabilizer generator 1"
    ):
        _code(2, _rows("XX", "ZI"), (STABILIZER, STABILIZER), _no_pairs(2))


def test_stabilizer_not_commuting_with_gauge_is_refused():
    """A stabilizer must commute with every gauge generator: stabilizer X0 against gauge
    Z0 is refused, naming the stabilizer first (subsystem formalism, common practice)."""
    with pytest.raises(
        TnarenaError, match="stabilizer generator 1 does not commute with gauge generator 0"
    ):
        _code(1, _rows("Z", "X"), (GAUGE, STABILIZER), _no_pairs(1))


def test_noncommuting_gauge_generators_are_accepted():
    """Gauge XX on rows and ZZ on columns anticommute pairwise, yet the 2 x 2 Bacon-Shor
    code is valid (subsystem formalism, common practice)."""
    code = _bacon_shor(_pairs(BS_LOGICAL))
    assert code.k == 1


def test_subsystem_k_matches_the_textbook_count():
    """k = n - (rank(gauge group) + rank(stabilizer group)) / 2, ranks by elimination in
    this test (= 4 - (4 + 2) / 2 = 1; common practice): the code is accepted with that
    many logical pairs."""
    gauge_group = _rows(*BS_GAUGE, *BS_STABILIZERS)
    stabilizer_group = _rows(*BS_STABILIZERS)
    k = 4 - (_rank_gf2(gauge_group) + _rank_gf2(stabilizer_group)) // 2
    assert _bacon_shor(_pairs(BS_LOGICAL)).k == k


def test_subsystem_code_with_no_logicals_is_told_the_textbook_count():
    """With no logical pair given, the 2 x 2 Bacon-Shor code is refused and told to give
    exactly n - (rank gauge + rank stabilizer) / 2, ranks computed in this test
    (common practice)."""
    k = 4 - (_rank_gf2(_rows(*BS_GAUGE, *BS_STABILIZERS)) + _rank_gf2(_rows(*BS_STABILIZERS))) // 2
    with pytest.raises(TnarenaError, match=f"give exactly {k}\\."):
        _bacon_shor(_no_pairs(4))


def test_gauge_group_of_odd_rank_over_stabilizers_is_refused():
    """A single gauge generator ZZ commutes with everything, so it belongs in the centre:
    rank(gauge) - rank(stabilizer) = 1 is odd and refused (subsystem formalism: the
    quotient is a symplectic space of even rank; common practice)."""
    with pytest.raises(TnarenaError, match="mark as 'stabilizer'"):
        _code(2, _rows("ZZ"), (GAUGE,), _no_pairs(2))


# ---- logicals ----------------------------------------------------------------------


def test_logical_not_commuting_with_a_stabilizer_is_refused():
    """For stabilizer ZZ, X-bar = XI anticommutes with ZZ and is refused
    (logicals lie in the normalizer; common practice)."""
    with pytest.raises(TnarenaError, match="logical X-bar_0 does not commute with generator 0"):
        _code(2, _rows("ZZ"), (STABILIZER,), _pairs(("XI", "ZI")))


def test_commuting_logical_pair_is_refused():
    """For stabilizer ZZ, X-bar = XX and Z-bar = ZZ commute, so they are no logical pair
    (X-bar_i and Z-bar_i must anticommute; common practice)."""
    with pytest.raises(TnarenaError, match="logicals X-bar_0 and Z-bar_0 commute"):
        _code(2, _rows("ZZ"), (STABILIZER,), _pairs(("XX", "ZZ")))


def test_dependent_logical_pairs_are_refused():
    """On two free qubits the pairs (X0, Z0) and (X0, Z0) are not independent:
    X-bar_0 anticommutes with Z-bar_1 (pairs must form a symplectic basis; common practice)."""
    with pytest.raises(TnarenaError, match="logicals X-bar_0 and Z-bar_1 anticommute"):
        _code(2, np.zeros((0, 4), dtype=np.uint8), (), _pairs(("XI", "ZI"), ("XI", "ZI")))


def test_too_few_logical_pairs_are_refused():
    """Stabilizer ZZ on 2 qubits leaves k = n - rank = 1; giving none is refused with
    "give exactly 1" (REFERENCES 11, common practice)."""
    with pytest.raises(TnarenaError, match="give exactly 1\\."):
        _code(2, _rows("ZZ"), (STABILIZER,), _no_pairs(2))


def test_too_many_logical_pairs_are_refused():
    """Stabilizer ZZ on 2 qubits leaves k = 1, so a second pair cannot be a valid
    symplectic partner of the first and is refused: more than n - rank anticommuting
    pairs cannot exist in the normalizer (REFERENCES 11, common practice)."""
    with pytest.raises(TnarenaError, match="logicals X-bar_0 and Z-bar_1 anticommute"):
        _code(2, _rows("ZZ"), (STABILIZER,), _pairs(("XX", "ZI"), ("YY", "IZ")))


def test_free_qubits_need_one_pair_each():
    """No stabilizers on 3 qubits: k = n = 3; two pairs are refused with "give exactly 3"
    (REFERENCES 11 with rank 0, common practice)."""
    with pytest.raises(TnarenaError, match="give exactly 3\\."):
        _code(3, np.zeros((0, 6), dtype=np.uint8), (), _pairs(("XII", "ZII"), ("IXI", "IZI")))


# ---- shapes, entries and kinds --------------------------------------------------------


def test_generators_of_wrong_width_are_refused():
    """Generators must have 2n columns ([x | z])."""
    message = "generators have shape (1, 3); expected (rows, 4) for 2n = 4."
    with pytest.raises(TnarenaError, match=re.escape(message)):
        _code(2, np.array([[1, 0, 1]]), (STABILIZER,), _no_pairs(2))


def test_logicals_of_wrong_shape_are_refused():
    """Logicals must have shape (k, 2, 2n)."""
    with pytest.raises(
        TnarenaError, match=re.escape("logicals have shape (1, 4); expected (k, 2, 4)")
    ):
        _code(2, _rows("ZZ"), (STABILIZER,), np.array([_pauli("XX")]))


def test_non_binary_generators_are_refused():
    """Symplectic entries are bits; a 2 is refused."""
    with pytest.raises(TnarenaError, match="generators must hold only 0 and 1"):
        _code(2, np.array([[0, 0, 2, 1]]), (STABILIZER,), _no_pairs(2))


def test_non_binary_logicals_are_refused():
    """Symplectic entries of logicals are bits; a 2 is refused."""
    logicals = _pairs(("XX", "ZI")).astype(np.int64)
    logicals[0, 0, 0] = 2
    with pytest.raises(TnarenaError, match="logicals must hold only 0 and 1"):
        _code(2, _rows("ZZ"), (STABILIZER,), logicals)


def test_unknown_generator_kind_is_refused():
    """A kind other than 'stabilizer' or 'gauge' is refused, naming it."""
    with pytest.raises(TnarenaError, match="generator kind 'stabiliser' is unknown"):
        _code(2, _rows("ZZ"), ("stabiliser",), _pairs(("XX", "ZI")))


def test_wrong_number_of_kinds_is_refused():
    """One kind per generator: two kinds for one generator are refused."""
    with pytest.raises(
        TnarenaError, match="2 generator kinds given for 1 generators; give one each"
    ):
        _code(2, _rows("ZZ"), (STABILIZER, STABILIZER), _pairs(("XX", "ZI")))


def test_wrong_number_of_generator_positions_is_refused():
    """One position per generator: two positions for one generator are refused."""
    with pytest.raises(TnarenaError, match="2 generator positions for 1 generators"):
        _code(
            2,
            _rows("ZZ"),
            (STABILIZER,),
            _pairs(("XX", "ZI")),
            generator_positions=np.zeros((2, 2)),
        )


# ---- syndrome -------------------------------------------------------------------------


def test_single_x_error_flags_exactly_the_z_checks_on_its_qubit(catalog):
    """X on qubit q anticommutes exactly with the Z-type stabilizers that hold q, read off
    the generator matrix here (symplectic product, common practice), for every qubit of
    the square d = 3 code."""
    code = catalog.build_code("surface", "square", 3)
    n = code.n
    stabilizers = code.stabilizers
    z_type = ~stabilizers[:, :n].any(axis=1)
    for q in range(n):
        error = np.zeros(2 * n, dtype=np.uint8)
        error[q] = 1
        expected = (z_type & (stabilizers[:, n + q] == 1)).astype(np.uint8)
        assert expected.sum() in (1, 2), f"qubit {q} is in {expected.sum()} Z-type checks"
        assert np.array_equal(code.syndrome(error), expected), f"qubit {q}"


def test_central_gauge_generators_are_refused():
    """Bacon-Shor 2x2 given only its gauge generators: its centre (XXXX, ZZZZ) is generated but
    not marked stabilizer (the stabilizer group of a subsystem code is the centre of the gauge
    group; textbook definition, common practice)."""
    with pytest.raises(TnarenaError, match="centre of rank 2 but the generators marked 'stabilizer' span rank 0"):
        _code(4, _rows(*BS_GAUGE), ("gauge",) * 4, _pairs(BS_LOGICAL))
