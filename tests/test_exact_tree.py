"""The exact strategy plugin: brute force, Nishimori-line equivalence, repetition code, budgets."""

import math
from itertools import product
from pathlib import Path

import numpy as np
import pytest
from scipy.special import comb

from reference import group_sum
from tnarena.codes.json_format import read_code_json
from tnarena.decode import Decoder
from tnarena.errors import TnarenaError
from tnarena.network import NetworkBuilder
from tnarena.noise import make_noise, sample_errors

DATA = Path(__file__).parent / "data"


@pytest.mark.parametrize("lattice", ["square", "hexagonal", "triangular", "kagome"])
@pytest.mark.parametrize("noise_name", ["bit_flip", "depolarizing", "biased", "independent_xz"])
def test_exact_equals_brute_force(catalog, lattice, noise_name):
    """ln P from the exact strategy == ln of the group sum by enumeration (definition), 1e-10 relative."""
    code = catalog.build_code("surface", lattice, 3)
    table = make_noise(noise_name, code.n, 0.15)
    decoder = Decoder(code, table, catalog.strategy("exact"), {"search_time": 0.2})
    rng = np.random.default_rng(3)
    for _ in range(3):
        error = sample_errors(table, rng)
        pure = decoder.pure_error(code.syndrome(error))
        for c in decoder.class_log_probs(pure):
            expected = group_sum(code.generators, table, pure ^ code.logical_operator(c.cls))
            if expected == 0.0:
                assert c.log_prob == -math.inf
            else:
                assert c.log_prob == pytest.approx(math.log(expected), rel=1e-10)


def test_plan_is_reused_for_every_syndrome(catalog):
    code = catalog.build_code("surface", "square", 4)
    table = make_noise("depolarizing", code.n, 0.1)
    strategy = catalog.strategy("exact")
    decoder = Decoder(code, table, strategy, {"search_time": 0.2})
    plan = decoder.plan
    for seed in range(3):
        decoder.decode_error(sample_errors(table, np.random.default_rng(seed)))
    assert decoder.plan is plan
    stats = decoder.decode_error(sample_errors(table, np.random.default_rng(9))).classes[0].stats
    assert stats["flops"] > 0 and stats["largest_intermediate"] >= 2 and stats["width"] >= 1


def _nishimori_reference(code, error, p):
    """ln Z of the random-bond Ising model on the Nishimori line, built with quimb's
    TN2D_classical_ising_partition_function (general-purpose reference library).

    Dennis, Kitaev, Landahl, Preskill, J. Math. Phys. 43, 4452 (2002) and Nishimori,
    Prog. Theor. Phys. 66, 1169 (1981): P(E G) = (p(1-p))^(n/2) Z(beta, J_e) with
    J_e = (-1)^(E_e), exp(-2 beta) = p / (1-p). Spins sit on the vertices of the
    (d+1) x d grid between the two rough columns; an edge to a rough column is a field.
    The geometry is read from the qubit coordinates (edge midpoints), not from the code.
    """
    import quimb.tensor as qtn

    beta = 0.5 * math.log((1 - p) / p)
    pos = code.qubit_positions
    flips = error[: code.n]
    d = int(round(pos[:, 0].max() + 0.5))  # horizontal midpoints reach x = d - 1/2
    lx, ly = d - 1, d  # interior columns 1..d-1, rows 0..d-1
    couplings, fields = {}, {}
    for (x, y), flip in zip(pos, flips):
        sign = -1.0 if flip else 1.0
        if abs(x - round(x)) > 0.25:  # horizontal edge between columns floor(x) and ceil(x)
            a, b, row = int(math.floor(x)), int(math.ceil(x)), int(round(y))
            ends = [(c - 1, row) for c in (a, b) if 1 <= c <= d - 1]
        else:  # vertical edge in column x between rows floor(y), ceil(y)
            col = int(round(x))
            ends = [(col - 1, int(math.floor(y))), (col - 1, int(math.ceil(y)))]
        if len(ends) == 2:
            couplings[frozenset(ends)] = sign
        else:
            fields[ends[0]] = fields.get(ends[0], 0.0) + sign
    tn = qtn.TN2D_classical_ising_partition_function(
        lx, ly, beta, j=lambda a, b: couplings[frozenset((tuple(a), tuple(b)))], outputs=tuple(fields)
    )
    for (i, j), h in fields.items():
        # exp(beta h sigma), in quimb's own spin convention (classical_ising_H_matrix: [e^-bh, e^bh])
        tn &= qtn.Tensor(np.array([math.exp(-beta * h), math.exp(beta * h)]), inds=[f"s{i},{j}"])
    log_z = math.log(float(tn.contract(all, output_inds=())))
    return log_z + 0.5 * code.n * math.log(p * (1 - p))


@pytest.mark.parametrize("d", [3, 5, 7])
def test_bit_flip_class_probability_is_nishimori_rbim(catalog, d):
    """REFERENCES 2: the bit-flip class probability equals an RBIM partition function on the Nishimori line."""
    p = 0.11
    code = catalog.build_code("surface", "square", d)
    table = make_noise("bit_flip", code.n, p)
    builder = NetworkBuilder(code, table)
    strategy = catalog.strategy("exact")
    plan = strategy.plan(builder.structure, strategy.resolve({"search_time": 0.2}))
    rng = np.random.default_rng(d)
    for _ in range(3):
        error = sample_errors(table, rng)
        network = builder.network(error)
        ours = strategy.contract(plan, network).log_value + network.log_scale
        assert ours == pytest.approx(_nishimori_reference(code, error, p), rel=1e-10)


