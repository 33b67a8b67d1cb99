"""Dual lattices: one vertex per inner face, one edge per edge two inner faces share.

The periodic duals (Laves tilings) are cut from the dual of a larger primal
patch, scaled so that their shortest edge has length 1, and shifted so that
a vertex of highest degree (the centre of a largest primal face) sits at the
origin.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tnarena.errors import TnarenaError
from tnarena.lattices.clean import finish_patch, largest_block
from tnarena.lattices.core import Lattice
from tnarena.lattices.tilings import CELLS, tiling_patch

_S3 = np.sqrt(3.0)


def dual_patch(
    lattice: Lattice, centers: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """Dual graph of the inner faces, uncleaned.

    Parameters
    ----------
    lattice : Lattice
        Primal patch.
    centers : ndarray, shape (F, 2), optional
        Position of each inner face's dual vertex; default the mean of its
        vertices (the centre of a regular polygon).

    Returns
    -------
    positions : ndarray, shape (F, 2)
    edges : ndarray, shape (D, 2), int
        One per primal edge with an inner face on both sides.
    """
    if centers is None:
        centers = np.array([lattice.positions[list(f)].mean(axis=0) for f in lattice.faces])
    edges, _ = face_adjacency(lattice)
    return np.asarray(centers, float).reshape(-1, 2), edges


def face_adjacency(lattice: Lattice) -> tuple[np.ndarray, np.ndarray]:
    """Pairs of inner faces sharing an edge.

    Returns
    -------
    pairs : ndarray, shape (D, 2), int
        Face indices into ``lattice.faces``, rows sorted.
    shared : ndarray, shape (D,), int
        Index of the primal edge each pair shares.
    """
    face_of_edge = np.full((lattice.num_edges, 2), -1, dtype=np.int64)
    filled = np.zeros(lattice.num_edges, dtype=np.int64)
    for f, face in enumerate(lattice.faces):
        for e in lattice.face_edges(face):
            face_of_edge[e, min(filled[e], 1)] = f
            filled[e] += 1
    shared = np.flatnonzero(filled == 2)
    return np.sort(face_of_edge[shared], axis=1), shared


def dual(
    lattice: Lattice, centers: np.ndarray | None = None, *, name: str | None = None
) -> Lattice:
    """Dual lattice of a patch (its largest biconnected block), see :func:`dual_patch`.

    Raises TnarenaError when the patch has no vertex inside, hence no dual face.
    """
    positions, edges = largest_block(*dual_patch(lattice, centers))
    if edges.shape[0] == 0:
        raise TnarenaError(
            f"the {lattice.name} patch has no vertex off its boundary, so its dual has no face; "
            "use a larger patch."
        )
    return Lattice.from_graph(name or f"dual of {lattice.name}", positions, edges)


@dataclass(frozen=True)
class DualTiling:
    """A Laves tiling as the dual of a periodic tiling.

    Attributes
    ----------
    primal : str
        Key of :data:`tnarena.lattices.tilings.CELLS`.
    short_edge : float
        Length of the shortest dual edge in primal units (inradius sum of the
        two smallest adjacent faces); dual positions are divided by it.
    min_side : float
        Smallest width and height known to hold a face.
    """

    primal: str
    short_edge: float
    min_side: float


LAVES: dict[str, DualTiling] = {
    # triangle inradius 1/(2 sqrt3) + hexagon inradius sqrt3/2
    "rhombille": DualTiling("kagome", 2.0 / _S3, 1.5),
    # square inradius 1/2 + octagon inradius (1 + sqrt2)/2
    "tetrakis_square": DualTiling("truncated_square", 1.0 + np.sqrt(0.5), 1.5),
    # triangle inradius 1/(2 sqrt3) + dodecagon inradius (2 + sqrt3)/2
    "triakis_triangular": DualTiling("truncated_hexagonal", (2.0 + _S3) / _S3, 1.5),
}


def build_laves(name: str, width: float, height: float) -> Lattice:
    """Patch of the named Laves tiling covering [0, width] x [0, height]."""
    spec = LAVES[name]
    cell = CELLS[spec.primal]
    margin = 2.0 * float(np.linalg.norm(cell.vectors, axis=1).sum())
    x1, y1 = width * spec.short_edge + margin, height * spec.short_edge + margin
    primal_patch = largest_block(*tiling_patch(cell, -margin, -margin, x1, y1))
    primal = Lattice.from_graph(spec.primal, *primal_patch)
    centers, edges = dual_patch(primal)
    sizes = np.array([len(f) for f in primal.faces])
    biggest = np.flatnonzero(sizes == sizes.max())
    anchor = centers[biggest[np.argmin(np.linalg.norm(centers[biggest], axis=1))]]
    positions = (centers - anchor) / spec.short_edge
    return finish_patch(name, positions, edges, width, height, spec.min_side)


def rhombille(width: float, height: float, seed: int = 0) -> Lattice:
    """Rhombille tiling (dual of kagome): 60-degree rhombi of side 1, a degree-6 vertex at 0."""
    return build_laves("rhombille", width, height)


def tetrakis_square(width: float, height: float, seed: int = 0) -> Lattice:
    """Tetrakis square tiling (dual of 4.8.8): squares of side sqrt2 cut by both diagonals."""
    return build_laves("tetrakis_square", width, height)


def triakis_triangular(width: float, height: float, seed: int = 0) -> Lattice:
    """Triakis triangular tiling (dual of 3.12.12): triangles of side sqrt3 cut at their centres."""
    return build_laves("triakis_triangular", width, height)
