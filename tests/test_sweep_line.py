"""The sweep-line strategy against the exact strategy, Onsager's free energy, and refusals."""

import dataclasses

import numpy as np
import pytest

from reference import chi_errors, ising_network, onsager_free_energy
from tnarena.decode import Decoder
from tnarena.errors import TnarenaError
from tnarena.lattices import LATTICE_FAMILIES
from tnarena.network import NetworkBuilder
from tnarena.noise import make_noise, sample_errors

NOISE = [
    ("bit_flip", {}), ("phase_flip", {}), ("depolarizing", {}), ("biased", {"eta": 4.0}),
    ("independent_xz", {"z_rate": 0.05}), ("inhomogeneous", {}),
]
SMALL = {"truncated_hexagonal": 2}


def _pair(catalog, structure, chi=64, **extra):
    ex, sw = catalog.strategy("exact"), catalog.strategy("sweep")
    return (ex, ex.plan(structure, ex.resolve({"search_time": 0.1}))), (
        sw, sw.plan(structure, sw.resolve({"chi": chi, **extra})))


@pytest.mark.parametrize("lattice", sorted(LATTICE_FAMILIES))
def test_sweep_at_large_chi_equals_exact_on_every_lattice(catalog, lattice):
    """Issue 3: at chi = 64 the sweep equals the exact strategy to 1e-10 relative in ln, every noise model
    (exact: cotengra + kahypar, checked against brute force in test_exact_tree.py)."""
    code = catalog.build_code("surface", lattice, SMALL.get(lattice, 3), seed=4)
    rng = np.random.default_rng(8)
    for name, options in NOISE:
        table = make_noise(name, code.n, 0.12, seed=2, **options)
        builder = NetworkBuilder(code, table)
        (ex, pe), (sw, ps) = _pair(catalog, builder.structure)
        error = sample_errors(table, rng)
        for cls in [(0, 0), (1, 0), (1, 1), (0, 1)]:
            network = builder.network(error, cls)
            if network.is_zero:
                continue
            want = ex.contract(pe, network).log_value + network.log_scale
            got = sw.contract(ps, network).log_value + network.log_scale
            assert got == pytest.approx(want, rel=1e-10), (name, cls)


@pytest.mark.parametrize("sides", [1, 2])
@pytest.mark.parametrize("lattice", ["square", "delaunay"])
def test_truncating_after_every_node_equals_exact_at_large_chi(catalog, lattice, sides):
    """truncate = 'node' (no layers) also equals the exact strategy to 1e-10 relative at chi = 64."""
    code = catalog.build_code("surface", lattice, 3, seed=4)
    table = make_noise("depolarizing", code.n, 0.12)
    builder = NetworkBuilder(code, table)
    (ex, pe), (sw, ps) = _pair(catalog, builder.structure, truncate="node", sides=sides)
    network = builder.network(sample_errors(table, np.random.default_rng(3)))
    assert sw.contract(ps, network).log_value == pytest.approx(ex.contract(pe, network).log_value, rel=1e-10)


@pytest.mark.parametrize("lattice", ["square", "hexagonal", "delaunay"])
@pytest.mark.parametrize("direction", ["0", "45", "90", "135", "180", "225", "270", "315"])
def test_two_sided_sweep_at_large_chi_equals_exact(catalog, lattice, direction):
    """sides = 2 (a line from each end, joined exactly at the middle cut) equals the exact strategy to 1e-10
    relative at chi = 64, in every candidate direction (high-degree folded nodes whose incoming bonds must
    be gathered from far apart on the line, on the Delaunay layout)."""
    code = catalog.build_code("surface", lattice, 5, seed=1)
    table = make_noise("depolarizing", code.n, 0.12)
    builder = NetworkBuilder(code, table)
    (ex, pe), (sw, ps) = _pair(catalog, builder.structure, direction=direction, sides=2)
    assert [len(group) for group in ps.schedules] == [2]
    network = builder.network(sample_errors(table, np.random.default_rng(5)))
    assert sw.contract(ps, network).log_value == pytest.approx(ex.contract(pe, network).log_value, rel=1e-10)


