"""Cut a patch out of a larger drawing: clip to a rectangle, keep a clean core.

A patch is a pair ``(positions, edges)``: positions shape (V, 2) float,
edges shape (E, 2) int. Every function returns a new patch with vertices
renumbered from 0.
"""

from __future__ import annotations

import networkx as nx
import numpy as np

from tnarena.errors import TnarenaError
from tnarena.lattices.core import Lattice

CLIP_TOL = 1e-9  # vertices this far outside the rectangle still count as inside


def in_rectangle(positions: np.ndarray, x0: float, y0: float, x1: float, y1: float) -> np.ndarray:
    """Mask, shape (V,), of the points in [x0, x1] x [y0, y1] with CLIP_TOL slack."""
    x, y = positions[:, 0], positions[:, 1]
    return (x >= x0 - CLIP_TOL) & (x <= x1 + CLIP_TOL) & (y >= y0 - CLIP_TOL) & (y <= y1 + CLIP_TOL)


def clip_to_rectangle(
    positions: np.ndarray, edges: np.ndarray, width: float, height: float
) -> tuple[np.ndarray, np.ndarray]:
    """Keep the vertices in [0, width] x [0, height] (CLIP_TOL slack) and the edges among them."""
    return keep_vertices(positions, edges, in_rectangle(positions, 0.0, 0.0, width, height))


def keep_vertices(
    positions: np.ndarray, edges: np.ndarray, keep: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Sub-patch induced by the vertices where ``keep`` (shape (V,), bool) is True."""
    new_index = np.cumsum(keep) - 1
    edges = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
    both = keep[edges].all(axis=1) if edges.size else np.zeros(0, dtype=bool)
    return positions[keep], new_index[edges[both]].reshape(-1, 2)


def largest_block(positions: np.ndarray, edges: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The largest biconnected component (most vertices; ties: lowest vertex index).

    A biconnected planar drawing has no vertex of degree 1 and every face,
    the outer one included, bounded by a simple cycle. Returns an empty patch
    when the drawing has no cycle.
    """
    graph = nx.Graph()
    graph.add_edges_from(map(tuple, edges.tolist()))
    blocks = [b for b in nx.biconnected_components(graph) if len(b) >= 3]
    keep = np.zeros(len(positions), dtype=bool)
    if blocks:
        best = max(blocks, key=lambda b: (len(b), -min(b)))
        keep[list(best)] = True
    return keep_vertices(positions, edges, keep)


def reading_order(positions: np.ndarray, edges: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Renumber vertices row by row: by y, then x (both rounded to 1e-9)."""
    rounded = np.round(positions, 9)
    order = np.lexsort((rounded[:, 0], rounded[:, 1]))
    new_index = np.empty(len(order), dtype=np.int64)
    new_index[order] = np.arange(len(order))
    return positions[order], new_index[edges].reshape(-1, 2)


def finish_patch(
    name: str,
    positions: np.ndarray,
    edges: np.ndarray,
    width: float,
    height: float,
    min_side: float,
) -> Lattice:
    """Clip to the rectangle, keep the largest block, renumber, and trace faces.

    Raises TnarenaError naming ``min_side`` when no face survives.
    """
    positions, edges = reading_order(*clip_to_rectangle(positions, edges, width, height))
    positions, edges = largest_block(positions, edges)
    if edges.shape[0] == 0:
        raise TnarenaError(
            f"a {width:g} x {height:g} patch of the {name} lattice holds no complete face; "
            f"use a width and height of at least {min_side:g}."
        )
    positions, edges = reading_order(positions, edges)
    return Lattice.from_graph(name, positions, edges)
