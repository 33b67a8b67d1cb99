"""Straight-line drawings: find two edges that cross, touch or overlap.

Candidate pairs come from a uniform grid: each edge is listed in every grid
cell its bounding box meets, and a pair is tested once, in the cell holding
the lower-left corner of the overlap of the two boxes. The work grows with
the number of edges (not its square) when edges have similar lengths.
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np

_REL_TOL = 1e-9  # distances below this fraction of the median edge length count as zero
_BATCH = 1 << 18  # grid records expanded into pairs per batch


def find_crossing(positions: np.ndarray, edges: np.ndarray) -> tuple[int, int] | None:
    """First pair of edges that meet anywhere other than at a shared end vertex.

    Parameters
    ----------
    positions : ndarray, shape (V, 2), float
        Vertex coordinates.
    edges : ndarray, shape (E, 2), int
        Vertex pairs, no duplicates, no self-loops.

    Returns
    -------
    (i, j) or None
        Edge indices ``i < j`` of two edges that cross, touch (an end of one on
        the other, or two distinct vertices at one point) or overlap along a
        line; None when the drawing has none.
    """
    edges = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
    if edges.shape[0] < 2:
        return None
    ends = positions[edges]  # (E, 2 ends, 2 coords)
    lengths = np.linalg.norm(ends[:, 1] - ends[:, 0], axis=1)
    tol = _REL_TOL * max(float(np.median(lengths)), 1e-300)
    for first, second in _candidate_pairs(ends, float(np.median(lengths))):
        bad = _meet(positions, edges[first], edges[second], tol)
        if bad.any():
            k = int(np.argmax(bad))
            i, j = sorted((int(first[k]), int(second[k])))
            return i, j
    return None


def _candidate_pairs(ends: np.ndarray, typical: float) -> Iterator[tuple[np.ndarray, np.ndarray]]:
    """Yield batches (first, second) of edge indices with overlapping bounding boxes."""
    lo, hi = ends.min(axis=1), ends.max(axis=1)
    origin = lo.min(axis=0)
    extent = float((hi.max(axis=0) - origin).max())
    cell = max(typical, extent / 4096.0, 1e-300)
    c_lo = np.floor((lo - origin) / cell).astype(np.int64)
    c_hi = np.floor((hi - origin) / cell).astype(np.int64)
    span = c_hi - c_lo + 1
    counts = span[:, 0] * span[:, 1]
    owner = np.repeat(np.arange(len(ends)), counts)
    k = np.arange(owner.size) - np.repeat(np.cumsum(counts) - counts, counts)
    cells = np.stack([c_lo[owner, 0] + k % span[owner, 0], c_lo[owner, 1] + k // span[owner, 0]], 1)
    key = cells[:, 0] * (int(c_hi[:, 1].max()) + 1) + cells[:, 1]
    order = np.argsort(key, kind="stable")
    key, owner, cells = key[order], owner[order], cells[order]
    start = np.flatnonzero(np.r_[True, key[1:] != key[:-1]])
    size = np.diff(np.r_[start, key.size])
    # number of records after each one in its cell
    later = np.repeat(start + size, size) - np.arange(key.size) - 1
    rows_with_pairs = np.flatnonzero(later > 0)
    for s in range(0, rows_with_pairs.size, _BATCH):
        rows = rows_with_pairs[s : s + _BATCH]
        reps = later[rows]
        left = np.repeat(rows, reps)
        right = left + 1 + np.arange(reps.sum()) - np.repeat(np.cumsum(reps) - reps, reps)
        first, second = owner[left], owner[right]
        overlap = (lo[first] <= hi[second]).all(axis=1) & (lo[second] <= hi[first]).all(axis=1)
        corner = np.floor((np.maximum(lo[first], lo[second]) - origin) / cell).astype(np.int64)
        here = (corner == cells[left]).all(axis=1)
        keep = overlap & here
        yield first[keep], second[keep]


def _meet(positions: np.ndarray, ei: np.ndarray, ej: np.ndarray, tol: float) -> np.ndarray:
    """Mask over edge pairs, shape (K,): True where two segments meet improperly.

    ``ei``, ``ej`` : ndarray, shape (K, 2), int, the end vertices of each pair.
    """
    match = ei[:, :, None] == ej[:, None, :]  # (K, 2, 2)
    shared = match.any(axis=(1, 2))
    p, q, r, s = (positions[x] for x in (ei[:, 0], ei[:, 1], ej[:, 0], ej[:, 1]))
    side_r, side_s = _side(p, q, r, tol), _side(p, q, s, tol)
    side_p, side_q = _side(r, s, p, tol), _side(r, s, q, tol)
    proper = (side_r * side_s < 0) & (side_p * side_q < 0)
    touch = (
        ((side_r == 0) & _within(p, q, r, tol))
        | ((side_s == 0) & _within(p, q, s, tol))
        | ((side_p == 0) & _within(r, s, p, tol))
        | ((side_q == 0) & _within(r, s, q, tol))
    )
    # two edges with a common end overlap when their other ends lie on one ray from it
    i_end = match.any(axis=2).argmax(axis=1)  # which end of ei is the common vertex
    j_end = match.any(axis=1).argmax(axis=1)
    rows = np.arange(len(ei))
    common = positions[ei[rows, i_end]]
    u = positions[ei[rows, 1 - i_end]] - common
    v = positions[ej[rows, 1 - j_end]] - common
    cross = u[:, 0] * v[:, 1] - u[:, 1] * v[:, 0]
    scale = np.maximum(np.linalg.norm(u, axis=1), np.linalg.norm(v, axis=1))
    same_ray = (np.abs(cross) <= tol * scale) & ((u * v).sum(axis=1) > 0)
    return np.where(shared, same_ray, proper | touch)


def _side(p: np.ndarray, q: np.ndarray, r: np.ndarray, tol: float) -> np.ndarray:
    """Sign (-1, 0 or 1) of the distance of r from the line p -> q; 0 within tol."""
    d, w = q - p, r - p
    dist = (d[:, 0] * w[:, 1] - d[:, 1] * w[:, 0]) / np.maximum(np.linalg.norm(d, axis=1), 1e-300)
    return np.where(np.abs(dist) <= tol, 0.0, np.sign(dist))


def _within(p: np.ndarray, q: np.ndarray, r: np.ndarray, tol: float) -> np.ndarray:
    """Whether r (on the line p -> q) projects into the closed segment, tol slack."""
    d = q - p
    length = np.maximum(np.linalg.norm(d, axis=1), 1e-300)
    t = ((r - p) * d).sum(axis=1) / length
    return (t >= -tol) & (t <= length + tol)
