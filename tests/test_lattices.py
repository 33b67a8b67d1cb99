"""Specification of the lattices layer: tilings, random lattices, duals, files, registry.

Outside sources are named beside each check: closed forms, textbook facts about
the tilings ("common practice"), networkx's planarity test, and a brute-force
segment-intersection test written here independently of the code under test.
"""

from __future__ import annotations

import json
import math
import re
from collections import Counter

import networkx as nx
import numpy as np
import pytest

from tnarena.errors import TnarenaError
from tnarena.lattices import (
    LATTICE_FAMILIES,
    Lattice,
    build_lattice,
    dual,
    read_lattice_file,
    write_lattice_file,
)
from tnarena.lattices.geometry import find_crossing

FAMILIES = sorted(LATTICE_FAMILIES)
REQUIRED = {
    "square", "triangular", "hexagonal", "kagome", "rhombille", "truncated_square",
    "tetrakis_square", "truncated_hexagonal", "triakis_triangular", "delaunay", "voronoi",
}  # fmt: skip
SIZES = [(4.0, 4.0), (9.0, 7.0)]
BIG = (12.0, 10.0)  # large enough for every family to have vertices off the boundary

# Vertex degree off the boundary and face sizes, from the vertex configuration of
# each tiling (common practice: Gruenbaum & Shephard, "Tilings and Patterns").
INTERIOR_DEGREES = {
    "square": {4},
    "triangular": {6},
    "hexagonal": {3},
    "kagome": {4},
    "truncated_square": {3},
    "truncated_hexagonal": {3},
    "rhombille": {3, 6},
    "tetrakis_square": {4, 8},
    "triakis_triangular": {3, 12},
    "voronoi": {3},  # Voronoi vertices of points in general position (common practice)
}
FACE_SIZES = {
    "square": {4},
    "triangular": {3},
    "hexagonal": {6},
    "kagome": {3, 6},
    "truncated_square": {4, 8},
    "truncated_hexagonal": {3, 12},
    "rhombille": {4},
    "tetrakis_square": {3},
    "triakis_triangular": {3},
    "delaunay": {3},
}
# Edge lengths: 1 for the Archimedean tilings; for the Laves duals scaled to a
# shortest edge of 1, the ratio of the two kinds of edge is a closed form
# (tetrakis: side and half-diagonal of a square, sqrt2; triakis: side of the
# triangular lattice and centre-to-corner distance, sqrt3).
EDGE_LENGTHS = {
    "square": {1.0},
    "triangular": {1.0},
    "hexagonal": {1.0},
    "kagome": {1.0},
    "truncated_square": {1.0},
    "truncated_hexagonal": {1.0},
    "rhombille": {1.0},
    "tetrakis_square": {1.0, math.sqrt(2)},
    "triakis_triangular": {1.0, math.sqrt(3)},
}


def segments_meet(p, q, r, s) -> bool:
    """Closed segments pq and rs share a point (exact orientation test, common practice)."""

    def orient(a, b, c):
        v = (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])
        return 0 if abs(v) < 1e-12 else (1 if v > 0 else -1)

    def on_box(a, b, c):
        return (min(a[0], b[0]) - 1e-12 <= c[0] <= max(a[0], b[0]) + 1e-12) and (
            min(a[1], b[1]) - 1e-12 <= c[1] <= max(a[1], b[1]) + 1e-12
        )

    o1, o2, o3, o4 = orient(p, q, r), orient(p, q, s), orient(r, s, p), orient(r, s, q)
    if o1 * o2 < 0 and o3 * o4 < 0:
        return True
    return any(
        o == 0 and on_box(a, b, c)
        for o, a, b, c in ((o1, p, q, r), (o2, p, q, s), (o3, r, s, p), (o4, r, s, q))
    )


def drawing_is_plane(positions, edges) -> bool:
    """Brute force over all edge pairs: disjoint edges never meet, adjacent ones not collinear."""
    for i in range(len(edges)):
        for j in range(i + 1, len(edges)):
            (a, b), (c, d) = edges[i], edges[j]
            common = {a, b} & {c, d}
            if common:
                (m,) = common
                u = positions[a + b - m] - positions[m]
                v = positions[c + d - m] - positions[m]
                if abs(u[0] * v[1] - u[1] * v[0]) < 1e-12 and u @ v > 0:
                    return False
            elif segments_meet(positions[a], positions[b], positions[c], positions[d]):
                return False
    return True