@pytest.mark.parametrize("sides", [1, 2])
def test_disconnected_pieces_add_their_logs(catalog, sides):
    """Independent X/Z noise splits the network of a CSS code in two pieces (X and Z generators); the sweep
    contracts each (from one or both ends) and their logs add up to the exact value."""
    code = catalog.build_code("surface", "square", 5)
    table = make_noise("independent_xz", code.n, 0.1, z_rate=0.05)
    builder = NetworkBuilder(code, table)
    (ex, pe), (sw, ps) = _pair(catalog, builder.structure, sides=sides)
    assert [len(group) for group in ps.schedules] == [sides, sides]
    network = builder.network(sample_errors(table, np.random.default_rng(2)), (1, 0))
    assert sw.contract(ps, network).log_value == pytest.approx(ex.contract(pe, network).log_value, rel=1e-10)


@pytest.mark.parametrize("direction", ["0", "90", "180", "270", "33.3", "auto"])
def test_every_direction_gives_the_same_value(catalog, direction):
    """Directions with ties (0, 90, ...) and without (33.3) agree with exact at large chi."""
    code = catalog.build_code("color_666", None, 5)
    table = make_noise("depolarizing", code.n, 0.1)
    builder = NetworkBuilder(code, table)
    (ex, pe), (sw, ps) = _pair(catalog, builder.structure, direction=direction)
    network = builder.network(sample_errors(table, np.random.default_rng(1)))
    assert sw.contract(ps, network).log_value == pytest.approx(ex.contract(pe, network).log_value, rel=1e-10)


def test_auto_direction_minimises_the_line(catalog):
    """'auto' picks, among its candidate angles, one whose largest line is smallest."""
    code = catalog.build_code("surface", "square", 5)
    builder = NetworkBuilder(code, make_noise("depolarizing", code.n, 0.1))
    sw = catalog.strategy("sweep")
    auto = sw.plan(builder.structure, sw.resolve({"direction": "auto"})).max_line
    for angle in (0, 45, 90, 135):
        assert auto <= sw.plan(builder.structure, sw.resolve({"direction": str(angle)})).max_line


def test_decisions_agree_with_exact_at_chi_8(catalog):
    """Issue 3: square planar code d = 7, bit flip p = 0.1, chi = 8: >= 99% of 200 decisions agree with exact."""
    code = catalog.build_code("surface", "square", 7)
    table = make_noise("bit_flip", code.n, 0.1)
    exact = Decoder(code, table, catalog.strategy("exact"), {"search_time": 0.2})
    sweep = Decoder(code, table, catalog.strategy("sweep"), {"chi": 8})
    agree = 0
    for seed in range(200):
        error = sample_errors(table, np.random.default_rng(seed))
        agree += exact.decode_error(error).decision == sweep.decode_error(error).decision
    assert agree >= 198


@pytest.mark.parametrize("lattice", ["square", "hexagonal", "delaunay"])
def test_error_does_not_grow_with_chi(catalog, lattice):
    """Issue 3: mean |error in ln P| over 50 seeded instances does not grow as chi goes 2, 4, 8, 16."""
    means = chi_errors(catalog, "sweep", lattice, 50)
    assert all(b <= a * (1 + 1e-9) + 1e-12 for a, b in zip(means, means[1:])), means
    assert means[-1] < 1e-3


@pytest.mark.parametrize("beta", [0.3, 0.6])
def test_ising_free_energy_matches_onsager(catalog, beta):
    """REFERENCES 1: ln Z / L^2 of open L x L Ising networks, L = 64, 80, 96, fitted as a + b/L (surface term),
    gives a = -beta f within 1e-3."""
    sw = catalog.strategy("sweep")
    sizes = [64, 80, 96]
    per_site = []
    for length in sizes:
        network = ising_network(length, beta)
        plan = sw.plan(network.structure, sw.resolve({"chi": 8, "direction": "0"}))
        per_site.append(sw.contract(plan, network).log_value / length**2)
    slope, intercept = np.polyfit(1.0 / np.array(sizes), per_site, 1)
    assert intercept == pytest.approx(onsager_free_energy(beta), abs=1e-3)


