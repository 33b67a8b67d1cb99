"""The 4.8.8 (square-octagon) color code on a triangular patch.

Construction, in the dual picture: the tetrakis square tiling (unit squares cut
by both diagonals) is the dual of 4.8.8. Its vertices are 3-coloured: A at the
integer points with x + y even, B at those with x + y odd (octagons), C at the
square centres (squares). Coordinates below are doubled so that all are
integers. A set K of tetrakis vertices is chosen; each one is a face (an X and
a Z stabilizer). The qubits are

* every tetrakis triangle with all three corners in K (inner qubits),
* every boundary edge of the union of those triangles (a qubit in the two
  faces at its ends; it sits on the outside triangle across that edge, whose
  third corner has the colour missing from the edge: that colour's boundary),
* every vertex where the boundary passes from one colour to another (a corner
  qubit in that face alone; there are exactly three).

K is explicit (see ``_faces``): square centres on a staircase of
(m + 1)(m + 2) / 2 unit cells, m = (d - 3) / 2, and octagons at the cells'
corners less one colour on each of two sides. The patch is a right isosceles
triangle: the left side is the B-boundary, the top side the A-boundary, the
staircase hypotenuse the C-boundary. n = (d^2 - 1) / 2 + d, (d + 3)(d - 1) / 4
faces; octagons inside have weight 8, squares 4, octagons cut by a side 4.
The union of inner triangles is pinched at octagons that touch two sides
(e.g. the one full octagon of d = 5).
"""

from __future__ import annotations

import math

import numpy as np

from tnarena.codes.color import _check_distance
from tnarena.codes.core import STABILIZER, PauliCode

Point = tuple[int, int]
Triangle = tuple[Point, Point, Point]

#: How far (doubled units) a corner qubit sits from its face's vertex, towards the outside.
_CORNER_OFFSET = 0.6


def color_488(distance: int) -> PauliCode:
    """Triangular 4.8.8 color code of odd distance ``d >= 3``.

    Parameters
    ----------
    distance : int
        Odd code distance d >= 3.

    Returns
    -------
    PauliCode
        n = (d^2 - 1) / 2 + d qubits, k = 1. Generators: the X-type stabilizer
        of every face (rows 0..F-1), then the Z-type stabilizer of the same
        faces in the same order; generator positions are the dual vertices
        (face centres). X-bar (Z-bar) is X (Z) on the d qubits of the side
        opposite the A-B-corner (the C-boundary). ``metadata["colors"]``: list
        of length 2F, the face colour of each generator (0 = A, 1 = B
        octagons, 2 = C squares). At d = 3 it is the Steane code.
    """
    d = _check_distance(distance)
    faces = sorted(_faces(d))
    inner = _inner_triangles(set(faces))
    qubits, positions, boundary_colors = _qubits(inner, set(faces))
    index = {f: i for i, f in enumerate(faces)}
    n, nf = len(qubits), len(faces)

    support = np.zeros((nf, n), dtype=np.uint8)
    for q, members in enumerate(qubits):
        for f in members:
            support[index[f], q] = 1
    zeros = np.zeros_like(support)
    generators = np.vstack([np.hstack([support, zeros]), np.hstack([zeros, support])])

    side = np.array([2 in colors for colors in boundary_colors], dtype=np.uint8)
    none = np.zeros(n, dtype=np.uint8)
    logicals = np.array([[np.concatenate([side, none]), np.concatenate([none, side])]])

    colors = [_color(f) for f in faces]
    centres = np.array(faces, dtype=float) / 2.0
    return PauliCode(
        name=f"color/488/d{d}",
        qubit_positions=np.array(positions, dtype=float) / 2.0,
        generators=generators,
        kinds=(STABILIZER,) * (2 * nf),
        logicals=logicals,
        generator_positions=np.vstack([centres, centres]),
        distances={"x": d, "z": d},
        metadata={"family": "color_488", "distance": d, "colors": colors + colors},
    )


