"""The quimb baselines (quimb_compressed, quimb_boundary) against the exact strategy, and their refusals.

Outside reference throughout: the ``exact`` strategy (cotengra + kahypar tree, checked against brute
force in test_exact_tree.py).
"""

import math

import numpy as np
import pytest

from reference import ising_grid
from tnarena.errors import TnarenaError
from tnarena.network import DecodingNetwork, NetworkBuilder, NetworkStructure
from tnarena.network.structure import GENERATOR, QUBIT
from tnarena.noise import make_noise, sample_errors

CLASSES = [(0, 0), (1, 0), (0, 1), (1, 1)]


def _compare(catalog, code, noise, strategy, params, *, samples=3, seed=5, rate=0.12):
    """Largest relative error in ln P of ``strategy`` against exact over seeded errors and every class."""
    table = make_noise(noise, code.n, rate, seed=2)
    builder = NetworkBuilder(code, table)
    ex, st = catalog.strategy("exact"), catalog.strategy(strategy)
    pe = ex.plan(builder.structure, ex.resolve({"search_time": 0.1}))
    ps = st.plan(builder.structure, st.resolve(params))  # one plan for every array set below
    rng = np.random.default_rng(seed)
    worst, compared = 0.0, 0
    for _ in range(samples):
        error = sample_errors(table, rng)
        for cls in CLASSES:
            network = builder.network(error, cls)
            if network.is_zero:
                continue
            want = ex.contract(pe, network).log_value + network.log_scale
            got = st.contract(ps, network).log_value + network.log_scale
            worst = max(worst, abs(got - want) / abs(want))
            compared += 1
    assert compared > 0
    return worst


@pytest.mark.parametrize("noise", ["bit_flip", "depolarizing"])
@pytest.mark.parametrize("lattice", ["square", "hexagonal", "delaunay"])
def test_compressed_at_chi_64_equals_exact(catalog, lattice, noise):
    """quimb_compressed at chi 64 equals exact to 1e-8 relative in ln P, distance-3 surface codes."""
    code = catalog.build_code("surface", lattice, 3, seed=4)
    params = {"chi": 64, "search_time": 0, "max_repeats": 8}
    assert _compare(catalog, code, noise, "quimb_compressed", params) < 1e-8


@pytest.mark.parametrize("noise", ["bit_flip", "depolarizing"])
@pytest.mark.parametrize("size", [3, 5])
def test_boundary_at_chi_64_equals_exact(catalog, size, noise):
    """quimb_boundary at chi 64 equals exact to 1e-8 relative in ln P, square-lattice surface codes."""
    code = catalog.build_code("surface", "square", size)
    assert _compare(catalog, code, noise, "quimb_boundary", {"chi": 64}) < 1e-8


@pytest.mark.parametrize("sequence", ["xmin", "ymax,ymin", "xmin,ymin,xmax,ymax"])
def test_boundary_sequences_agree_with_exact(catalog, sequence):
    """Every boundary sequence quimb offers gives the exact value at chi 64 (square, d = 3, depolarizing)."""
    code = catalog.build_code("surface", "square", 3)
    params = {"chi": 64, "sequence": sequence}
    assert _compare(catalog, code, "depolarizing", "quimb_boundary", params, samples=1) < 1e-8


@pytest.mark.parametrize("strategy, params", [
    ("quimb_compressed", {"chi": 64, "search_time": 0, "max_repeats": 8}),
    ("quimb_boundary", {"chi": 64}),
])
def test_two_piece_networks_equal_exact(catalog, strategy, params):
    """Independent X/Z noise splits the network into two pieces on the same cells; the value still equals exact."""
    code = catalog.build_code("surface", "square", 3)
    table = make_noise("independent_xz", code.n, 0.1, z_rate=0.05)
    assert len(NetworkBuilder(code, table).structure.components()) == 2
    assert _compare(catalog, code, "independent_xz", strategy, params, samples=2) < 1e-8


def _scaled(network: DecodingNetwork, factor: float) -> DecodingNetwork:
    """The same network with every qubit array times ``factor`` (its value times factor^qubits)."""
    kinds = network.structure.kinds
    arrays = tuple(a * factor if k == "qubit" else a for a, k in zip(network.arrays, kinds))
    return DecodingNetwork(network.structure, arrays, 0.0)


@pytest.mark.parametrize("strategy, params", [
    ("quimb_compressed", {"chi": 64, "search_time": 0, "max_repeats": 8}),
    ("quimb_boundary", {"chi": 64}),
])
def test_values_below_float64_keep_their_log(catalog, strategy, params):
    """A d = 7 network scaled to a value near 1e-850 (float64 underflows) still gives exact's ln."""
    code = catalog.build_code("surface", "square", 7)
    table = make_noise("bit_flip", code.n, 0.1)
    builder = NetworkBuilder(code, table)
    network = _scaled(builder.network(sample_errors(table, np.random.default_rng(3))), 1e-10)
    ex, st = catalog.strategy("exact"), catalog.strategy(strategy)
    want = ex.contract(ex.plan(builder.structure, ex.resolve({"search_time": 0.1})), network).log_value
    got = st.contract(st.plan(builder.structure, st.resolve(params)), network).log_value
    assert want < -750
    assert got == pytest.approx(want, rel=1e-8)