def graph_of(lattice: Lattice) -> nx.Graph:
    g = nx.Graph()
    g.add_nodes_from(range(lattice.num_vertices))
    g.add_edges_from(map(tuple, lattice.edges.tolist()))
    return g


def interior_vertices(lattice: Lattice) -> np.ndarray:
    off = np.ones(lattice.num_vertices, dtype=bool)
    off[list(lattice.outer)] = False
    return np.flatnonzero(off)


def degrees(lattice: Lattice) -> np.ndarray:
    return np.bincount(lattice.edges.ravel(), minlength=lattice.num_vertices)


# ---------------------------------------------------------------- registry


def test_registry_has_the_required_families():
    """The brief names eleven families; each entry is a LatticeFamily under its own name."""
    assert REQUIRED <= set(LATTICE_FAMILIES)
    assert all(f.name == n and f.summary for n, f in LATTICE_FAMILIES.items())
    assert {n for n, f in LATTICE_FAMILIES.items() if f.random} == {"delaunay", "voronoi"}


def test_unknown_family_lists_the_known_names():
    """Unknown names raise an error listing the known names (STYLE.md, datasette practice)."""
    with pytest.raises(TnarenaError, match=r"unknown lattice family 'squar'.*kagome.*square"):
        build_lattice("squar", 4)


@pytest.mark.parametrize("bad", [0, -1.0, float("nan"), float("inf"), "4", True])
def test_bad_size_is_rejected(bad):
    """Width and height must be positive finite numbers (common practice for sizes)."""
    with pytest.raises(TnarenaError, match="is not a positive finite number"):
        build_lattice("square", bad)
    with pytest.raises(TnarenaError, match="lattice height .* is not a positive finite number"):
        build_lattice("square", 3, bad)


def test_bad_seed_is_rejected():
    """numpy's default_rng takes non-negative integer seeds (numpy documentation)."""
    with pytest.raises(TnarenaError, match="seed -1 is not a non-negative integer"):
        build_lattice("delaunay", 3, seed=-1)


def test_height_defaults_to_width():
    """build_lattice(name, w) is the w x w patch: (w + 1)^2 square-grid vertices (closed form)."""
    assert build_lattice("square", 3).num_vertices == 16


# ------------------------------------------------------- every family


@pytest.mark.parametrize("name", FAMILIES)
@pytest.mark.parametrize("size", SIZES)
def test_graph_is_planar_by_networkx(name, size):
    """networkx.check_planarity (general-purpose reference) accepts the graph."""
    planar, _ = nx.check_planarity(graph_of(build_lattice(name, *size, seed=1)))
    assert planar


@pytest.mark.parametrize("name", FAMILIES)
@pytest.mark.parametrize("size", SIZES)
def test_euler_formula(name, size):
    """V - E + F_inner = 1 for a connected plane graph (Euler's formula, common practice)."""
    lat = build_lattice(name, *size, seed=1)
    assert lat.num_vertices - lat.num_edges + len(lat.faces) == 1


@pytest.mark.parametrize("name", FAMILIES)
@pytest.mark.parametrize("size", SIZES)
def test_biconnected_with_simple_outer_cycle(name, size):
    """No vertex of degree < 2, networkx finds the graph biconnected, and the outer
    boundary is a simple cycle of edges (structural facts checked with networkx)."""
    lat = build_lattice(name, *size, seed=2)
    assert degrees(lat).min() >= 2
    assert nx.is_biconnected(graph_of(lat))
    outer = list(lat.outer)
    assert len(set(outer)) == len(outer) >= 3
    g = graph_of(lat)
    assert all(g.has_edge(a, b) for a, b in zip(outer, outer[1:] + outer[:1]))


@pytest.mark.parametrize("name", FAMILIES)
def test_patch_lies_in_its_rectangle(name):
    """Every vertex lies in [0, width] x [0, height] (the brief's patch convention)."""
    pos = build_lattice(name, 7, 5, seed=3).positions
    assert pos.min() >= -1e-9
    assert pos[:, 0].max() <= 7 + 1e-9 and pos[:, 1].max() <= 5 + 1e-9


