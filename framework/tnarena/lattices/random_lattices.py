"""Random lattices: Delaunay triangulations of random points and their Voronoi duals.

Points are uniform, one per unit area on average (the count is the area
rounded), drawn by ``numpy.random.default_rng(seed)``: the same seed gives
the same lattice on every machine.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import Delaunay

from tnarena.lattices.clean import finish_patch, reading_order
from tnarena.lattices.core import Lattice
from tnarena.lattices.duals import dual_patch

# points are drawn this far beyond the rectangle, so the cells it cuts are true cells
VORONOI_MARGIN = 3.0
VORONOI_MIN_SIDE = 4.0  # every seed tried so far holds a cell at this size


def random_points(x0: float, y0: float, x1: float, y1: float, seed: int) -> np.ndarray:
    """``round(area)`` uniform points in [x0, x1] x [y0, y1], shape (N, 2)."""
    rng = np.random.default_rng(seed)
    count = int(round((x1 - x0) * (y1 - y0)))
    return np.array([x0, y0]) + rng.random((count, 2)) * np.array([x1 - x0, y1 - y0])


def triangulation(points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Delaunay triangulation (scipy / Qhull) of the points.

    Returns
    -------
    positions : ndarray, shape (V, 2)
        The points used by some triangle (Qhull may leave out duplicates).
    triangles : ndarray, shape (T, 3), int
        Vertex indices into ``positions``, counter-clockwise.
    """
    tri = Delaunay(points).simplices
    used = np.unique(tri)
    new_index = np.full(len(points), -1, dtype=np.int64)
    new_index[used] = np.arange(len(used))
    positions, tri = points[used], new_index[tri]
    u, v = positions[tri[:, 1]] - positions[tri[:, 0]], positions[tri[:, 2]] - positions[tri[:, 0]]
    clockwise = u[:, 0] * v[:, 1] - u[:, 1] * v[:, 0] < 0
    tri[clockwise] = tri[clockwise][:, ::-1]
    return positions, tri


def triangle_edges(triangles: np.ndarray) -> np.ndarray:
    """The distinct sides of the triangles, shape (E, 2), rows sorted."""
    sides = np.concatenate([triangles[:, [0, 1]], triangles[:, [1, 2]], triangles[:, [2, 0]]])
    return np.unique(np.sort(sides, axis=1), axis=0)


def circumcenters(corners: np.ndarray) -> np.ndarray:
    """Circumcentres of triangles, corners shape (T, 3, 2) -> shape (T, 2)."""
    a = corners[:, 0]
    b, c = corners[:, 1] - a, corners[:, 2] - a
    d = 2.0 * (b[:, 0] * c[:, 1] - b[:, 1] * c[:, 0])
    bb, cc = (b**2).sum(axis=1), (c**2).sum(axis=1)
    ux = (c[:, 1] * bb - b[:, 1] * cc) / d
    uy = (b[:, 0] * cc - c[:, 0] * bb) / d
    return a + np.stack([ux, uy], axis=1)


def boundary_points(width: float, height: float) -> np.ndarray:
    """Points spaced about 1 apart along the rectangle's sides, corners included, shape (B, 2)."""
    nx_, ny_ = max(1, int(round(width))), max(1, int(round(height)))
    xs, ys = np.linspace(0.0, width, nx_ + 1), np.linspace(0.0, height, ny_ + 1)
    sides = [
        np.stack([xs, np.zeros_like(xs)], 1),
        np.stack([xs, np.full_like(xs, height)], 1),
        np.stack([np.zeros_like(ys[1:-1]), ys[1:-1]], 1),
        np.stack([np.full_like(ys[1:-1], width), ys[1:-1]], 1),
    ]
    return np.concatenate(sides)


def delaunay(width: float, height: float, seed: int = 0) -> Lattice:
    """Delaunay triangulation of random points in the rectangle, with its sides sampled.

    ``round(width * height)`` uniform points inside, plus points spaced about
    1 apart along the four sides, so the outer boundary is the rectangle
    itself with vertices along every side (a planar code needs them there).
    """
    points = np.concatenate([boundary_points(width, height), random_points(0.0, 0.0, width, height, seed)])
    positions, triangles = triangulation(points)
    positions, edges = reading_order(positions, triangle_edges(triangles))
    return Lattice.from_graph("delaunay", positions, edges)


def voronoi(width: float, height: float, seed: int = 0) -> Lattice:
    """Voronoi diagram of random points, clipped to the rectangle.

    Points are drawn at density 1 over the rectangle grown by VORONOI_MARGIN on
    every side; the diagram's vertices are the circumcentres of their Delaunay
    triangles and its edges join adjacent triangles. The patch keeps the
    vertices in [0, width] x [0, height], then its largest biconnected block.
    """
    m = VORONOI_MARGIN
    points = random_points(-m, -m, width + m, height + m, seed)
    positions, triangles = triangulation(points)
    primal = Lattice.from_graph("delaunay", positions, triangle_edges(triangles))
    centers = circumcenters(np.array([primal.positions[list(f)] for f in primal.faces]))
    centers, edges = dual_patch(primal, centers)
    return finish_patch("voronoi", centers, edges, width, height, VORONOI_MIN_SIDE)
