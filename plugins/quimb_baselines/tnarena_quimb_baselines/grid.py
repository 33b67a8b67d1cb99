"""Unit cells of the square lattice: which grid site each node of a network joins.

The square lattice of tnarena's ``square`` family has its vertices at integer
points, so a surface code on it has its qubits on edge midpoints (one
coordinate an integer, the other an integer plus 1/2) and its generators at
vertices and face centres (boundary generators at the centroid of the qubits
they still touch). The unit cell ``(floor x, floor y)`` then holds the vertex
at its lower left, the edges to its right and above, and the face up and to
the right: a qubit goes to the cell of its floored position, and a generator
to the cell nearest its floored position from which every qubit it touches
is in the same cell or a nearest-neighbour cell. A qubit off the edge
midpoints, or a bond that would join cells that are not neighbours, means
the structure is not a square-grid layout, and it is refused. (Flooring
alone would let some other lattices through, hexagonal at d = 3 under bit
flip for one, as a coarse-grained grid; the midpoint check keeps the
baseline to the square lattice it is meant for.)
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tnarena.errors import TnarenaError
from tnarena.network import NetworkStructure
from tnarena.network.structure import QUBIT

#: tolerance on positions (they are computed as centroids)
TOL = 1e-6

Cell = tuple[int, int]


@dataclass(frozen=True)
class GridLayout:
    """Where every node of a structure sits on an ``Lx x Ly`` grid of unit cells.

    cells : tuple of (row, column), length N
        Row from the x coordinate, column from y, shifted so the smallest is 0.
    shape : (Lx, Ly)
    empty : cells that hold no node (quimb needs every site: they get a scalar 1)
    """

    cells: tuple[Cell, ...]
    shape: tuple[int, int]
    empty: tuple[Cell, ...]


def _refuse(reason: str) -> TnarenaError:
    return TnarenaError(
        f"strategy 'quimb_boundary' needs the square lattice (qubits on the edge midpoints of the unit grid, "
        f"each bond inside one unit cell or between neighbouring cells), but {reason}; "
        "use quimb_compressed or sweep for other layouts."
    )


def _on_edge_midpoint(x: float, y: float) -> bool:
    fx, fy = x - np.floor(x + TOL), y - np.floor(y + TOL)
    return (abs(fx) < TOL and abs(fy - 0.5) < TOL) or (abs(fx - 0.5) < TOL and abs(fy) < TOL)


def _adjacent(a: Cell, b: Cell) -> bool:
    return abs(a[0] - b[0]) + abs(a[1] - b[1]) <= 1


def square_grid_layout(structure: NetworkStructure) -> GridLayout:
    """The unit cell of every node, or TnarenaError when the structure is not a square-grid layout."""
    if structure.num_nodes == 0:
        raise _refuse("the network has no nodes")
    pos = np.asarray(structure.positions, dtype=float)
    floored = np.floor(pos + TOL).astype(int)
    cells: dict[int, Cell] = {}
    for i, kind in enumerate(structure.kinds):
        if kind == QUBIT:
            if not _on_edge_midpoint(*pos[i]):
                raise _refuse(f"qubit node {i} sits at ({pos[i][0]:.6g}, {pos[i][1]:.6g}), off the edge midpoints")
            cells[i] = (int(floored[i][0]), int(floored[i][1]))
    for i, kind in enumerate(structure.kinds):
        if kind != QUBIT:
            cells[i] = _generator_cell(structure, i, (int(floored[i][0]), int(floored[i][1])), cells)
    for u, v in structure.bonds:
        if not _adjacent(cells[int(u)], cells[int(v)]):
            raise _refuse(f"the bond between nodes {int(u)} and {int(v)} joins cells "
                          f"{cells[int(u)]} and {cells[int(v)]}, which are not neighbours")
    return _layout(cells, structure)


def _generator_cell(structure: NetworkStructure, node: int, home: Cell, cells: dict[int, Cell]) -> Cell:
    """The cell nearest ``home`` from which every qubit of ``node`` is in the same or a neighbouring cell."""
    touched = [cells[j] for j in structure.neighbours(node) if j in cells]
    candidates = sorted(set(touched) | {home})
    fits = [c for c in candidates if all(_adjacent(c, q) for q in touched)]
    if not fits:
        x, y = structure.positions[node]
        raise _refuse(f"generator node {node} at ({x:.6g}, {y:.6g}) touches qubits in cells "
                      f"{sorted(set(touched))}, which no single cell neighbours")
    return min(fits, key=lambda c: (abs(c[0] - home[0]) + abs(c[1] - home[1]), c))


def _layout(cells: dict[int, Cell], structure: NetworkStructure) -> GridLayout:
    """Shift the cells to start at (0, 0) and list the empty ones."""
    coords = np.array([cells[i] for i in range(structure.num_nodes)])
    low = coords.min(axis=0)
    shifted = tuple((int(r), int(c)) for r, c in coords - low)
    lx, ly = (int(v) + 1 for v in coords.max(axis=0) - low)
    present = set(shifted)
    empty = tuple((r, c) for r in range(lx) for c in range(ly) if (r, c) not in present)
    return GridLayout(shifted, (lx, ly), empty)
