"""The column boundary MPS strategy against the exact strategy, Onsager's free energy, and its refusals.

Decoding networks are checked against the ``exact`` strategy (cotengra contraction tree, itself checked
against brute-force enumeration of the group sum in test_exact_tree.py); the open Ising lattice against
REFERENCES 1 (Onsager 1944).
"""

import math

import numpy as np
import pytest

from reference import chi_errors, ising_network, onsager_free_energy
from tnarena.errors import TnarenaError
from tnarena.lattices import LATTICE_FAMILIES
from tnarena.network import NetworkBuilder
from tnarena.noise import make_noise, sample_errors

NOISE = [
    ("bit_flip", {}), ("phase_flip", {}), ("depolarizing", {}), ("biased", {"eta": 4.0}),
    ("independent_xz", {"z_rate": 0.05}), ("inhomogeneous", {}),
]
SMALL = {"truncated_hexagonal": 2}
CLASSES = [(0, 0), (1, 0), (1, 1), (0, 1)]


def _strategies(catalog, structure, **params):
    """(exact, its plan), (columns, its plan) for one structure."""
    ex, co = catalog.strategy("exact"), catalog.strategy("columns")
    return (ex, ex.plan(structure, ex.resolve({"search_time": 0.1}))), (
        co, co.plan(structure, co.resolve({"chi": 64, **params})))


def _agree_with_exact(catalog, builder, error, classes=CLASSES, **params):
    """Assert columns == exact to 1e-10 relative in ln P for every possible class; return how many were compared."""
    (ex, pe), (co, pc) = _strategies(catalog, builder.structure, **params)
    compared = 0
    for cls in classes:
        network = builder.network(error, cls)
        if network.is_zero:
            continue
        want = ex.contract(pe, network).log_value + network.log_scale
        got = co.contract(pc, network).log_value + network.log_scale
        assert got == pytest.approx(want, rel=1e-10), (cls, params)
        compared += 1
    return compared


@pytest.mark.parametrize("lattice", sorted(LATTICE_FAMILIES))
def test_columns_at_large_chi_equals_exact_on_every_lattice(catalog, lattice):
    """At chi = 64 on size-3 codes (nothing to truncate) columns equals exact to 1e-10 relative in ln P,
    for every noise model and every class that is possible."""
    code = catalog.build_code("surface", lattice, SMALL.get(lattice, 3), seed=4)
    rng = np.random.default_rng(8)
    for name, options in NOISE:
        table = make_noise(name, code.n, 0.12, seed=2, **options)
        builder = NetworkBuilder(code, table)
        assert _agree_with_exact(catalog, builder, sample_errors(table, rng)) >= 1, name


@pytest.mark.parametrize("direction", [0, 90, 180, 270])
def test_every_direction_agrees_with_exact(catalog, direction):
    """Each of the four sweep directions gives the exact value at chi = 64 (6.6.6 color code, size 5)."""
    code = catalog.build_code("color_666", None, 5)
    table = make_noise("depolarizing", code.n, 0.1)
    builder = NetworkBuilder(code, table)
    error = sample_errors(table, np.random.default_rng(1))
    assert _agree_with_exact(catalog, builder, error, classes=[(0, 0), (1, 1)], direction=direction) >= 1


@pytest.mark.parametrize("lattice, factor", [("square", 2.0), ("delaunay", 1.7)])
def test_a_given_column_width_agrees_with_exact(catalog, lattice, factor):
    """Uniform columns wider than the least allowed (several nodes per cell) still give the exact value."""
    code = catalog.build_code("surface", lattice, 3, seed=4)
    table = make_noise("depolarizing", code.n, 0.1)
    builder = NetworkBuilder(code, table)
    s = builder.structure
    least = float(np.abs(np.diff(s.positions[s.bonds][:, :, 0], axis=1)).max())
    co = catalog.strategy("columns")
    grid = co.plan(s, co.resolve({"width": factor * least})).pieces[0].grid
    assert grid.width == pytest.approx(factor * least)
    assert np.bincount(grid.column[grid.column >= 0]).max() > np.bincount(
        co.plan(s, co.resolve({})).pieces[0].grid.column[grid.column >= 0]).max()  # fewer, fuller columns
    error = sample_errors(table, np.random.default_rng(5))
    assert _agree_with_exact(catalog, builder, error, width=factor * least) >= 1


def test_disconnected_pieces_add_their_logs(catalog):
    """Independent X/Z noise splits a CSS code's network in two pieces; their logs add up to exact's value."""
    code = catalog.build_code("surface", "hexagonal", 4)
    table = make_noise("independent_xz", code.n, 0.1, z_rate=0.07)
    builder = NetworkBuilder(code, table)
    assert len(builder.structure.components()) == 2
    assert _agree_with_exact(catalog, builder, sample_errors(table, np.random.default_rng(2))) >= 1