@pytest.mark.parametrize("params, message", [
    ({"chi": 0}, "parameter 'chi' = 0 is outside its range"),
    ({"direction": "north"}, "takes an angle in degrees or 'auto', not 'north'"),
    ({"cutoff": -1.0}, "parameter 'cutoff' = -1.0 is outside its range"),
    ({"truncate": "row"}, "parameter 'truncate' must be one of layer, node, not 'row'"),
    ({"sides": 3}, "parameter 'sides' must be one of 1, 2, not 3"),
    ({"sides": "both"}, "parameter 'sides' takes one of 1, 2, not 'both'"),
    ({"chi": 8, "far_chi": 16}, r"'far_chi' \(16\) must not exceed 'chi' \(8\)"),
    ({"chi": 8, "far_chi": 4, "truncate": "node"}, "'far_chi' counts layers: it needs truncate = 'layer'"),
    ({"far_chi": -1}, "parameter 'far_chi' = -1 is outside its range"),
    ({"near_layers": -2}, "parameter 'near_layers' = -2 is outside its range"),
    ({"bond": 3}, "has no parameter 'bond'; its parameters are: chi, direction, cutoff, truncate, sides, far_chi, "
                  "near_layers"),
])
def test_bad_parameters_are_refused(catalog, params, message):
    with pytest.raises(TnarenaError, match=message):
        catalog.strategy("sweep").resolve(params)


def test_layer_chis_give_chi_to_the_layers_before_the_line_stops():
    """The rule documented in tnarena_sweep_line.layer_chis, on a line of 3 layer ends and a trailing op
    (the op after the last end is joined exactly at the middle cut): counted back from the stop."""
    from tnarena_sweep_line import layer_chis

    ends = [False, True, False, True, False, True, False]
    assert layer_chis(ends, 8, 4, 1) == [4, 4, 4, 4, 8, 8, 8]
    assert layer_chis(ends, 8, 4, 0) == [4, 4, 4, 4, 4, 4, 8]
    assert layer_chis(ends, 8, 4, 3) == [8] * 7
    assert layer_chis([False] * 3, 8, 4, 0) == [8] * 3  # truncate = 'node': no layers, chi throughout


@pytest.mark.parametrize("noise_name", ["bit_flip", "depolarizing"])
def test_far_chi_on_no_layer_is_the_uniform_sweep(catalog, noise_name):
    """far_chi = chi, or near_layers covering every layer, leaves every cut at chi: ln P equals the plain
    sweep's bit for bit (square d = 9, where chi = 4 truncates)."""
    code = catalog.build_code("surface", "square", 9)
    table = make_noise(noise_name, code.n, 0.12)
    builder = NetworkBuilder(code, table)
    sw = catalog.strategy("sweep")
    plans = [sw.plan(builder.structure, sw.resolve(p)) for p in (
        {"chi": 4}, {"chi": 4, "far_chi": 4, "near_layers": 0}, {"chi": 4, "far_chi": 2, "near_layers": 1000})]
    rng = np.random.default_rng(5)
    for _ in range(3):
        network = builder.network(sample_errors(table, rng))
        values = [sw.contract(plan, network) for plan in plans]
        assert values[0].stats["discarded_weight"] > 0  # chi = 4 does truncate here
        assert values[0].log_value == values[1].log_value == values[2].log_value


def test_a_tapered_sweep_sits_between_its_two_uniform_sweeps(catalog):
    """Against exact (30 seeded instances, square d = 7, depolarizing 0.15): chi = 8 with far_chi = 2 on all
    but the last 2 layers before the lines meet is no less accurate than chi = 2 throughout and no more
    accurate than chi = 8 throughout, so the far layers really are cut to far_chi and the near ones to chi;
    at chi = far_chi = 64 it equals exact to 1e-10 relative."""
    code = catalog.build_code("surface", "square", 7)
    table = make_noise("depolarizing", code.n, 0.15)
    builder = NetworkBuilder(code, table)
    ex, sw = catalog.strategy("exact"), catalog.strategy("sweep")
    pe = ex.plan(builder.structure, ex.resolve({"search_time": 0.2}))
    settings = {"chi 2": {"chi": 2}, "taper": {"chi": 8, "far_chi": 2, "near_layers": 2}, "chi 8": {"chi": 8},
                "chi 64": {"chi": 64, "far_chi": 64}}
    plans = {k: sw.plan(builder.structure, sw.resolve(p)) for k, p in settings.items()}
    errors = {k: [] for k in settings}
    wants = []
    for seed in range(30):
        network = builder.network(sample_errors(table, np.random.default_rng(seed)))
        wants.append(ex.contract(pe, network).log_value)
        for k, plan in plans.items():
            errors[k].append(abs(sw.contract(plan, network).log_value - wants[-1]))
    means = {k: float(np.mean(v)) for k, v in errors.items()}
    assert means["chi 8"] < means["taper"] < means["chi 2"], means
    assert np.all(np.array(errors["chi 64"]) <= 1e-10 * np.abs(wants)), means