@pytest.mark.parametrize("strategy, params", [
    ("quimb_compressed", {"chi": 4, "search_time": 0, "max_repeats": 8}),
    ("quimb_boundary", {"chi": 4}),
])
def test_a_zero_network_has_log_minus_infinity(catalog, strategy, params):
    """A network with one all-zero qubit array is worth 0: ln = -inf, as exact says, and no NaN."""
    code = catalog.build_code("surface", "square", 3)
    table = make_noise("depolarizing", code.n, 0.1)
    builder = NetworkBuilder(code, table)
    network = builder.network(sample_errors(table, np.random.default_rng(0)))
    arrays = list(network.arrays)
    qubit = network.structure.kinds.index("qubit")
    arrays[qubit] = np.zeros_like(arrays[qubit])
    zero = DecodingNetwork(network.structure, tuple(arrays), 0.0)
    ex, st = catalog.strategy("exact"), catalog.strategy(strategy)
    assert ex.contract(ex.plan(builder.structure, ex.resolve({"search_time": 0.1})), zero).log_value == -math.inf
    assert st.contract(st.plan(builder.structure, st.resolve(params)), zero).log_value == -math.inf


@pytest.mark.parametrize("lattice", ["hexagonal", "triangular"])
def test_boundary_refuses_other_lattices(catalog, lattice):
    """quimb_boundary's plan refuses a layout that is not the square lattice, saying what it needs."""
    code = catalog.build_code("surface", lattice, 3)
    structure = NetworkBuilder(code, make_noise("bit_flip", code.n, 0.1)).structure
    qb = catalog.strategy("quimb_boundary")
    with pytest.raises(TnarenaError, match="strategy 'quimb_boundary' needs the square lattice"):
        qb.plan(structure, qb.resolve({}))


@pytest.mark.parametrize("strategy, params, message", [
    ("quimb_compressed", {"chi": 0}, "parameter 'chi' = 0 is outside its range"),
    ("quimb_compressed", {"search_time": -1.0}, "parameter 'search_time' = -1.0 is outside its range"),
    ("quimb_compressed", {"max_repeats": 0}, "parameter 'max_repeats' = 0 is outside its range"),
    ("quimb_compressed", {"cutoff": 2.0}, "parameter 'cutoff' = 2.0 is outside its range"),
    ("quimb_compressed", {"depth": 3}, "has no parameter 'depth'; its parameters are: chi, search_time"),
    ("quimb_boundary", {"chi": 0}, "parameter 'chi' = 0 is outside its range"),
    ("quimb_boundary", {"cutoff": -1.0}, "parameter 'cutoff' = -1.0 is outside its range"),
    ("quimb_boundary", {"sequence": "north"}, "parameter 'sequence' takes 'auto' or comma-separated sides"),
    ("quimb_boundary", {"sequence": "xmin,,xmax"}, "not 'xmin,,xmax'"),
])
def test_bad_parameters_are_refused(catalog, strategy, params, message):
    with pytest.raises(TnarenaError, match=message):
        catalog.strategy(strategy).resolve(params)


def holed_ising_network(beta: float, seed: int) -> DecodingNetwork:
    """Ising model with random +-beta couplings on a 3 x 3 grid without its centre spin, in the framework's
    own network type (spins are COPY nodes at integer points, each coupling a degree-2 node at the bond
    midpoint): the centre unit cell is empty and its four neighbours share no bond with it."""
    rng = np.random.default_rng(seed)
    sites = [(i, j) for i in range(3) for j in range(3) if (i, j) != (1, 1)]
    return ising_grid(sites, lambda: beta * rng.choice([-1.0, 1.0]))


@pytest.mark.parametrize("seed", [0, 1])
def test_boundary_fills_an_empty_cell(catalog, seed):
    """A square-grid layout with an empty unit cell (a scalar site, no bonds to it) still equals exact."""
    network = holed_ising_network(0.7, seed)
    ex, qb = catalog.strategy("exact"), catalog.strategy("quimb_boundary")
    plan = qb.plan(network.structure, qb.resolve({"chi": 64}))
    assert plan.layout.empty == ((1, 1),)
    want = ex.contract(ex.plan(network.structure, ex.resolve({"search_time": 0.1})), network).log_value
    assert qb.contract(plan, network).log_value == pytest.approx(want, rel=1e-10)


def test_boundary_refuses_a_cell_with_more_bonds_than_einsum_labels(catalog):
    """One generator with 54 single-bond qubits on the edge midpoints of unit cell (0, 0): fusing
    that cell needs 54 einsum labels, over numpy's 52, so the plan is refused with a message."""
    qubits = 54
    positions = [(0.25, 0.25)] + [(0.5, 0.0) if q % 2 else (0.0, 0.5) for q in range(qubits)]
    structure = NetworkStructure(
        kinds=(GENERATOR,) + (QUBIT,) * qubits, labels=tuple(range(qubits + 1)),
        positions=np.array(positions, dtype=float),
        bonds=np.array([(0, 1 + q) for q in range(qubits)]),
        node_bonds=(tuple(range(qubits)),) + tuple((q,) for q in range(qubits)),
    )
    qb = catalog.strategy("quimb_boundary")
    with pytest.raises(TnarenaError, match="54 bonds in the unit cell"):
        qb.plan(structure, qb.resolve({"chi": 8}))