@pytest.mark.parametrize("name", FAMILIES)
def test_no_two_edges_cross(name):
    """Brute-force segment intersection over all edge pairs (independent check here)."""
    lat = build_lattice(name, 4, 4, seed=4)
    assert drawing_is_plane(lat.positions, lat.edges.tolist())


@pytest.mark.parametrize("name", sorted(INTERIOR_DEGREES))
def test_interior_vertex_degrees(name):
    """Vertices off the boundary have the tiling's degrees (common practice, INTERIOR_DEGREES)."""
    lat = build_lattice(name, *BIG, seed=5)
    inside = interior_vertices(lat)
    assert inside.size > 0
    assert set(degrees(lat)[inside].tolist()) == INTERIOR_DEGREES[name]


@pytest.mark.parametrize("name", sorted(FACE_SIZES))
def test_face_sizes(name):
    """Inner faces are tiles of the tiling (common practice, see FACE_SIZES)."""
    lat = build_lattice(name, *BIG, seed=5)
    assert set(map(len, lat.faces)) == FACE_SIZES[name]


@pytest.mark.parametrize("name", sorted(EDGE_LENGTHS))
def test_edge_lengths(name):
    """Edge lengths are the closed forms in EDGE_LENGTHS (Archimedean: 1)."""
    lat = build_lattice(name, 8, 8)
    lengths = np.linalg.norm(np.diff(lat.positions[lat.edges], axis=1)[:, 0], axis=1)
    expected = np.array(sorted(EDGE_LENGTHS[name]))
    nearest = expected[np.abs(lengths[:, None] - expected[None, :]).argmin(axis=1)]
    assert np.allclose(lengths, nearest, atol=1e-9)
    assert set(nearest.tolist()) == set(expected.tolist())


@pytest.mark.parametrize("name", sorted(set(FAMILIES) - {"delaunay"}))
def test_too_small_names_a_size_that_works(name):
    """A 0.5 x 0.5 patch holds no face (every edge is longer than 0.5 or cells are
    ~1 in area); the error names a size, and that size then builds (behavioural check)."""
    with pytest.raises(TnarenaError, match="holds no complete face") as info:
        build_lattice(name, 0.5)
    side = float(re.search(r"at least ([0-9]+(?:\.[0-9]+)?)", str(info.value)).group(1))
    assert build_lattice(name, side).num_edges >= 3


# ------------------------------------------------------- square lattice


@pytest.mark.parametrize("w,h", [(3, 2), (2, 1), (5, 4)])
def test_square_counts(w, h):
    """A w x h grid has (w+1)(h+1) vertices, w(h+1) + h(w+1) edges, wh faces (closed form)."""
    lat = build_lattice("square", w, h)
    assert lat.num_vertices == (w + 1) * (h + 1)
    assert lat.num_edges == w * (h + 1) + h * (w + 1)
    assert len(lat.faces) == w * h


def test_square_vertices_sit_on_integer_points():
    """width 3, height 2 gives exactly the points (i, j), 0 <= i <= 3, 0 <= j <= 2 (brief)."""
    pos = build_lattice("square", 3, 2).positions
    assert sorted(map(tuple, pos.tolist())) == [(i, j) for i in range(4) for j in range(3)]


def test_dual_of_a_square_grid_is_the_smaller_grid():
    """The inner dual of a w x h grid is a (w-1) x (h-1) grid of the face centres (closed form)."""
    d = dual(build_lattice("square", 5, 4))
    expect = sorted((i + 0.5, j + 0.5) for i in range(5) for j in range(4))
    assert sorted(map(tuple, d.positions.tolist())) == expect
    assert d.num_edges == 4 * 4 + 3 * 5


# ------------------------------------------------------- random families


@pytest.mark.parametrize("name", ["delaunay", "voronoi"])
def test_random_family_is_reproducible(name):
    """Same seed, same lattice; numpy's default_rng is deterministic per seed (numpy docs)."""
    a, b = build_lattice(name, 6, 5, seed=11), build_lattice(name, 6, 5, seed=11)
    assert np.array_equal(a.positions, b.positions) and np.array_equal(a.edges, b.edges)


