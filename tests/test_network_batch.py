"""NetworkBatch and NetworkBuilder.network_batch: element i is network(errors[i]), checked against
brute-force enumeration of the generator group (the defining sum of shared/DESIGN.md)."""

import math

import numpy as np
import pytest

from reference import group_sum
from test_network_builder import network_value
from tnarena.codes.core import PauliCode
from tnarena.decode import Decoder, logical_classes
from tnarena.errors import TnarenaError
from tnarena.network import NetworkBatch, NetworkBuilder
from tnarena.noise import make_noise, sample_errors
from tnarena.pauli import from_string

NOISE = [
    ("bit_flip", {}),
    ("depolarizing", {}),
    ("biased", {"eta": 5.0}),
    ("independent_xz", {"z_rate": 0.07}),
]


def code_422() -> PauliCode:
    """The [[4, 2, 2]] code (textbook): stabilizers XXXX, ZZZZ; X1 = XXII, Z1 = ZIZI, X2 = XIXI, Z2 = ZZII."""
    logicals = [[from_string("XXII"), from_string("ZIZI")], [from_string("XIXI"), from_string("ZZII")]]
    return PauliCode(
        name="422", qubit_positions=[[0, 0], [1, 0], [0, 1], [1, 1]],
        generators=[from_string("XXXX"), from_string("ZZZZ")], kinds=("stabilizer",) * 2, logicals=logicals,
    )


def code_with_a_free_qubit() -> PauliCode:
    """Z0 Z1 on qubits 0, 1 and a bare qubit 2 that no generator touches (k = 2)."""
    logicals = [[from_string("XXI"), from_string("ZII")], [from_string("IIX"), from_string("IIZ")]]
    return PauliCode(
        name="free", qubit_positions=[[0, 0], [1, 0], [2, 0]], generators=[from_string("ZZI")],
        kinds=("stabilizer",), logicals=logicals,
    )


CODES = [
    ("surface", "square", 3), ("surface", "hexagonal", 3), ("color_666", None, 3),
    ("subsystem_surface", None, 2), ("422", None, 0),
]


def _code(catalog, family, lattice, size) -> PauliCode:
    return code_422() if family == "422" else catalog.build_code(family, lattice, size)


def _errors(table, rng, count=6) -> np.ndarray:
    """Sampled errors and uniformly random ones (the latter often impossible under structured noise)."""
    sampled = sample_errors(table, rng, shots=count)
    return np.concatenate([sampled, rng.integers(0, 2, size=sampled.shape, dtype=np.uint8)])


def _assert_same_network(got, want) -> None:
    assert got.structure is want.structure
    assert got.log_scale == pytest.approx(want.log_scale, rel=1e-15, abs=0.0)
    for a, b in zip(got.arrays, want.arrays, strict=True):
        assert a.shape == b.shape and np.array_equal(a, b)


@pytest.mark.parametrize("family, lattice, size", CODES, ids=lambda v: str(v))
@pytest.mark.parametrize("noise_name, options", NOISE, ids=[n for n, _ in NOISE])
def test_each_element_is_the_single_network(catalog, family, lattice, size, noise_name, options):
    """Element j of network_batch is network(errors[i]) for the j-th possible i, arrays bit for bit and
    log_scale to 1e-15, for every class; the impossible ones are those whose group sum is 0 and each
    possible element's value is the group sum (brute-force enumeration, DESIGN.md), 1e-10 relative."""
    code = _code(catalog, family, lattice, size)
    table = make_noise(noise_name, code.n, 0.13, seed=3, **options)
    builder = NetworkBuilder(code, table)
    errors = _errors(table, np.random.default_rng(7))
    seen_impossible = False
    for cls in logical_classes(code.k):
        batch, possible = builder.network_batch(errors, cls)
        assert possible.shape == (len(errors),) and len(batch) == possible.sum()
        for j, i in enumerate(np.flatnonzero(possible)):
            _assert_same_network(batch[j], builder.network(errors[i], cls))
            expected = group_sum(code.generators, table, errors[i] ^ code.logical_operator(cls))
            assert network_value(batch[j]) == pytest.approx(expected, rel=1e-10, abs=1e-300)
        for i in np.flatnonzero(~possible):
            seen_impossible = True
            assert builder.network(errors[i], cls).is_zero
            assert group_sum(code.generators, table, errors[i] ^ code.logical_operator(cls)) == 0.0
    if noise_name == "bit_flip":
        assert seen_impossible  # random errors with Z parts and the Z classes cannot occur under bit flip


