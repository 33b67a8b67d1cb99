"""The shared network builder against brute-force enumeration of the generator group."""

from pathlib import Path

import numpy as np
import pytest

from reference import group_sum, random_table
from tnarena.codes.core import PauliCode
from tnarena.codes.json_format import read_code_json
from tnarena.network import NetworkBuilder
from tnarena.network.quimb_adapter import position_from_tags, to_quimb
from tnarena.noise import make_noise, sample_errors

DATA = Path(__file__).parent / "data"
CLASSES = [(0, 0), (1, 0), (0, 1), (1, 1)]
NOISE = [
    ("bit_flip", {}),
    ("phase_flip", {}),
    ("depolarizing", {}),
    ("biased", {"eta": 5.0}),
    ("independent_xz", {"z_rate": 0.07}),
    ("inhomogeneous", {"spread": 0.8}),
    ("table", None),
]
SMALL_CODES = [
    ("surface", "square", 2), ("surface", "square", 3),
    ("surface", "hexagonal", 2), ("surface", "hexagonal", 3),
    ("surface", "triangular", 2), ("surface", "triangular", 3),
    ("surface", "kagome", 2), ("surface", "kagome", 3),
    ("color_666", None, 3),
    ("file", "steane.json", 0), ("file", "repetition5.json", 0),
]


def _code(catalog, family, lattice, size) -> PauliCode:
    if family == "file":
        return read_code_json(DATA / lattice)
    return catalog.build_code(family, lattice, size)


def _table(name, options, n, rng):
    if options is None:
        return random_table(n, rng)
    return make_noise(name, n, 0.13, seed=11, **options)


def network_value(network) -> float:
    """Contract with quimb (general-purpose reference library) and restore the scale."""
    if network.is_zero:
        return 0.0
    tn = to_quimb(network)
    value = tn.contract(all, output_inds=()) if tn.num_tensors else 1.0  # an empty network is 1
    return float(value) * float(np.exp(network.log_scale))


@pytest.mark.parametrize("family, lattice, size", SMALL_CODES, ids=lambda v: str(v))
@pytest.mark.parametrize("noise_name, options", NOISE, ids=[n for n, _ in NOISE])
def test_class_probabilities_equal_brute_force(catalog, family, lattice, size, noise_name, options):
    """Network value == sum over the generator group by enumeration (definition, DESIGN.md), 1e-10 rel."""
    code = _code(catalog, family, lattice, size)
    rng = np.random.default_rng(17)
    table = _table(noise_name, options, code.n, rng)
    builder = NetworkBuilder(code, table)
    for _ in range(3):
        error = sample_errors(table, rng)
        for cls in CLASSES:
            expected = group_sum(code.generators, table, error ^ code.logical_operator(cls))
            got = network_value(builder.network(error, cls))
            assert got == pytest.approx(expected, rel=1e-10, abs=1e-300), (cls, got, expected)


def test_pure_x_noise_drops_z_generators(catalog):
    """Under bit flip a CSS code needs only its X-type generators (issue 2; stat-mech mapping)."""
    code = catalog.build_code("surface", "square", 4)
    builder = NetworkBuilder(code, make_noise("bit_flip", code.n, 0.1))
    s = builder.structure
    gen_labels = [lab for kind, lab in zip(s.kinds, s.labels) if kind == "generator"]
    n = code.n
    x_type = {i for i, g in enumerate(code.generators) if g[:n].any()}
    assert set(gen_labels) == x_type


def test_independent_xz_noise_splits_into_two_pieces(catalog):
    """Independent X and Z flips on a CSS code factorise into two independent networks."""
    code = catalog.build_code("surface", "square", 3)
    builder = NetworkBuilder(code, make_noise("independent_xz", code.n, 0.1, z_rate=0.2))
    assert len(builder.structure.components()) == 2


def test_dependent_generators_are_normalised(catalog):
    """Adding a redundant generator (a product of two others) leaves every class probability unchanged
    (the group is the same set: P(E L G) is defined on the group, DESIGN.md)."""
    code = catalog.build_code("surface", "square", 3)
    extra = code.generators[0] ^ code.generators[1]
    redundant = PauliCode(
        name="redundant",
        qubit_positions=code.qubit_positions,
        generators=np.vstack([code.generators, extra, code.generators[2]]),
        kinds=code.kinds + ("stabilizer", "stabilizer"),
        logicals=code.logicals,
    )
    rng = np.random.default_rng(2)
    table = make_noise("depolarizing", code.n, 0.2)
    plain, doubled = NetworkBuilder(code, table), NetworkBuilder(redundant, table)
    error = sample_errors(table, rng)
    for cls in CLASSES:
        assert network_value(doubled.network(error, cls)) == pytest.approx(
            network_value(plain.network(error, cls)), rel=1e-12
        )


def test_structure_is_shared_by_every_syndrome(catalog):
    code = catalog.build_code("surface", "hexagonal", 3)
    table = make_noise("depolarizing", code.n, 0.1)
    builder = NetworkBuilder(code, table)
    rng = np.random.default_rng(0)
    nets = [builder.network(sample_errors(table, rng), cls) for cls in CLASSES]
    assert len({n.structure.fingerprint for n in nets}) == 1
    again = NetworkBuilder(code, table).structure
    assert again.fingerprint == builder.structure.fingerprint


def test_large_code_at_high_rate_stays_in_range(catalog):
    """ln P of the error's own class lies in [ln P(E), 0] (the sum contains the term E; probabilities
    are at most 1), at a size where the raw probability underflows float64."""
    from tnarena.decode import Decoder

    from tnarena.codes.surface import planar_surface_code
    from tnarena.lattices import build_lattice

    code = planar_surface_code(build_lattice("square", 150, 4))  # long and thin: cheap to contract
    table = make_noise("bit_flip", code.n, 0.45)
    error = sample_errors(table, np.random.default_rng(5))
    cols = 2 * error[code.n:] + (error[: code.n] ^ error[code.n:])
    log_p_error = float(np.log(table[np.arange(code.n), cols]).sum())
    assert log_p_error < np.log(np.finfo(float).tiny)  # the raw probability would underflow
    decoder = Decoder(code, table, catalog.strategy("exact"), {"search_time": 0.5})
    network = decoder.builder.network(error)
    assert all(np.max(a) <= 1.0 + 1e-15 for a in network.arrays)
    pure = decoder.pure_error(code.syndrome(error))
    own = {c.cls: c for c in decoder.class_log_probs(pure)}[decoder.true_class(error, pure)]
    assert log_p_error <= own.log_prob <= 0.0


def test_quimb_adapter_carries_positions(catalog):
    code = catalog.build_code("surface", "square", 3)
    table = make_noise("depolarizing", code.n, 0.1)
    network = NetworkBuilder(code, table).network(np.zeros(2 * code.n, dtype=np.uint8))
    tn = to_quimb(network)
    for i, pos in enumerate(network.structure.positions):
        (t,) = tn.select_tensors(f"NODE{i}")
        assert position_from_tags(t.tags) == pytest.approx(tuple(pos))


def test_wrong_error_length_is_refused(catalog):
    from tnarena.errors import TnarenaError

    code = catalog.build_code("surface", "square", 3)
    builder = NetworkBuilder(code, make_noise("bit_flip", code.n, 0.1))
    with pytest.raises(TnarenaError, match="the code needs 2n = 26"):
        builder.network(np.zeros(5, dtype=np.uint8))