@pytest.mark.parametrize("name", ["delaunay", "voronoi"])
def test_random_family_changes_with_the_seed(name):
    """Another seed draws other points (uniform floats coincide with probability 0)."""
    a, b = build_lattice(name, 6, 5, seed=11), build_lattice(name, 6, 5, seed=12)
    assert a.positions.shape != b.positions.shape or not np.allclose(a.positions, b.positions)


def test_delaunay_has_empty_circumcircles():
    """No vertex lies strictly inside a triangle's circumcircle (the Delaunay criterion,
    common practice; in-circle determinant, Guibas & Stolfi 1985)."""
    lat = build_lattice("delaunay", 6, 6, seed=7)
    pos = lat.positions
    for face in lat.faces:
        a, b, c = (pos[v] - pos for v in face)  # each shape (V, 2), relative to every vertex p

        def cross(u, v):
            return u[:, 0] * v[:, 1] - u[:, 1] * v[:, 0]

        def sq(u):
            return (u**2).sum(axis=1)

        # > 0 exactly when p is inside the circle through a, b, c (counter-clockwise)
        det = sq(a) * cross(b, c) - sq(b) * cross(a, c) + sq(c) * cross(a, b)
        det[list(face)] = 0.0
        assert det.max() <= 1e-9


def test_delaunay_outer_boundary_is_the_rectangle():
    """The sides are sampled about 1 apart, corners included, so the convex hull is the
    rectangle and every outer vertex lies on one of its sides."""
    lat = build_lattice("delaunay", 5, 3, seed=0)
    corners = {(0.0, 0.0), (5.0, 0.0), (5.0, 3.0), (0.0, 3.0)}
    outer = lat.positions[list(lat.outer)]
    assert corners <= set(map(tuple, outer.tolist()))
    on_side = np.isclose(outer[:, 0], 0) | np.isclose(outer[:, 0], 5) | np.isclose(outer[:, 1], 0) | np.isclose(outer[:, 1], 3)
    assert on_side.all()
    assert len(lat.outer) == 2 * (5 + 3)  # sides sampled at unit spacing
    assert lat.num_vertices == 2 * (5 + 3) + 15  # boundary points + round(area) interior points


# ------------------------------------------------------- crossings


def test_reference_segment_test_sees_a_cross():
    """The brute-force reference used here detects an X and passes an L (its own sanity check)."""
    x = np.array([(0, 0), (2, 2), (0, 2), (2, 0)], float)
    assert not drawing_is_plane(x, [(0, 1), (2, 3)])
    assert drawing_is_plane(x, [(0, 1), (1, 2)])


def test_find_crossing_agrees_with_brute_force():
    """On random small drawings on a 5 x 5 grid of points (many collinear and touching
    cases), find_crossing finds a meeting pair exactly when the brute force does."""
    rng = np.random.default_rng(2024)
    agreements = Counter()
    for _ in range(600):
        n = int(rng.integers(3, 8))
        pos = rng.integers(0, 5, size=(n, 2)).astype(float)
        drawn = rng.integers(0, n, size=(int(rng.integers(2, 7)), 2))
        edges = np.unique(np.sort(drawn, axis=1), axis=0)
        edges = edges[edges[:, 0] != edges[:, 1]]
        if len(edges) < 2 or (pos[edges[:, 0]] == pos[edges[:, 1]]).all(axis=1).any():
            continue
        plane = drawing_is_plane(pos, edges.tolist())
        assert (find_crossing(pos, edges) is None) == plane
        agreements[plane] += 1
    assert agreements[True] > 50 and agreements[False] > 50


def test_self_crossing_cycle_is_rejected():
    """A 7-cycle whose edge (4, 5) cuts edge (2, 3) is not a plane drawing, although
    its face areas look valid (segment geometry; this was once accepted)."""
    pos = [(0, 0), (4, 0), (4, 4), (1, 4), (2, 5), (2, 3.5), (0, 4)]
    with pytest.raises(TnarenaError, match=r"edges \(2, 3\) and \(4, 5\) cross"):
        Lattice.from_graph("twisted", np.array(pos, float), [(i, (i + 1) % 7) for i in range(7)])


