"""Planar embedded graphs: the :class:`Lattice` type and face tracing."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from tnarena.errors import TnarenaError
from tnarena.lattices.geometry import find_crossing


@dataclass(frozen=True, eq=False)
class Lattice:
    """A connected planar graph drawn with straight edges.

    Attributes
    ----------
    name : str
        Family name, e.g. ``"square"``.
    positions : ndarray, shape (V, 2), float
        Vertex coordinates (lattice spacing units).
    edges : ndarray, shape (E, 2), int
        Vertex pairs ``(u, v)`` with ``u < v``, sorted lexicographically.
    faces : tuple of tuple of int
        Inner faces, each the cycle of its vertices in counter-clockwise order.
    outer : tuple of int
        The boundary of the outer face, counter-clockwise.
    """

    name: str
    positions: np.ndarray
    edges: np.ndarray
    faces: tuple[tuple[int, ...], ...]
    outer: tuple[int, ...]
    _edge_index: dict[tuple[int, int], int] = field(default_factory=dict, repr=False)

    def __post_init__(self) -> None:
        index = {(int(u), int(v)): i for i, (u, v) in enumerate(self.edges)}
        object.__setattr__(self, "_edge_index", index)

    @classmethod
    def from_graph(cls, name: str, positions: np.ndarray, edges: np.ndarray) -> "Lattice":
        """Build a lattice from positions and edges, tracing faces from the drawing.

        Raises TnarenaError when an edge names a missing vertex, a position is
        not finite, the graph is not connected, or the straight-line drawing is
        not planar (edges cross, touch or overlap).
        """
        positions = np.asarray(positions, dtype=float).reshape(-1, 2)
        edges = np.sort(np.asarray(edges, dtype=int).reshape(-1, 2), axis=1)
        edges = np.unique(edges, axis=0)
        _check_drawing(positions, edges)
        faces, outer = trace_faces(positions, edges)
        return cls(name=name, positions=positions, edges=edges, faces=faces, outer=outer)

    @property
    def num_vertices(self) -> int:
        return self.positions.shape[0]

    @property
    def num_edges(self) -> int:
        return self.edges.shape[0]

    def edge_id(self, u: int, v: int) -> int:
        """Index of the edge joining u and v (either order); KeyError if absent."""
        return self._edge_index[(u, v) if u < v else (v, u)]

    def face_edges(self, face: tuple[int, ...]) -> list[int]:
        """Edge indices around a face (a cycle of vertices)."""
        return [self.edge_id(a, b) for a, b in zip(face, face[1:] + face[:1])]


def trace_faces(
    positions: np.ndarray, edges: np.ndarray
) -> tuple[tuple[tuple[int, ...], ...], tuple[int, ...]]:
    """Faces of a connected straight-line planar drawing.

    Each vertex's neighbours are sorted by angle (the rotation system of the
    drawing); faces are the orbits of half-edges under "next edge clockwise at
    the head". Euler's formula V - E + F = 2 is then checked: it fails exactly
    when the rotation system is not planar, i.e. when drawn edges cross.

    Returns (inner faces counter-clockwise, outer boundary counter-clockwise).
    """
    nv = positions.shape[0]
    if nv == 0 or edges.shape[0] == 0:
        raise TnarenaError("a lattice needs at least one edge; the graph given has none.")
    nbrs: list[list[int]] = [[] for _ in range(nv)]
    for u, v in edges:
        nbrs[u].append(int(v))
        nbrs[v].append(int(u))
    if any(not nb for nb in nbrs):
        lone = next(i for i, nb in enumerate(nbrs) if not nb)
        raise TnarenaError(f"vertex {lone} has no edges; a lattice must be one connected graph.")
    order: list[list[int]] = []
    rank: list[dict[int, int]] = []
    for v in range(nv):
        d = positions[nbrs[v]] - positions[v]
        srt = [nbrs[v][i] for i in np.argsort(np.arctan2(d[:, 1], d[:, 0]), kind="stable")]
        order.append(srt)
        rank.append({w: i for i, w in enumerate(srt)})
    seen: set[tuple[int, int]] = set()
    cycles: list[tuple[int, ...]] = []
    for u in range(nv):
        for v in order[u]:
            if (u, v) in seen:
                continue
            cycle = []
            a, b = u, v
            while (a, b) not in seen:
                seen.add((a, b))
                cycle.append(a)
                # at b, turn to the neighbour just clockwise of a: a face on the left
                nb = order[b]
                c = nb[(rank[b][a] - 1) % len(nb)]
                a, b = b, c
            cycles.append(tuple(cycle))
    n_components = _count_components(nv, nbrs)
    if n_components != 1:
        raise TnarenaError(
            f"the lattice graph has {n_components} connected pieces; give one connected graph."
        )
    if nv - edges.shape[0] + len(cycles) != 2:
        raise TnarenaError(
            "the straight-line drawing of the lattice is not planar (edges cross, or overlap); "
            "move the vertices so that edges meet only at their ends."
        )
    areas = np.array([_signed_area(positions[list(c)]) for c in cycles])
    outer_i = int(np.argmin(areas))  # the outer face is traced clockwise: negative area
    inner = tuple(c for i, c in enumerate(cycles) if i != outer_i)
    inner_areas = np.delete(areas, outer_i)
    scale = max(abs(areas[outer_i]), 1e-300)
    if (inner_areas <= 0).any() or abs(inner_areas.sum() + areas[outer_i]) > 1e-9 * scale:
        raise TnarenaError(
            "the straight-line drawing of the lattice is not planar (faces overlap); "
            "move the vertices so that edges meet only at their ends."
        )
    outer = tuple(reversed(cycles[outer_i]))
    return inner, outer


def _check_drawing(positions: np.ndarray, edges: np.ndarray) -> None:
    """Raise TnarenaError unless edges name existing vertices and are drawn without crossings."""
    nv = positions.shape[0]
    if not np.isfinite(positions).all():
        bad = int(np.flatnonzero(~np.isfinite(positions).all(axis=1))[0])
        raise TnarenaError(f"vertex {bad} has a non-finite position; give finite coordinates.")
    if edges.size and (edges.min() < 0 or edges.max() >= nv):
        bad = int(np.flatnonzero(((edges < 0) | (edges >= nv)).any(axis=1))[0])
        u, v = edges[bad]
        raise TnarenaError(
            f"edge ({u}, {v}) names a vertex outside 0..{nv - 1}; use indices of given positions."
        )
    if edges.size and (edges[:, 0] == edges[:, 1]).any():
        raise TnarenaError("a lattice edge joins a vertex to itself; remove self-loops.")
    if edges.size:
        ends = positions[edges]
        short = np.flatnonzero((ends[:, 0] == ends[:, 1]).all(axis=1))
        if short.size:
            u, v = edges[short[0]]
            raise TnarenaError(
                f"edge ({u}, {v}) joins two vertices drawn at the same point; move one of them."
            )
    pair = find_crossing(positions, edges)
    if pair is not None:
        (a, b), (c, d) = edges[pair[0]], edges[pair[1]]
        raise TnarenaError(
            f"edges ({a}, {b}) and ({c}, {d}) cross, touch or overlap in the straight-line "
            "drawing; move the vertices so that edges meet only at their ends."
        )


def _signed_area(pts: np.ndarray) -> float:
    x, y = pts[:, 0], pts[:, 1]
    return 0.5 * float(np.dot(x, np.roll(y, -1)) - np.dot(np.roll(x, -1), y))


def _count_components(nv: int, nbrs: list[list[int]]) -> int:
    seen = np.zeros(nv, dtype=bool)
    count = 0
    for s in range(nv):
        if seen[s]:
            continue
        count += 1
        stack = [s]
        seen[s] = True
        while stack:
            v = stack.pop()
            for w in nbrs[v]:
                if not seen[w]:
                    seen[w] = True
                    stack.append(w)
    return count