@pytest.mark.parametrize("lattice", ["square", "hexagonal", "delaunay"])
def test_error_does_not_grow_with_chi(catalog, lattice):
    """Mean |error in ln P| over 30 seeded instances (size 5, depolarizing 0.12) does not grow as chi goes
    2, 4, 8, 16, and is below 1e-3 at chi = 16; one plan per chi serves every instance."""
    means = chi_errors(catalog, "columns", lattice, 30)
    assert all(b <= a * (1 + 1e-9) + 1e-12 for a, b in zip(means, means[1:])), means
    assert means[-1] < 1e-3, means


@pytest.mark.parametrize("beta", [0.3, 0.6])
def test_ising_free_energy_matches_onsager(catalog, beta):
    """REFERENCES 1: ln Z / L^2 of open L x L Ising networks (L = 24, 32, 48, chi = 8) fitted as
    a + b / L + c / L^2 (bulk, edge and corner terms; the rest is exponentially small off criticality)
    gives a = -beta f within 1e-5."""
    co = catalog.strategy("columns")
    sizes = np.array([24, 32, 48])
    per_site = []
    for length in sizes:
        network = ising_network(int(length), beta)
        plan = co.plan(network.structure, co.resolve({"chi": 8}))
        per_site.append(co.contract(plan, network).log_value / length**2)
    bulk = np.polyfit(1.0 / sizes, per_site, 2)[-1]
    assert bulk == pytest.approx(onsager_free_energy(beta), abs=1e-5)


def test_stats_report_the_truncation(catalog):
    """Discarded weight is round-off (below the cutoff) when chi holds every singular value and large when
    chi = 2 must cut;
    flops and the largest intermediate are reported."""
    code = catalog.build_code("surface", "square", 5)
    table = make_noise("depolarizing", code.n, 0.12)
    builder = NetworkBuilder(code, table)
    network = builder.network(sample_errors(table, np.random.default_rng(0)))
    co = catalog.strategy("columns")
    wide = co.contract(co.plan(builder.structure, co.resolve({"chi": 256})), network).stats
    narrow = co.contract(co.plan(builder.structure, co.resolve({"chi": 2})), network).stats
    assert wide["discarded_weight"] < 1e-20 < narrow["discarded_weight"]  # wide drops round-off only
    assert wide["flops"] > narrow["flops"] > 0
    assert wide["largest_intermediate"] > narrow["largest_intermediate"] >= 2


def test_zero_class_gives_minus_infinity(catalog):
    """A class the syndrome rules out (all-zero qubit arrays) contracts to ln 0 = -inf."""
    code = catalog.build_code("surface", "square", 3)
    builder = NetworkBuilder(code, make_noise("bit_flip", code.n, 0.1))
    zero = builder.network(np.zeros(2 * code.n, dtype=np.uint8), (0, 1))
    assert zero.is_zero
    co = catalog.strategy("columns")
    assert co.contract(co.plan(builder.structure, co.resolve({})), zero).log_value == -math.inf


@pytest.mark.parametrize("params, message", [
    ({"chi": 0}, "parameter 'chi' = 0 is outside its range"),
    ({"direction": 45}, "parameter 'direction' must be one of 0, 90, 180, 270, not 45"),
    ({"direction": "north"}, "parameter 'direction' takes one of 0, 90, 180, 270, not 'north'"),
    ({"width": -1.0}, r"parameter 'width' = -1.0 is outside its range: float in \[0, inf\]"),
    ({"max_cell": 0}, "parameter 'max_cell' = 0 is outside its range"),
    ({"bond": 3}, "has no parameter 'bond'; its parameters are: chi, direction, width, max_cell, cutoff"),
])
def test_bad_parameters_are_refused(catalog, params, message):
    with pytest.raises(TnarenaError, match=message):
        catalog.strategy("columns").resolve(params)


def test_too_narrow_a_width_is_refused_at_plan_time(catalog):
    """A column narrower than the longest bond along the direction would let a bond skip a column."""
    code = catalog.build_code("surface", "square", 3)
    builder = NetworkBuilder(code, make_noise("depolarizing", code.n, 0.1))
    co = catalog.strategy("columns")
    with pytest.raises(TnarenaError, match=r"'width' = 0.3 is narrower than the longest bond along direction 0 "
                                           r"\(0.5\).*give at least 0.5, or 0 for automatic"):
        co.plan(builder.structure, co.resolve({"width": 0.3}))


def test_a_cell_over_max_cell_is_refused_at_plan_time(catalog):
    """A cell tensor larger than max_cell elements is refused before anything is allocated."""
    code = catalog.build_code("surface", "square", 5)
    builder = NetworkBuilder(code, make_noise("depolarizing", code.n, 0.1))
    co = catalog.strategy("columns")
    with pytest.raises(TnarenaError, match=r"would hold \d+ elements, more than max_cell = 8; give a smaller "
                                           r"column width"):
        co.plan(builder.structure, co.resolve({"max_cell": 8, "width": 2.0}))
