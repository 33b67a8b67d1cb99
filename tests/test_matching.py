"""Minimum-weight perfect matching baseline: corrections, minimality, and ML ahead of it."""

import itertools
import math
from pathlib import Path

import networkx as nx
import numpy as np
import pytest
from tnarena.codes.core import STABILIZER, PauliCode
from tnarena.codes.json_format import read_code_json
from tnarena.decode import Decoder
from tnarena.errors import TnarenaError
from tnarena.matching import MatchingDecoder
from tnarena.noise import make_noise, sample_errors
from tnarena.pauli import from_string

DATA = Path(__file__).parent / "data"


@pytest.fixture(scope="module")
def square(catalog):
    """Square-lattice surface codes by distance."""
    return {d: catalog.build_code("surface", "square", d) for d in (3, 5, 7)}


def low_weight_errors(n: int, t: int, pauli: str) -> list[np.ndarray]:
    """Every error of weight 1..t made of one Pauli letter, symplectic shape (2n,)."""
    out = []
    for w in range(1, t + 1):
        for qubits in itertools.combinations(range(n), w):
            e = np.zeros(2 * n, dtype=np.uint8)
            if pauli in "XY":
                e[list(qubits)] = 1
            if pauli in "ZY":
                e[n + np.array(qubits)] = 1
            out.append(e)
    return out


def random_low_weight(n: int, t: int, count: int, rng: np.random.Generator) -> np.ndarray:
    """``count`` errors of weight exactly t with X, Y or Z on each chosen qubit, shape (count, 2n)."""
    out = np.zeros((count, 2 * n), dtype=np.uint8)
    for row in out:
        qubits = rng.choice(n, size=t, replace=False)
        letters = rng.integers(1, 4, size=t)  # 1 X, 2 Y, 3 Z
        row[qubits] = letters <= 2
        row[n + qubits] = letters >= 2
    return out


def brute_force_min_weights(checks: np.ndarray, weights: np.ndarray) -> dict[bytes, float]:
    """Least total weight of a flip pattern per syndrome, over all 2^n patterns (independent check).

    checks : (m, n) 0/1 parity checks; weights : (n,) cost of flipping each qubit.
    """
    n = checks.shape[1]
    patterns = np.array(list(itertools.product((0, 1), repeat=n)), dtype=np.uint8)
    syndromes = (patterns.astype(int) @ checks.T.astype(int)) % 2
    costs = patterns @ weights
    best: dict[bytes, float] = {}
    for s, c in zip(syndromes.astype(np.uint8), costs):
        key = s.tobytes()
        best[key] = min(best.get(key, math.inf), float(c))
    return best


# ---- (a) low-weight errors are corrected ------------------------------------------------


