"""The periodic Archimedean tilings with edge length 1.

Each tiling is a unit cell (lattice vectors and basis vertices); edges join
the vertices at distance 1. A patch keeps the vertices inside the rectangle
[0, width] x [0, height] and then its largest biconnected block. Each cell
puts a small face at the lower left corner, so a 2 x 2 patch already holds one.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree

from tnarena.lattices.clean import finish_patch, in_rectangle
from tnarena.lattices.core import Lattice

_EDGE_TOL = 1e-6  # pairs within 1 + this are edges (next distance in every tiling is >= sqrt 2)
_S3 = np.sqrt(3.0)


@dataclass(frozen=True)
class UnitCell:
    """A periodic tiling.

    Attributes
    ----------
    vectors : ndarray, shape (2, 2)
        Lattice vectors, one per row (edge-length units).
    basis : ndarray, shape (B, 2)
        Vertex positions inside one cell.
    min_side : float
        Smallest width and height known to hold a face.
    """

    vectors: np.ndarray
    basis: np.ndarray
    min_side: float


def _cell(vectors, basis, min_side: float) -> UnitCell:
    return UnitCell(np.asarray(vectors, float), np.asarray(basis, float), min_side)


def _triangle(center, first_angle_deg: float) -> list[tuple[float, float]]:
    """Corners of the unit-side equilateral triangle about ``center``."""
    r = 1.0 / _S3
    angles = np.deg2rad(first_angle_deg + np.array([0.0, 120.0, 240.0]))
    return [(center[0] + r * np.cos(t), center[1] + r * np.sin(t)) for t in angles]


_A488 = 1.0 + np.sqrt(2.0)  # 4.8.8 lattice constant
_H = np.sqrt(0.5)  # half-diagonal of the unit square
_A31212 = 2.0 + _S3  # 3.12.12 lattice constant
_C1 = (0.5, 0.5 + 0.5 / _S3)  # centre of the triangle (0, 1/2), (1, 1/2), (1/2, 1/2 + sqrt3/2)

CELLS: dict[str, UnitCell] = {
    "square": _cell([(1, 0), (0, 1)], [(0, 0)], 1.0),
    "triangular": _cell([(1, 0), (0.5, _S3 / 2)], [(0, 0)], 1.0),
    "hexagonal": _cell([(_S3, 0), (_S3 / 2, 1.5)], [(_S3 / 2, 0), (0, 0.5)], 2.0),
    "kagome": _cell([(2, 0), (1, _S3)], [(0, 0), (1, 0), (0.5, _S3 / 2)], 1.0),
    "truncated_square": _cell(
        [(_A488, 0), (0, _A488)],
        [(_H, 0), (2 * _H, _H), (_H, 2 * _H), (0, _H)],
        1.5,
    ),
    "truncated_hexagonal": _cell(
        [(_A31212, 0), (_A31212 / 2, _A31212 * _S3 / 2)],
        _triangle(_C1, 90.0) + _triangle((_C1[0], _C1[1] + _A31212 / _S3), 270.0),
        1.5,
    ),
}


def tiling_points(cell: UnitCell, x0: float, y0: float, x1: float, y1: float) -> np.ndarray:
    """Every vertex of the tiling in [x0, x1] x [y0, y1], shape (V, 2)."""
    corners = np.array([(x0, y0), (x1, y0), (x0, y1), (x1, y1)], float)
    offsets = corners[:, None, :] - cell.basis[None, :, :]
    coeffs = np.linalg.solve(cell.vectors.T, offsets.reshape(-1, 2).T).T
    lo = np.floor(coeffs.min(axis=0)).astype(int) - 1
    hi = np.ceil(coeffs.max(axis=0)).astype(int) + 1
    n1, n2 = np.meshgrid(np.arange(lo[0], hi[0] + 1), np.arange(lo[1], hi[1] + 1), indexing="ij")
    shifts = np.stack([n1.ravel(), n2.ravel()], 1) @ cell.vectors
    pts = (shifts[:, None, :] + cell.basis[None, :, :]).reshape(-1, 2)
    return pts[in_rectangle(pts, x0, y0, x1, y1)]


def unit_edges(points: np.ndarray) -> np.ndarray:
    """Pairs of points at distance 1 (within _EDGE_TOL), shape (E, 2), sorted rows."""
    pairs = cKDTree(points).query_pairs(1.0 + _EDGE_TOL, output_type="ndarray")
    return np.sort(pairs.astype(np.int64).reshape(-1, 2), axis=1)


def tiling_patch(
    cell: UnitCell, x0: float, y0: float, x1: float, y1: float
) -> tuple[np.ndarray, np.ndarray]:
    """Vertices (V, 2) and unit edges (E, 2) of the tiling in a rectangle, not cleaned."""
    points = tiling_points(cell, x0, y0, x1, y1)
    return points, unit_edges(points)


def build_tiling(name: str, width: float, height: float) -> Lattice:
    """Patch of the named tiling covering [0, width] x [0, height]."""
    cell = CELLS[name]
    positions, edges = tiling_patch(cell, 0.0, 0.0, width, height)
    return finish_patch(name, positions, edges, width, height, cell.min_side)


def square(width: float, height: float, seed: int = 0) -> Lattice:
    """Square lattice: vertices at the integer points (i, j), 0 <= i <= width, 0 <= j <= height."""
    return build_tiling("square", width, height)


def triangular(width: float, height: float, seed: int = 0) -> Lattice:
    """Triangular lattice (3.3.3.3.3.3), a row of vertices along y = 0 from the origin."""
    return build_tiling("triangular", width, height)


def hexagonal(width: float, height: float, seed: int = 0) -> Lattice:
    """Honeycomb (6.6.6), pointy-top hexagons, one spanning [0, sqrt3] x [0, 2]."""
    return build_tiling("hexagonal", width, height)


def kagome(width: float, height: float, seed: int = 0) -> Lattice:
    """Kagome lattice (3.6.3.6), a triangle with corners (0, 0), (1, 0), (1/2, sqrt3/2)."""
    return build_tiling("kagome", width, height)


def truncated_square(width: float, height: float, seed: int = 0) -> Lattice:
    """Truncated square tiling (4.8.8), a diamond-shaped square at the lower left."""
    return build_tiling("truncated_square", width, height)


def truncated_hexagonal(width: float, height: float, seed: int = 0) -> Lattice:
    """Truncated hexagonal tiling (3.12.12): dodecagons with flat bottoms on y = 0."""
    return build_tiling("truncated_hexagonal", width, height)
