"""Cutting a layout into columns and row cells along a sweep direction.

Positions are turned so that the sweep runs along +t; s is the coordinate
across it. Columns are bins in t, rows bins in s (one grid per connected
piece), placed so that every bond joins cells whose column and row each
differ by at most one: a column then only talks to its neighbours, and
inside a column a cell only to the cells just above and below. Bins are
either uniform (as wide as the longest bond's extent, or a width the user
gives) or greedy (each edge as early as the bonds allow); the plan compares
the candidates. Depends on the structure alone (plan time).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tnarena.errors import TnarenaError
from tnarena.network import NetworkStructure

#: Unit vectors (along, across) of the sweep for each allowed direction, degrees.
DIRECTIONS = {0: ((1, 0), (0, 1)), 90: ((0, 1), (-1, 0)), 180: ((-1, 0), (0, -1)), 270: ((0, -1), (1, 0))}

#: Coordinates closer than this (relative to the layout's size) count as equal.
TIE = 1e-9

#: Nodes this close (in bins) below a bin edge are counted in the bin above (rounding).
EDGE_SLACK = 1e-9

#: Relative growth of a bin that rounding made a hair too small (tried a few times).
GROWTH = 1e-6


@dataclass(frozen=True)
class Grid:
    """Where every node of one piece sits.

    nodes : tuple of int, the piece's node ids
    column, row : ndarray, shape (N,), int
        Cell of each node of the structure (-1 for nodes outside the piece);
        columns count from 0 in the sweep direction, rows from 0 across it.
    width, height : float
        Bin size in position units (uniform bins), or the widest bin (greedy bins).
    """

    nodes: tuple[int, ...]
    column: np.ndarray
    row: np.ndarray
    width: float
    height: float


def project(positions: np.ndarray, direction: int) -> tuple[np.ndarray, np.ndarray]:
    """Coordinates (t along the sweep, s across it) of positions, shape (N, 2) -> two (N,)."""
    (ux, uy), (wx, wy) = DIRECTIONS[direction]
    pos = np.asarray(positions, dtype=float).reshape(-1, 2)
    return pos[:, 0] * ux + pos[:, 1] * uy, pos[:, 0] * wx + pos[:, 1] * wy


def piece_bonds(structure: NetworkStructure, nodes: list[int]) -> np.ndarray:
    """Bonds (B', 2) with an end in ``nodes`` (a connected piece holds both ends)."""
    inside = np.zeros(structure.num_nodes, dtype=bool)
    inside[list(nodes)] = True
    bonds = np.asarray(structure.bonds, dtype=np.int64).reshape(-1, 2)
    return bonds[inside[bonds[:, 0]]] if bonds.size else bonds


def least_width(structure: NetworkStructure, nodes: list[int], direction: int) -> float:
    """Longest extent of a bond of the piece along the direction: the narrowest column allowed."""
    t, _ = project(structure.positions, direction)
    bonds = piece_bonds(structure, nodes)
    return float(np.abs(t[bonds[:, 0]] - t[bonds[:, 1]]).max()) if len(bonds) else 0.0


def candidate_grids(structure: NetworkStructure, nodes: list[int], direction: int, width: float) -> list[Grid]:
    """The ways of cutting one connected piece that the plan compares (distinct ones only).

    width : float
        Column width in position units, or 0 for automatic. Automatic tries
        both uniform columns of the least allowed width (the longest bond's
        extent along the direction) and greedy edges, each placed as early as
        the bonds allow (every bond crossing at most one edge: the most
        columns). Rows are tried both ways too, across the direction. In every
        grid each bond joins cells whose column and row differ by at most one.
    """
    t, s = project(structure.positions, direction)
    bonds = piece_bonds(structure, nodes)
    idx = np.asarray(nodes, dtype=np.int64)
    need = least_width(structure, nodes, direction)
    if width and width < need * (1 - 1e-12):
        raise TnarenaError(
            f"strategy 'columns' parameter 'width' = {width:g} is narrower than the longest bond along "
            f"direction {direction} ({need:.6g}), so a bond would skip a column; give at least "
            f"{need:.6g}, or 0 for automatic."
        )
    if width:
        columns = [_uniform_bins(t, idx, bonds, float(width))]
    else:
        columns = [_greedy_bins(t, idx, bonds), _uniform_bins(t, idx, bonds, need or 1.0)]
    across = float(np.abs(s[bonds[:, 0]] - s[bonds[:, 1]]).max()) if len(bonds) else 0.0
    rows = [_greedy_bins(s, idx, bonds), _uniform_bins(s, idx, bonds, across or 1.0)]
    grids: list[Grid] = []
    for column, w in columns:
        for row, h in rows:
            if not any(_same(g.column, column, idx) and _same(g.row, row, idx) for g in grids):
                grids.append(Grid(tuple(int(v) for v in idx), column, row, w, h))
    return grids


def _same(a: np.ndarray, b: np.ndarray, idx: np.ndarray) -> bool:
    """Whether two binnings of the piece's nodes are the same partition (same bin numbers)."""
    return bool(np.array_equal(a[idx], b[idx]))


def _levels(x: np.ndarray, idx: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distinct coordinates of the piece (values within TIE of each other merged), and each node's level."""
    values = x[idx]
    order = np.argsort(values, kind="stable")
    gaps = np.diff(values[order]) > TIE * max(1.0, float(np.abs(values).max(initial=0.0)))
    level_sorted = np.concatenate([[0], np.cumsum(gaps)]).astype(np.int64) if values.size else values
    level = np.full(x.shape[0], -1, dtype=np.int64)
    level[idx[order]] = level_sorted
    starts = values[order][np.concatenate([[True], gaps])] if values.size else values
    return starts, level


def _greedy_bins(x: np.ndarray, idx: np.ndarray, bonds: np.ndarray) -> tuple[np.ndarray, float]:
    """Bin edges as early as possible with no bond crossing two edges; (bin of each node, widest bin)."""
    starts, level = _levels(x, idx)
    n = starts.size
    reach = np.arange(n)  # reach[j]: highest level a bond crossing the edge before level j gets to
    if len(bonds):
        lo = np.minimum(level[bonds[:, 0]], level[bonds[:, 1]])
        hi = np.maximum(level[bonds[:, 0]], level[bonds[:, 1]])
        for a, b in zip(lo.tolist(), hi.tolist()):
            reach[a + 1:b + 1] = np.maximum(reach[a + 1:b + 1], b)
    edges, j = [], 1
    while j < n:
        edges.append(j)
        j = max(j + 1, int(reach[j]) + 1)
    out = np.full(x.shape[0], -1, dtype=np.int64)
    out[idx] = np.searchsorted(np.asarray(edges, dtype=np.int64), level[idx], side="right")
    bounds = np.concatenate([[starts[0]], starts[edges], [starts[-1]]]) if n else np.zeros(2)
    return out, float(np.diff(bounds).max(initial=0.0)) or 1.0


def _uniform_bins(x: np.ndarray, idx: np.ndarray, bonds: np.ndarray, step: float) -> tuple[np.ndarray, float]:
    """Bins of width ``step`` from the lowest node such that every bond spans at most one bin edge."""
    out = np.full(x.shape[0], -1, dtype=np.int64)
    lo = float(x[idx].min()) if idx.size else 0.0
    for _ in range(8):
        out[idx] = np.floor((x[idx] - lo) / step + EDGE_SLACK).astype(np.int64)
        if not len(bonds) or np.abs(out[bonds[:, 0]] - out[bonds[:, 1]]).max() <= 1:
            return out, step
        step *= 1 + GROWTH
    raise RuntimeError("strategy 'columns': could not bin the layout so that bonds join adjacent cells")