def _relative_gap(want: float, got: float) -> float:
    if want == got:  # equal infinities included
        return 0.0
    return abs(got - want) / abs(want)


BATCH_SETTINGS = [
    {"chi": 2},  # truncation binds (checked below)
    {"chi": 64},  # no truncation
    {"chi": 2, "truncate": "node", "sides": 1},
    {"chi": 4, "far_chi": 2, "near_layers": 1},
]


@pytest.mark.parametrize("params", BATCH_SETTINGS, ids=["chi2", "chi64", "chi2-node-one-sided", "chi4-far2"])
@pytest.mark.parametrize("noise_name", ["bit_flip", "depolarizing"])
@pytest.mark.parametrize("lattice", ["square", "hexagonal", "delaunay"])
def test_batched_decoding_equals_one_at_a_time(catalog, lattice, noise_name, params):
    """Issue 7: Decoder.decode_errors (one contract_batch over every class of 12 seeded errors) gives
    the one-at-a-time ln P of every class to 1e-10 relative, with and without binding truncation.

    (Sizes where no cut falls on exactly tied singular values: there rounding alone decides which is
    kept, batched or not, e.g. hexagonal d = 3 under depolarizing noise at chi = 2.)"""
    code = catalog.build_code("surface", lattice, 5, seed=4)
    table = make_noise(noise_name, code.n, 0.12)
    decoder = Decoder(code, table, catalog.strategy("sweep"), params)
    errors = sample_errors(table, np.random.default_rng(11), shots=12)
    batched = decoder.decode_errors(errors)
    discarded = 0.0
    for error, got in zip(errors, batched):
        want = decoder.decode_error(error)
        for w, g in zip(want.classes, got.classes):
            assert _relative_gap(w.log_prob, g.log_prob) < 1e-10, (w.label, w.log_prob, g.log_prob)
            discarded += g.stats.get("discarded_weight", 0.0)
        assert got.decision == want.decision
    if params["chi"] == 2 and (lattice, noise_name, params) != ("hexagonal", "bit_flip", {"chi": 2}):
        assert discarded > 1e-9  # the truncation really binds here (the narrow hexagonal line under bit
        # flip fits chi = 2 with layer truncation)
    if params["chi"] == 64:
        assert discarded == 0.0


@pytest.mark.parametrize("sides", [1, 2])
def test_batched_pieces_equal_one_at_a_time(catalog, sides):
    """Two pieces (independent X/Z noise on a CSS code), each swept from one or both ends: the batched
    logs add up per element as one at a time, to 1e-10 relative."""
    code = catalog.build_code("surface", "square", 5)
    table = make_noise("independent_xz", code.n, 0.1, z_rate=0.05)
    decoder = Decoder(code, table, catalog.strategy("sweep"), {"chi": 4, "sides": sides})
    assert [len(group) for group in decoder.plan.schedules] == [sides, sides]
    errors = sample_errors(table, np.random.default_rng(5), shots=12)
    for error, got in zip(errors, decoder.decode_errors(errors)):
        for w, g in zip(decoder.decode_error(error).classes, got.classes):
            assert _relative_gap(w.log_prob, g.log_prob) < 1e-10, (w.label, w.log_prob, g.log_prob)


@pytest.mark.parametrize("params", [{"chi": 4}, {"chi": 4, "truncate": "node", "sides": 1}])
def test_a_batched_value_does_not_depend_on_its_batch_mates(catalog, params):
    """An element contracted alone (batch of 1) equals the same element inside a batch of 7, to 1e-12."""
    code = catalog.build_code("surface", "delaunay", 5, seed=4)
    table = make_noise("depolarizing", code.n, 0.12)
    builder = NetworkBuilder(code, table)
    sw = catalog.strategy("sweep")
    plan = sw.plan(builder.structure, sw.resolve(params))
    rng = np.random.default_rng(9)
    networks = [builder.network(sample_errors(table, rng)) for _ in range(7)]
    together = sw.contract_batch(plan, networks)
    for k in (0, 3, 6):
        alone = sw.contract_batch(plan, [networks[k]])[0]
        assert alone.log_value == pytest.approx(together[k].log_value, rel=1e-12)