@pytest.mark.parametrize("d", [3, 5])
@pytest.mark.parametrize("pauli", ["X", "Z", "Y"])
def test_every_single_pauli_error_up_to_half_the_distance_is_corrected(square, d, pauli):
    """Minimum-weight decoding of a distance-d code corrects every error of weight <= (d-1)/2
    (common practice): here every such error made of one Pauli letter, enumerated."""
    code = square[d]
    decoder = MatchingDecoder(code, make_noise("depolarizing", code.n, 0.1))
    errors = low_weight_errors(code.n, (d - 1) // 2, pauli)
    failed = [i for i, e in enumerate(errors) if decoder.decode_error(e).failed]
    assert failed == []


@pytest.mark.parametrize("d", [5, 7])
def test_random_mixed_errors_up_to_half_the_distance_are_corrected(square, d):
    """Same property (common practice) for sampled errors mixing X, Y and Z on (d-1)/2 qubits."""
    code = square[d]
    decoder = MatchingDecoder(code, make_noise("depolarizing", code.n, 0.1))
    errors = random_low_weight(code.n, (d - 1) // 2, 400, np.random.default_rng(d))
    assert not any(decoder.decode_error(e).failed for e in errors)


# ---- (b) the correction explains the syndrome -------------------------------------------


@pytest.mark.parametrize("lattice,d", [("square", 5), ("square", 9), ("hexagonal", 5), ("triangular", 5)])
def test_correction_has_the_syndrome_of_the_error(catalog, lattice, d):
    """A correction must reproduce the measured syndrome (definition), on several lattices."""
    code = catalog.build_code("surface", lattice, d)
    table = make_noise("depolarizing", code.n, 0.15)
    decoder = MatchingDecoder(code, table)
    for error in sample_errors(table, np.random.default_rng(7), 150):
        result = decoder.decode_error(error)
        assert np.array_equal(code.syndrome(result.correction), code.syndrome(error))


# ---- (c) minimum weight against brute force ---------------------------------------------


@pytest.mark.parametrize("pauli", ["X", "Z"])
def test_matching_weight_equals_brute_force_minimum_on_d3(square, pauli):
    """Uniform bit (phase) flip on d = 3: the correction has the least number of flips of any
    pattern with the syndrome, found by enumerating all 2^13 patterns (independent brute force).
    Ties between equally light corrections are allowed."""
    code = square[3]
    n = code.n
    model = "bit_flip" if pauli == "X" else "phase_flip"
    decoder = MatchingDecoder(code, make_noise(model, n, 0.1))
    stab = code.stabilizers
    # X flips are seen by the z part of the stabilizers, Z flips by the x part.
    checks = stab[:, n:] if pauli == "X" else stab[:, :n]
    best = brute_force_min_weights(checks, np.ones(n))
    side = slice(0, n) if pauli == "X" else slice(n, 2 * n)
    for key, least in best.items():
        flips = np.frombuffer(key, dtype=np.uint8)
        correction = decoder.decode_syndrome(flips).correction
        assert correction[side].sum() == least
        assert not correction[slice(n, 2 * n) if pauli == "X" else slice(0, n)].any()


def test_matching_weight_equals_brute_force_minimum_with_uneven_rates(square):
    """Per-qubit flip rates: the correction minimises sum of -ln(p/(1-p)) over its flips, checked
    against enumeration of all X patterns on d = 3 (independent brute force)."""
    code = square[3]
    n = code.n
    rates = np.random.default_rng(11).uniform(0.01, 0.3, size=n)
    table = np.stack([1 - rates, rates, np.zeros(n), np.zeros(n)], axis=1)
    decoder = MatchingDecoder(code, table)
    weights = -np.log(rates / (1 - rates))
    best = brute_force_min_weights(code.stabilizers[:, n:], weights)
    for key, least in best.items():
        result = decoder.decode_syndrome(np.frombuffer(key, dtype=np.uint8))
        assert float(result.correction[:n] @ weights) == pytest.approx(least, abs=1e-9)
        assert result.weight == pytest.approx(least, abs=1e-9)


def test_repetition_code_failure_rate_is_the_majority_vote_formula():
    """Repetition code n = 5 under bit flip: minimum weight is majority vote, so the failure
    probability is sum_{k > n/2} C(n,k) p^k (1-p)^(n-k) (REFERENCES 3, textbook; common
    practice). Summed exactly over all 2^5 errors."""
    code = read_code_json(DATA / "repetition5.json")
    n, p = code.n, 0.2
    decoder = MatchingDecoder(code, make_noise("bit_flip", n, p))
    total = 0.0
    for bits in itertools.product((0, 1), repeat=n):
        error = np.concatenate([np.array(bits, dtype=np.uint8), np.zeros(n, dtype=np.uint8)])
        if decoder.decode_error(error).failed:
            total += p ** sum(bits) * (1 - p) ** (n - sum(bits))
    expected = sum(math.comb(n, k) * p**k * (1 - p) ** (n - k) for k in range(n // 2 + 1, n + 1))
    assert total == pytest.approx(expected, rel=1e-12)


def boundary_copy_matching_cost(code: PauliCode, defects: np.ndarray) -> int:
    """Least number of X flips explaining the Z-type defects, by the textbook construction: the
    defects plus one boundary copy each on a complete graph, copies pairing at zero cost, solved
    by networkx min_weight_matching with shortest-path lengths on a graph built here (common
    practice; no simplification). defects: indices into code.stabilizers."""
    n = code.n
    z_rows = code.stabilizers[:, n:]
    graph = nx.Graph()
    for q in range(n):
        ends = [int(r) for r in np.flatnonzero(z_rows[:, q])]
        if ends:
            graph.add_edge(ends[0], ends[1] if len(ends) == 2 else "boundary")
    length = dict(nx.all_pairs_shortest_path_length(graph))
    full = nx.Graph()
    for i, a in enumerate(defects):
        full.add_edge(("d", a), ("b", a), weight=length[a]["boundary"])
        for b in defects[i + 1:]:
            full.add_edge(("d", a), ("d", b), weight=length[a][b])
            full.add_edge(("b", a), ("b", b), weight=0)
    return sum(full[u][v]["weight"] for u, v in nx.min_weight_matching(full))


def test_matching_weight_equals_the_boundary_copy_construction_on_d7(square):
    """Beyond brute force (d = 7, bit flip 0.1): the correction has as few flips as the textbook
    boundary-copy matching, built independently in the test (common practice)."""
    code = square[7]
    table = make_noise("bit_flip", code.n, 0.1)
    decoder = MatchingDecoder(code, table)
    for error in sample_errors(table, np.random.default_rng(5), 60):
        result = decoder.decode_error(error)
        defects = [int(r) for r in np.flatnonzero(result.syndrome)]
        assert result.correction.sum() == boundary_copy_matching_cost(code, defects)


# ---- class convention --------------------------------------------------------------------


@pytest.fixture(scope="module")
def pair_d5(catalog, square):
    """The ML decoder (exact strategy) and matching on the d = 5 square code under bit flip 0.08."""
    code = square[5]
    table = make_noise("bit_flip", code.n, 0.08)
    return Decoder(code, table, catalog.strategy("exact")), MatchingDecoder(code, table)


def test_decision_uses_the_decoder_class_convention(pair_d5):
    """decision == Decoder.true_class(correction, pure) and failed == (decision != class of the
    error), with the ML Decoder's own class function as the reference."""
    ml, matching = pair_d5
    table = make_noise("depolarizing", ml.code.n, 0.12)
    for error in sample_errors(table, np.random.default_rng(3), 100):
        result = matching.decode_error(error)
        pure = ml.pure_error(result.syndrome)
        assert result.decision == ml.true_class(result.correction, pure)
        assert result.failed == (ml.true_class(error, pure) != result.decision)


def test_a_logical_operator_is_a_failure(pair_d5):
    """X-bar has no syndrome, so matching returns the identity and fails (definition)."""
    _, matching = pair_d5
    result = matching.decode_error(matching.code.logicals[0, 0])
    assert not result.correction.any() and result.true_class == (1, 0) and result.failed


# ---- (d) the optimal decoder is ahead of matching ---------------------------------------


def test_ml_fails_no_more_often_than_matching_at_p008_d5(pair_d5):
    """REFERENCES 8 (Wang, Harrington, Preskill 2003; from memory): an optimal decoder must not do
    worse than matching at the same p and d. 6000 seeded bit-flip instances at p = 0.08, d = 5,
    the same ones for both: ML fails no more often, and the paired (McNemar) difference, matching-
    only failures minus ML-only failures, exceeds two standard deviations, so they are separated."""
    ml, matching = pair_d5
    table = make_noise("bit_flip", ml.code.n, 0.08)
    count = 6000
    errors = sample_errors(table, np.random.default_rng(2024), count)
    ml_failed = np.array([ml.decode_error(e).failed for e in errors])
    mw_failed = np.array([matching.decode_error(e).failed for e in errors])
    only_mw, only_ml = int(np.sum(mw_failed & ~ml_failed)), int(np.sum(ml_failed & ~mw_failed))
    print(f"ML {ml_failed.sum()}/{count}, matching {mw_failed.sum()}/{count}, "
          f"matching-only {only_mw}, ML-only {only_ml}")
    assert ml_failed.sum() <= mw_failed.sum()
    assert only_mw - only_ml > 2 * math.sqrt(only_mw + only_ml)


# ---- (e) refusals ------------------------------------------------------------------------


def five_qubit_code() -> PauliCode:
    """The [[5,1,3]] code: cyclic shifts of XZZXI (not CSS; textbook)."""
    rows = [from_string(s) for s in ("XZZXI", "IXZZX", "XIXZZ", "ZXIXZ")]
    return PauliCode(
        name="five-qubit",
        qubit_positions=[(math.cos(a), math.sin(a)) for a in np.linspace(0, 2 * math.pi, 5, endpoint=False)],
        generators=np.array(rows),
        kinds=(STABILIZER,) * 4,
        logicals=np.array([[from_string("XXXXX"), from_string("ZZZZZ")]]),
    )


def test_non_css_code_is_refused():
    code = five_qubit_code()
    with pytest.raises(TnarenaError, match=r"stabilizer 0 of five-qubit mixes X and Z.*tensor-network"):
        MatchingDecoder(code, make_noise("depolarizing", code.n, 0.1))


def test_qubit_in_three_stabilizers_of_one_type_is_refused():
    """Steane code: qubit 6 lies in all three X-type (and Z-type) checks."""
    code = read_code_json(DATA / "steane.json")
    with pytest.raises(TnarenaError, match=r"qubit 6 of steane is in 3 Z-type stabilizers"):
        MatchingDecoder(code, make_noise("depolarizing", code.n, 0.1))


def test_wrong_inputs_are_refused(square):
    code = square[3]
    decoder = MatchingDecoder(code, make_noise("bit_flip", code.n, 0.1))
    with pytest.raises(TnarenaError, match="the syndrome has 3 bits"):
        decoder.decode_syndrome(np.zeros(3, dtype=np.uint8))
    with pytest.raises(TnarenaError, match="the error has 4 symplectic entries"):
        decoder.decode_error(np.zeros(4, dtype=np.uint8))
    with pytest.raises(TnarenaError, match="noise table has 2 rows"):
        MatchingDecoder(code, make_noise("bit_flip", 2, 0.1))


def test_flip_probability_above_one_half_is_refused(square):
    code = square[3]
    with pytest.raises(TnarenaError, match=r"qubit 0 of .* X-flip probability 0.6 > 1/2"):
        MatchingDecoder(code, make_noise("bit_flip", code.n, 0.6))
