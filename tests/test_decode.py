"""Decoding: pure errors from syndromes, classes, decisions, and clear refusals."""

import numpy as np
import pytest

from tnarena.decode import Decoder
from tnarena.errors import TnarenaError
from tnarena.noise import make_noise, sample_errors
from tnarena.pauli import symplectic_products


@pytest.fixture(scope="module")
def decoder(catalog):
    code = catalog.build_code("surface", "hexagonal", 3)
    table = make_noise("depolarizing", code.n, 0.1)
    return Decoder(code, table, catalog.strategy("exact"), {"search_time": 0.2})


def test_pure_error_has_the_requested_syndrome(decoder):
    """The pure error E_s satisfies <g_i, E_s> = s_i for every stabilizer (definition of a syndrome)."""
    rng = np.random.default_rng(0)
    code = decoder.code
    for _ in range(10):
        s = rng.integers(0, 2, size=code.stabilizers.shape[0])
        pure = decoder.pure_error(s)
        assert np.array_equal(symplectic_products(code.stabilizers, pure)[:, 0], s)


def test_trivial_error_decodes_to_identity(decoder):
    result = decoder.decode_error(np.zeros(2 * decoder.code.n, dtype=np.uint8))
    assert result.decision == (0, 0) and result.failed is False


def test_decision_is_the_largest_class(decoder):
    table = make_noise("depolarizing", decoder.code.n, 0.1)
    result = decoder.decode_error(sample_errors(table, np.random.default_rng(4)))
    best = max(result.classes, key=lambda c: c.log_prob)
    assert result.decision == best.cls
    assert sum(result.posterior().values()) == pytest.approx(1.0)


def test_a_logical_error_is_detected_as_failure(decoder):
    """Applying X-bar (weight d, no syndrome) is decoded as identity: the decoder fails (definition)."""
    x_bar = decoder.code.logicals[0, 0]
    result = decoder.decode_error(x_bar)
    assert result.true_class == (1, 0) and result.decision == (0, 0) and result.failed


def test_wrong_syndrome_length_is_refused(decoder):
    with pytest.raises(TnarenaError, match="the syndrome has 3 bits but the code has"):
        decoder.decode_syndrome(np.zeros(3, dtype=np.uint8))


def test_non_binary_syndrome_is_refused(decoder):
    s = np.zeros(decoder.code.stabilizers.shape[0], dtype=int)
    s[0] = 2
    with pytest.raises(TnarenaError, match="only 0 and 1"):
        decoder.decode_syndrome(s)


def test_decode_errors_refuses_rows_of_the_wrong_length(decoder):
    with pytest.raises(TnarenaError, match=r"the code needs \(B, 2n\) = \(B, 30\)"):
        decoder.decode_errors(np.zeros((4, 28), dtype=np.uint8))


def test_batched_pure_errors_name_a_syndrome_no_error_has(catalog):
    """With a redundant stabilizer g0 g1 its bit must equal s0 + s1 (mod 2); row 1 breaks that."""
    from tnarena.codes.core import PauliCode
    from tnarena.decode import SyndromeSolver

    code = catalog.build_code("surface", "square", 3)
    redundant = PauliCode(
        name="redundant", qubit_positions=code.qubit_positions,
        generators=np.vstack([code.generators, code.generators[0] ^ code.generators[1]]),
        kinds=code.kinds + ("stabilizer",), logicals=code.logicals,
    )
    good = redundant.syndromes(np.eye(2 * code.n, dtype=np.uint8)[:2])
    bad = good[1].copy()
    bad[-1] ^= 1
    solver = SyndromeSolver(redundant)
    assert np.array_equal(symplectic_products(solver.pure_errors(good), redundant.stabilizers), good)
    with pytest.raises(TnarenaError, match="no Pauli error has this syndrome.*in row 1"):
        solver.pure_errors(np.stack([good[0], bad]))


def test_an_empty_batch_of_errors_gives_no_results(decoder):
    assert decoder.decode_errors(np.zeros((0, 2 * decoder.code.n), dtype=np.uint8)) == []