def test_sweep_offers_batched_contraction(catalog):
    assert catalog.strategy("sweep").batched


# ---- resuming from the previous contraction with the same plan -------------------------------


@pytest.mark.parametrize("noise_name, direction, partner", [
    ("bit_flip", 0, (1, 0)), ("depolarizing", 0, (1, 0)), ("depolarizing", 90, (0, 1))])  # bit flip: no Z-bar class
def test_resumed_contraction_is_bit_identical_and_close_to_exact(catalog, noise_name, direction, partner):
    """Consecutive class networks share a plan's memo: each ln equals, bit for bit, the same network
    contracted with a fresh plan (empty memo), and the exact strategy to 1e-9 at chi 32 (exact:
    checked against brute force in test_exact_tree.py). The class whose logical runs along the line
    through the middle (X-bar, the middle column, in direction 0; Z-bar, the middle row, in 90)
    takes over all but one side's last layer from the I class, in 90 with two classes contracted between."""
    code = catalog.build_code("surface", "square", 7)
    table = make_noise(noise_name, code.n, 0.12)
    builder = NetworkBuilder(code, table)
    (ex, pe), (sw, ps) = _pair(catalog, builder.structure, chi=32, direction=direction)
    rng = np.random.default_rng(3)
    reused = {}
    for _ in range(3):
        pure = sample_errors(table, rng)
        for cls in [(0, 0), (1, 0), (1, 1), (0, 1)]:
            network = builder.network(pure, cls)
            if network.is_zero:
                continue
            got = sw.contract(ps, network)
            fresh = sw.contract(sw.plan(builder.structure, sw.resolve({"chi": 32, "direction": direction})), network)
            assert got.log_value == fresh.log_value
            assert fresh.stats["reused_steps"] == 0
            want = ex.contract(pe, network).log_value
            assert _relative_gap(want, got.log_value) < 1e-9
            reused.setdefault(cls, []).append(got.stats["reused_steps"])
    # all but one side's last layer (after its last layer end), where the logical lies
    tails = [len(side) - max(k + 1 for k, step in enumerate(side) if step.end) for side in ps.steps[0]]
    assert min(reused[partner]) >= sum(len(side) for side in ps.steps[0]) - max(tails)


def test_a_pickled_plan_carries_no_memo(catalog):
    """The memo is the process's own: a plan sent to another worker arrives without it."""
    import pickle

    code = catalog.build_code("surface", "square", 5)
    table = make_noise("depolarizing", code.n, 0.1)
    builder = NetworkBuilder(code, table)
    sw = catalog.strategy("sweep")
    plan = sw.plan(builder.structure, sw.resolve({"chi": 8}))
    sw.contract(plan, builder.network(sample_errors(table, np.random.default_rng(1))))
    assert plan.memo
    assert pickle.loads(pickle.dumps(plan)).memo == {}


# ---- batched: elements with equal prefixes share a line ---------------------------------------


def test_prefix_groups_split_by_content_like_a_plain_comparison():
    """PrefixGroups against a partition made here by comparing rows with Python's ==, layer by layer."""
    from tnarena_sweep_line.sharing import PrefixGroups

    rng = np.random.default_rng(4)
    batch = 12
    choices = rng.normal(size=(3, 2, 2))
    layers = [np.stack([choices[rng.integers(0, k)] for _ in range(batch)]) for k in (1, 2, 3, 3)]
    groups = PrefixGroups(batch)
    seen: list[tuple] = [() for _ in range(batch)]
    for layer in layers:
        old_labels, old_rep = groups.labels.copy(), groups.rep.copy()
        parent = groups.refine([layer])
        seen = [s + (tuple(layer[b].ravel()),) for b, s in enumerate(seen)]
        for b in range(batch):  # same group exactly when the whole prefix is the same
            for c in range(batch):
                assert (groups.labels[b] == groups.labels[c]) == (seen[b] == seen[c])
        assert all(seen[groups.rep[g]] == seen[b] for b, g in enumerate(groups.labels))
        if parent is not None:  # every new group comes from the old group of its elements
            assert (parent[groups.labels] == old_labels).all()
        else:
            assert (groups.labels == old_labels).all() and (groups.rep == old_rep).all()
    broadcast = np.broadcast_to(choices[0], (batch, 2, 2))  # the same array for all: no split
    assert groups.refine([broadcast]) is None