def test_a_qubit_whose_pauli_cannot_occur_makes_the_element_impossible():
    """A bare qubit (no generator on it) with P_I = P_Y = 0: errors with I or Y there have probability 0
    (the group sum has that factor in every term), X or Z there are possible."""
    code = code_with_a_free_qubit()
    table = np.array([[0.9, 0.1, 0.0, 0.0], [0.9, 0.1, 0.0, 0.0], [0.0, 0.5, 0.0, 0.5]])
    builder = NetworkBuilder(code, table)
    errors = np.array([from_string(p) for p in ("IIX", "XIZ", "IIY", "XII", "IXX")])
    batch, possible = builder.network_batch(errors, None)
    assert possible.tolist() == [True, True, False, False, True]
    for j, i in enumerate(np.flatnonzero(possible)):
        assert network_value(batch[j]) == pytest.approx(group_sum(code.generators, table, errors[i]), rel=1e-12)


def test_generator_stacks_are_read_only_broadcasts_of_copy_tensors(catalog):
    """COPY stacks cost no memory per element (stride 0) and hold 1 where all indices agree (definition)."""
    code = catalog.build_code("surface", "square", 3)
    table = make_noise("depolarizing", code.n, 0.1)
    builder = NetworkBuilder(code, table)
    batch, _ = builder.network_batch(sample_errors(table, np.random.default_rng(1), shots=5), None)
    s = builder.structure
    for v, kind in enumerate(s.kinds):
        stack = batch.stacks[v]
        assert stack.shape == (len(batch),) + (2,) * s.degree(v)
        if kind == "generator":
            assert stack.strides[0] == 0 and not stack.flags.writeable
            want = np.zeros((2,) * s.degree(v))
            want[(0,) * s.degree(v)] = want[(1,) * s.degree(v)] = 1.0
            assert np.array_equal(stack[3], want)


def test_a_batch_is_a_sequence_of_networks(catalog):
    """len, indexing (negative too), IndexError past the end, iteration, and slices that are batches."""
    code = catalog.build_code("surface", "square", 3)
    table = make_noise("depolarizing", code.n, 0.1)
    builder = NetworkBuilder(code, table)
    errors = sample_errors(table, np.random.default_rng(2), shots=6)
    batch, possible = builder.network_batch(errors, None)
    assert possible.all() and len(batch) == 6
    singles = [builder.network(e) for e in errors]
    for got, want in zip(batch, singles, strict=True):
        _assert_same_network(got, want)
    _assert_same_network(batch[-1], singles[5])
    assert all(np.shares_memory(a, s) for a, s in zip(batch[2].arrays, batch.stacks))
    with pytest.raises(IndexError):
        batch[6]
    part = batch[1:5:2]
    assert isinstance(part, NetworkBatch) and len(part) == 2
    _assert_same_network(part[1], singles[3])


def test_concatenate_and_from_networks_keep_elements_and_order(catalog):
    code = catalog.build_code("surface", "hexagonal", 3)
    table = make_noise("bit_flip", code.n, 0.1)
    builder = NetworkBuilder(code, table)
    errors = sample_errors(table, np.random.default_rng(3), shots=4)
    parts = [builder.network_batch(errors, cls)[0] for cls in logical_classes(1)]
    joined = NetworkBatch.concatenate(parts)
    want = [net for part in parts for net in part]
    assert len(joined) == len(want) == 8  # I and X possible, Y and Z not under bit flip
    for got, w in zip(joined, want, strict=True):
        _assert_same_network(got, w)
    assert all(joined.stacks[v].strides[0] == 0 for v, k in enumerate(builder.structure.kinds) if k == "generator")
    stacked = NetworkBatch.from_networks([builder.network(e, (1, 0)) for e in errors])
    for got, w in zip(stacked, parts[1], strict=True):
        _assert_same_network(got, w)


def test_batches_of_another_structure_are_refused(catalog):
    a = catalog.build_code("surface", "square", 3)
    b = catalog.build_code("surface", "square", 4)
    ba = NetworkBuilder(a, make_noise("bit_flip", a.n, 0.1)).network_batch(np.zeros((1, 2 * a.n), np.uint8))[0]
    bb = NetworkBuilder(b, make_noise("bit_flip", b.n, 0.1)).network_batch(np.zeros((1, 2 * b.n), np.uint8))[0]
    with pytest.raises(TnarenaError, match="different structures"):
        NetworkBatch.concatenate([ba, bb])
    with pytest.raises(TnarenaError, match="at least one"):
        NetworkBatch.concatenate([])


@pytest.mark.parametrize("shape", [(26,), (3, 25), (2, 3, 26)])
def test_wrong_error_shape_is_refused(catalog, shape):
    code = catalog.build_code("surface", "square", 3)
    builder = NetworkBuilder(code, make_noise("bit_flip", code.n, 0.1))
    with pytest.raises(TnarenaError, match=r"the code needs \(B, 2n\) = \(B, 26\)"):
        builder.network_batch(np.zeros(shape, dtype=np.uint8))


