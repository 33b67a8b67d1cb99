"""GF(2) linear algebra, property-based (hypothesis) against a plain bitmask elimination."""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from reference import gf2_rank
from tnarena import gf2, pauli

matrices = st.tuples(st.integers(1, 9), st.integers(1, 12)).flatmap(
    lambda shape: arrays(np.uint8, shape, elements=st.integers(0, 1))
)


@settings(max_examples=150, deadline=None)
@given(matrices)
def test_rank_matches_bitmask_elimination(a):
    """Rank over GF(2) equals an independent elimination on Python integers (textbook; common practice)."""
    assert gf2.rank(a) == gf2_rank(a)


@settings(max_examples=150, deadline=None)
@given(matrices, st.data())
def test_solve_finds_a_solution_when_one_exists(a, data):
    x0 = data.draw(arrays(np.uint8, a.shape[1], elements=st.integers(0, 1)))
    b = (a.astype(int) @ x0) % 2
    x = gf2.solve(a, b)
    assert x is not None and np.array_equal((a.astype(int) @ x) % 2, b)


@settings(max_examples=150, deadline=None)
@given(matrices)
def test_nullspace_is_a_basis_of_the_kernel(a):
    """Rank-nullity: dim ker = k - rank, every basis vector is in the kernel, and they are independent."""
    basis = gf2.nullspace(a)
    assert basis.shape == (a.shape[1] - gf2_rank(a), a.shape[1])
    if basis.size:
        assert not ((a.astype(int) @ basis.T.astype(int)) % 2).any()
        assert gf2_rank(basis) == basis.shape[0]


@settings(max_examples=100, deadline=None)
@given(st.text(alphabet="IXYZ", min_size=1, max_size=20))
def test_pauli_strings_round_trip(text):
    vec = pauli.from_string(text)
    assert pauli.to_string(vec) == text
    assert pauli.to_string(pauli.from_sparse(pauli.to_sparse(vec), len(text))) == text