def test_batched_duplicates_share_a_line_and_match_exact(catalog):
    """A batch holding each class network of two syndromes twice (depolarizing, chi 32, direction 0):
    duplicates come out bit-identical, and every value equals the exact strategy to 1e-9 (exact:
    checked against brute force in test_exact_tree.py)."""
    code = catalog.build_code("surface", "square", 5)
    table = make_noise("depolarizing", code.n, 0.12)
    builder = NetworkBuilder(code, table)
    (ex, pe), (sw, ps) = _pair(catalog, builder.structure, chi=32, direction=0)
    rng = np.random.default_rng(6)
    nets = [builder.network(sample_errors(table, rng), cls) for _ in range(2)
            for cls in [(0, 0), (1, 0), (1, 1), (0, 1)]]
    doubled = nets + nets[::-1]
    got = sw.contract_batch(ps, doubled)
    k = len(nets)
    for i, net in enumerate(nets):
        assert got[i].log_value == got[2 * k - 1 - i].log_value
        assert _relative_gap(ex.contract(pe, net).log_value, got[i].log_value) < 1e-9


# ---- which representative of a logical the builder uses ---------------------------------------


def _moved_logicals(code):
    """The code's logicals with X-bar times every X-type generator left of it and Z-bar times every
    Z-type generator below it: the same logical classes on different qubits (a class probability
    sums over the whole stabilizer group, so it cannot depend on the representative: the
    definition of the coset probability, common knowledge)."""
    n = code.n
    x_bar, z_bar = code.logicals[0, 0].copy(), code.logicals[0, 1].copy()
    x_column = code.qubit_positions[np.flatnonzero(x_bar[:n]), 0].mean()
    z_row = code.qubit_positions[np.flatnonzero(z_bar[n:]), 1].mean()
    for row, (gx, gy) in zip(code.generators, code.generator_positions):
        if not row[n:].any() and gx < x_column:
            x_bar ^= row
        elif not row[:n].any() and gy < z_row:
            z_bar ^= row
    return np.array([[x_bar, z_bar]], dtype=np.uint8)


@pytest.mark.parametrize("direction", ["0", "90"])
def test_truncated_values_do_not_depend_on_the_logical_representative(catalog, direction):
    """Moving a logical by stabilizers relabels the summed generator variables; on the line it flips
    the legs of the relabelled generators, a permutation of each site's rows, which commutes with
    the SVD truncation. So even at a chi that truncates (chi 4, errors of 1e-4 and more against
    exact) the sweep gives the same values, to rounding, for either set of representatives."""
    code = catalog.build_code("surface", "square", 7)
    moved = dataclasses.replace(code, logicals=_moved_logicals(code))
    assert not np.array_equal(moved.logicals, code.logicals)
    table = make_noise("depolarizing", code.n, 0.12)
    builders = [NetworkBuilder(c, table) for c in (code, moved)]
    ex, sw = catalog.strategy("exact"), catalog.strategy("sweep")
    pe = ex.plan(builders[0].structure, ex.resolve({"search_time": 0.1}))
    params = sw.resolve({"chi": 4, "direction": direction})
    rng = np.random.default_rng(11)
    largest_error = 0.0
    for _ in range(3):
        error = sample_errors(table, rng)
        for cls in [(0, 0), (1, 0), (1, 1), (0, 1)]:
            nets = [b.network(error, cls) for b in builders]
            # a fresh plan for each: nothing is taken over from a previous contraction
            values = [sw.contract(sw.plan(b.structure, params), net).log_value + net.log_scale
                      for b, net in zip(builders, nets)]
            assert values[1] == pytest.approx(values[0], abs=1e-9), cls
            want = ex.contract(pe, nets[0]).log_value + nets[0].log_scale
            largest_error = max(largest_error, abs(values[0] - want))
    assert largest_error > 1e-4  # chi 4 does truncate: the check above is not between exact values