def test_decode_errors_with_a_looping_strategy_equals_one_at_a_time(catalog):
    """A strategy whose contract_batch is the default loop ('columns') gets a NetworkBatch and works
    unchanged (k = 2 code, depolarizing noise): the class log-probabilities equal decode_error's, 1e-12
    relative, and the brute-force group sums (DESIGN.md), 1e-10 relative."""
    strategy = catalog.strategy("columns")
    assert not strategy.batched
    code = code_422()
    table = make_noise("depolarizing", code.n, 0.1)
    decoder = Decoder(code, table, strategy)
    errors = sample_errors(table, np.random.default_rng(4), shots=8)
    for error, got in zip(errors, decoder.decode_errors(errors), strict=True):
        want = decoder.decode_error(error)
        assert got.decision == want.decision and got.true_class == want.true_class
        assert np.array_equal(got.syndrome, want.syndrome)
        for g, w in zip(got.classes, want.classes, strict=True):
            assert g.cls == w.cls and g.label == w.label
            assert g.log_prob == w.log_prob == -math.inf or g.log_prob == pytest.approx(w.log_prob, rel=1e-12)
            pure = decoder.pure_error(got.syndrome)
            brute = group_sum(code.generators, table, pure ^ code.logical_operator(g.cls))
            assert math.exp(g.log_prob) == pytest.approx(brute, rel=1e-10)


def test_batched_syndromes_pure_errors_and_classes(catalog):
    """Row i of the batched syndromes is <g, E_i> (symplectic products, definition of a syndrome); each
    batched pure error has its row's syndrome; and E_i = pure_i L S with L the batched class and S in
    the stabilizer group: E_i pure_i L has no syndrome and commutes with every logical."""
    from tnarena.decode import relative_classes
    from tnarena.pauli import symplectic_products

    code = catalog.build_code("color_666", None, 3)
    table = make_noise("depolarizing", code.n, 0.2)
    errors = sample_errors(table, np.random.default_rng(5), shots=20)
    syndromes = code.syndromes(errors)
    assert np.array_equal(syndromes, symplectic_products(errors, code.stabilizers))
    decoder = Decoder(code, table, catalog.strategy("exact"), {"search_time": 0})
    pures = decoder.syndromes.pure_errors(syndromes)
    assert np.array_equal(symplectic_products(pures, code.stabilizers), syndromes)
    classes = relative_classes(code, errors, pures)
    assert classes.shape == (len(errors), 2 * code.k)
    rest = errors ^ pures ^ np.array([code.logical_operator(tuple(row)) for row in classes])
    assert not symplectic_products(rest, code.stabilizers).any()
    assert not symplectic_products(rest, code.logicals.reshape(-1, 2 * code.n)).any()
    assert classes.any()  # not every sampled error is in the trivial class at this rate


def test_a_strategy_returning_too_few_estimates_is_named(catalog):
    """The hook contract: contract_batch returns one Estimate per network; a broken one is reported by name."""
    from tnarena.errors import PluginError

    strategy = catalog.strategy("columns")

    class Short(type(strategy)):
        name = "short"

        def contract_batch(self, plan, networks):
            return super().contract_batch(plan, networks)[:-1]

    code = catalog.build_code("surface", "square", 3)
    table = make_noise("bit_flip", code.n, 0.1)
    decoder = Decoder(code, table, Short())
    with pytest.raises(PluginError, match="strategy 'short' returned 3 estimates from contract_batch.. for 4 networks"):
        decoder.decode_errors(sample_errors(table, np.random.default_rng(0), shots=2))


@pytest.mark.parametrize("name, params", [("sweep", {"chi": 64}), ("exact", {"search_time": 0, "max_repeats": 8})])
def test_batching_strategies_read_the_stacks(catalog, name, params):
    """contract_batch on a NetworkBatch equals contract_batch on the list of its networks (bit for bit:
    the same stacks, gathered or not) and the brute-force group sums (DESIGN.md; chi 64 does not
    truncate here), 1e-10 relative."""
    code = catalog.build_code("surface", "hexagonal", 3)
    table = make_noise("depolarizing", code.n, 0.1)
    builder = NetworkBuilder(code, table)
    strategy = catalog.strategy(name)
    plan = strategy.plan(builder.structure, strategy.resolve(params))
    errors = sample_errors(table, np.random.default_rng(6), shots=5)
    batch = NetworkBatch.concatenate([builder.network_batch(errors, cls)[0] for cls in logical_classes(1)])
    together = strategy.contract_batch(plan, batch)
    listed = strategy.contract_batch(plan, [builder.network(e, cls) for cls in logical_classes(1) for e in errors])
    assert [e.log_value for e in together] == [e.log_value for e in listed]
    bases = [e ^ code.logical_operator(cls) for cls in logical_classes(1) for e in errors]
    for est, net, base in zip(together, batch, bases, strict=True):
        assert math.exp(est.log_value + net.log_scale) == pytest.approx(group_sum(code.generators, table, base), rel=1e-10)