def _faces(d: int) -> set[Point]:
    """K_d in doubled coordinates: squares on a staircase of cells, octagons at their corners.

    Cells (i, j) with 0 <= i <= j <= m, m = (d - 3) / 2, are unit squares; each
    carries a square face at its centre (2 i + 1, 2 j + 1). Every corner (x, y)
    of a cell is an octagon at (2 x, 2 y), except the B octagons (x + y odd) on
    the left side x = 0 and the A octagons (x + y even) on the top side
    y = m + 1: those two sides are the B- and A-boundaries, the staircase is
    the C-boundary.
    """
    m = (d - 3) // 2
    cells = [(i, j) for j in range(m + 1) for i in range(j + 1)]
    faces = {(2 * i + 1, 2 * j + 1) for i, j in cells}
    for i, j in cells:
        for x, y in ((i, j), (i + 1, j), (i, j + 1), (i + 1, j + 1)):
            if not (x == 0 and (x + y) % 2 == 1) and not (y == m + 1 and (x + y) % 2 == 0):
                faces.add((2 * x, 2 * y))
    return faces


def _color(v: Point) -> int:
    """0 (A) or 1 (B) for an octagon at an even point, 2 (C) for a square centre."""
    return 2 if v[0] % 2 else (v[0] // 2 + v[1] // 2) % 2


def _triangles_at(v: Point) -> list[Triangle]:
    """The tetrakis triangles around ``v`` in counter-clockwise order (8 at an octagon, 4 at a square)."""
    x, y = v
    if x % 2:  # square centre: its four corners
        ring = [(x - 1, y - 1), (x + 1, y - 1), (x + 1, y + 1), (x - 1, y + 1)]
    else:  # octagon: alternately a square centre and an octagon neighbour
        ring = [(x + 1, y + 1), (x, y + 2), (x - 1, y + 1), (x - 2, y), (x - 1, y - 1), (x, y - 2), (x + 1, y - 1), (x + 2, y)]
    return [(v, ring[i], ring[(i + 1) % len(ring)]) for i in range(len(ring))]


def _key(t: Triangle) -> frozenset[Point]:
    return frozenset(t)


def _inner_triangles(faces: set[Point]) -> set[frozenset[Point]]:
    return {_key(t) for c in faces if c[0] % 2 for t in _triangles_at(c) if set(t) <= faces}


def _qubits(inner: set[frozenset[Point]], faces: set[Point]):
    """Qubits as (faces they lie in, position in doubled units, colours of the boundaries they touch)."""
    members: list[tuple[Point, ...]] = []
    positions: list[tuple[float, float]] = []
    boundaries: list[frozenset[int]] = []
    for t in sorted(inner, key=sorted):
        members.append(tuple(sorted(t)))
        positions.append(_centroid(t))
        boundaries.append(frozenset())
    seen: set[frozenset[Point]] = set()
    for v in sorted(faces):
        ring = _triangles_at(v)
        outside = [_key(t) not in inner for t in ring]
        if all(outside) or not any(outside):
            continue
        for i, t in enumerate(ring):
            if outside[i] and _key(t) not in seen:  # boundary-edge qubit: outside triangle across an inner edge
                edge = [u for u in t if u in faces]
                if len(edge) == 2:
                    seen.add(_key(t))
                    missing = next(_color(u) for u in t if u not in faces)
                    members.append(tuple(sorted(edge)))
                    positions.append(_centroid(t))
                    boundaries.append(frozenset({missing}))
        for run in _outside_runs(outside):
            first, last = ring[run[0]], ring[run[-1]]
            ends = {next(_color(u) for u in first if u not in faces), next(_color(u) for u in last if u not in faces)}
            if len(ends) == 2:  # the boundary changes colour here: a corner qubit in this face alone
                direction = np.mean([_centroid(ring[i]) for i in run], axis=0) - np.array(v, dtype=float)
                step = _CORNER_OFFSET * direction / math.hypot(*direction)
                members.append((v,))
                positions.append((v[0] + step[0], v[1] + step[1]))
                boundaries.append(frozenset(ends))
    corners = sum(len(b) == 2 for b in boundaries)
    if corners != 3:  # a construction error, not a user error
        raise AssertionError(f"4.8.8 patch has {corners} corners; expected 3")
    return members, positions, boundaries


def _outside_runs(outside: list[bool]) -> list[list[int]]:
    """Maximal cyclic runs of True in ``outside`` (at least one False present), as index lists."""
    size = len(outside)
    start = next(i for i in range(size) if not outside[i])
    runs: list[list[int]] = []
    for step in range(1, size + 1):
        i = (start + step) % size
        if outside[i]:
            if not outside[(i - 1) % size]:
                runs.append([])
            runs[-1].append(i)
    return runs


def _centroid(t) -> tuple[float, float]:
    pts = list(t)
    return (sum(p[0] for p in pts) / 3.0, sum(p[1] for p in pts) / 3.0)