@pytest.mark.parametrize("name, n", [("repetition3.json", 3), ("repetition5.json", 5)])
def test_repetition_code_failure_rate_is_majority_vote(catalog, name, n):
    """REFERENCES 3 (textbook; common practice): exact ML failure rate of the length-n repetition code
    under bit flip, summed over all 2^n errors, equals sum_{k > n/2} C(n,k) p^k (1-p)^(n-k)."""
    code = read_code_json(DATA / name)
    assert code.n == n
    p = 0.17
    table = make_noise("bit_flip", n, p)
    decoder = Decoder(code, table, catalog.strategy("exact"), {})
    failure = 0.0
    for flips in product((0, 1), repeat=n):
        error = np.array(list(flips) + [0] * n, dtype=np.uint8)
        weight = sum(flips)
        if decoder.decode_error(error).failed:
            failure += p**weight * (1 - p) ** (n - weight)
    expected = sum(comb(n, k) * p**k * (1 - p) ** (n - k) for k in range(n // 2 + 1, n + 1))
    assert failure == pytest.approx(expected, rel=1e-12)


def test_memory_budget_refuses_before_contracting(catalog):
    code = catalog.build_code("surface", "square", 6)
    table = make_noise("depolarizing", code.n, 0.1)
    with pytest.raises(TnarenaError, match="over the budget max_intermediate = 64; raise the budget"):
        Decoder(code, table, catalog.strategy("exact"), {"max_intermediate": 64, "search_time": 0.1})


def test_greedy_method_gives_the_same_values(catalog):
    code = catalog.build_code("surface", "hexagonal", 3)
    table = make_noise("depolarizing", code.n, 0.1)
    error = sample_errors(table, np.random.default_rng(1))
    a = Decoder(code, table, catalog.strategy("exact"), {"method": "greedy"}).decode_error(error)
    b = Decoder(code, table, catalog.strategy("exact"), {"method": "kahypar", "search_time": 0.2}).decode_error(error)
    for ca, cb in zip(a.classes, b.classes):
        assert ca.log_prob == pytest.approx(cb.log_prob, rel=1e-12) or ca.log_prob == cb.log_prob == -math.inf


@pytest.mark.parametrize("params, message", [
    ({"search_time": -1}, "outside its range"),
    ({"method": "magic"}, "must be one of auto, kahypar, greedy"),
    ({"chi": 4}, "has no parameter 'chi'; its parameters are: method"),
])
def test_bad_parameters_are_refused(catalog, params, message):
    with pytest.raises(TnarenaError, match=message):
        catalog.strategy("exact").resolve(params)


def test_same_seed_gives_the_same_tree_in_one_process(catalog):
    """Reproducibility (common practice, shared/REFERENCES.md): a seeded search is repeatable.

    The search is bounded by max_repeats (not by time), so the same seed must
    give the same contraction path however many searches ran before it.
    """
    code = catalog.build_code("surface", "hexagonal", 5)
    structure = NetworkBuilder(code, make_noise("bit_flip", code.n, 0.1)).structure
    strategy = catalog.strategy("exact")
    params = strategy.resolve({"search_time": 1e6, "max_repeats": 16, "seed": 4})
    paths = [strategy.plan(structure, params).tree.get_ssa_path() for _ in range(3)]
    assert paths[0] == paths[1] == paths[2]


@pytest.mark.parametrize("lattice, noise_name", [("square", "bit_flip"), ("hexagonal", "depolarizing"),
                                                 ("kagome", "biased"), ("triangular", "independent_xz")])
def test_batched_decoding_equals_one_at_a_time(catalog, lattice, noise_name):
    """contract_batch (a leading batch axis) gives the one-at-a-time values to 1e-10 (issue 7)."""
    code = catalog.build_code("surface", lattice, 4)
    table = make_noise(noise_name, code.n, 0.1)
    decoder = Decoder(code, table, catalog.strategy("exact"), {"search_time": 0, "max_repeats": 8})
    assert decoder.strategy.batched
    errors = sample_errors(table, np.random.default_rng(5), shots=12)
    batched = decoder.decode_errors(errors)
    for error, got in zip(errors, batched):
        one = decoder.decode_error(error)
        assert got.decision == one.decision and got.true_class == one.true_class
        for a, b in zip(got.classes, one.classes):
            assert a.log_prob == b.log_prob == -math.inf or a.log_prob == pytest.approx(b.log_prob, rel=1e-10)


def test_a_batched_value_does_not_depend_on_its_batch_mates(catalog):
    """Bit for bit: the arena groups instances into chunks of any size, results must not change."""
    code = catalog.build_code("surface", "hexagonal", 4)
    table = make_noise("depolarizing", code.n, 0.1)
    decoder = Decoder(code, table, catalog.strategy("exact"), {"search_time": 0, "max_repeats": 8})
    errors = sample_errors(table, np.random.default_rng(9), shots=7)
    alone = decoder.decode_errors(errors[:1])[0]
    together = decoder.decode_errors(errors)[0]
    assert [c.log_prob for c in alone.classes] == [c.log_prob for c in together.classes]