# ------------------------------------------------------- files


def test_file_round_trip(tmp_path):
    """write then read gives back the same name, positions (exactly: JSON floats are
    written with repr, Python docs), edges and faces."""
    lat = build_lattice("voronoi", 6, 5, seed=3)
    path = tmp_path / "v.json"
    write_lattice_file(lat, path)
    back = read_lattice_file(path)
    assert back.name == lat.name
    assert np.array_equal(back.positions, lat.positions)
    assert np.array_equal(back.edges, lat.edges)
    assert back.faces == lat.faces and back.outer == lat.outer


def _doc(**over):
    doc = {
        "format": "tnarena-lattice", "version": 1, "name": "quad",
        "positions": [[0, 0], [1, 0], [1, 1], [0, 1]],
        "edges": [[0, 1], [1, 2], [2, 3], [3, 0]],
    }  # fmt: skip
    doc.update(over)
    return doc


def test_file_with_a_user_graph_traces_its_faces(tmp_path):
    """A square with one diagonal has two triangular inner faces (Euler: 4 - 5 + F = 1)."""
    path = tmp_path / "g.json"
    path.write_text(json.dumps(_doc(edges=[[0, 1], [1, 2], [2, 3], [3, 0], [0, 2]])))
    lat = read_lattice_file(path)
    assert sorted(map(len, lat.faces)) == [3, 3]


def test_file_with_crossing_edges(tmp_path):
    """Both diagonals of a square cross at its centre (segment geometry)."""
    path = tmp_path / "x.json"
    path.write_text(json.dumps(_doc(edges=[[0, 1], [1, 2], [2, 3], [3, 0], [0, 2], [1, 3]])))
    with pytest.raises(TnarenaError, match=r"x\.json: edges \(0, 2\) and \(1, 3\) cross"):
        read_lattice_file(path)


def test_file_with_malformed_json(tmp_path):
    """A truncated document is not JSON; the message gives the line (Python json docs)."""
    path = tmp_path / "bad.json"
    path.write_text('{"format": "tnarena-lattice",\n "version": 1,')
    with pytest.raises(TnarenaError, match=r"bad\.json is not valid JSON .* line 2"):
        read_lattice_file(path)


def test_file_with_a_missing_key(tmp_path):
    """Every key of the format is required (our format definition)."""
    doc = _doc()
    del doc["edges"]
    path = tmp_path / "m.json"
    path.write_text(json.dumps(doc))
    with pytest.raises(TnarenaError, match="lacks the key\\(s\\) edges"):
        read_lattice_file(path)


def test_file_with_an_index_out_of_range(tmp_path):
    """Edge indices must address the four given positions (our format definition)."""
    path = tmp_path / "r.json"
    path.write_text(json.dumps(_doc(edges=[[0, 1], [1, 2], [2, 3], [3, 4]])))
    with pytest.raises(TnarenaError, match=r"edge \[3, 4\] names a vertex outside 0\.\.3"):
        read_lattice_file(path)


def test_file_with_a_wrong_format_tag(tmp_path):
    """A file tagged with another format is refused by name (our format definition)."""
    path = tmp_path / "f.json"
    path.write_text(json.dumps(_doc(format="graph")))
    with pytest.raises(TnarenaError, match="has format 'graph'"):
        read_lattice_file(path)


@pytest.mark.parametrize(
    "field,value,message",
    [
        ("positions", [[0, 0], [1, 0], [1, "a"], [0, 1]], r"position \[1, 'a'\] is not two finite"),
        ("positions", {"0": [0, 0]}, r"position list .* is not a JSON list"),
        ("edges", [[0, 1], [1, 2], [2, 3], [3, 0.5]], r"edge \[3, 0.5\] is not two integers"),
    ],
)
def test_file_with_a_bad_entry(tmp_path, field, value, message):
    """Positions are [x, y] numbers and edges [u, v] integers (our format definition)."""
    path = tmp_path / "e.json"
    path.write_text(json.dumps(_doc(**{field: value})))
    with pytest.raises(TnarenaError, match=message):
        read_lattice_file(path)
