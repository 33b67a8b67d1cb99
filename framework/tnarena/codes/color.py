"""The 6.6.6 (honeycomb) color code on a triangular patch.

Construction. Take the triangular-lattice points ``(a, b)`` with ``a, b >= 0`` and
``a + b <= L``, ``L = 3 (d - 1) / 2``, drawn at ``a (1, 0) + b (1/2, sqrt(3)/2)``.
The points with ``(a - b) mod 3 == 1`` are face centres; all other points are
qubits, and they are the vertices of a honeycomb with edge length 1. A face is
the set of qubits among the six lattice neighbours of its centre: six inside the
patch, four on its sides (each side is a lattice line through face centres).
Because ``L`` is a multiple of 3 the three corners are qubits.

Faces are 3-coloured by ``a mod 3`` of their centre. The side ``b = 0`` meets
only faces of colours 1 and 2, and likewise each side misses one colour, so
the three boundaries have three different colours.
"""

from __future__ import annotations

import numpy as np

from tnarena.codes.core import STABILIZER, PauliCode
from tnarena.errors import TnarenaError

_NEIGHBOURS = ((1, 0), (-1, 0), (0, 1), (0, -1), (1, -1), (-1, 1))
_BASIS = np.array([[1.0, 0.0], [0.5, np.sqrt(3.0) / 2.0]])


def color_666(distance: int) -> PauliCode:
    """Triangular 6.6.6 color code of odd distance ``d >= 3``.

    Parameters
    ----------
    distance : int
        Odd code distance d >= 3.

    Returns
    -------
    PauliCode
        n = (3 d^2 + 1) / 4 qubits, k = 1. Generators: the X-type stabilizer of
        every face (rows 0..F-1), then the Z-type stabilizer of the same faces
        in the same order (rows F..2F-1); generator positions are face centres.
        X-bar (Z-bar) is X (Z) on the d qubits of the side ``b = 0``.
        ``metadata["colors"]``: list of length 2F, the face colour (0, 1, 2) of
        each generator.
    """
    d = _check_distance(distance)
    side = 3 * (d - 1) // 2
    points = [(a, b) for b in range(side + 1) for a in range(side + 1 - b)]
    inside = set(points)
    qubits = [p for p in points if (p[0] - p[1]) % 3 != 1]
    centres = [p for p in points if (p[0] - p[1]) % 3 == 1]
    index = {p: i for i, p in enumerate(qubits)}
    n, nf = len(qubits), len(centres)

    faces = np.zeros((nf, n), dtype=np.uint8)
    for f, (a, b) in enumerate(centres):
        for da, db in _NEIGHBOURS:
            q = (a + da, b + db)
            if q in inside:
                faces[f, index[q]] = 1
    zeros = np.zeros_like(faces)
    generators = np.vstack([np.hstack([faces, zeros]), np.hstack([zeros, faces])])

    edge = np.array([1 if p[1] == 0 else 0 for p in qubits], dtype=np.uint8)
    none = np.zeros(n, dtype=np.uint8)
    logicals = np.array([[np.concatenate([edge, none]), np.concatenate([none, edge])]])

    colors = [a % 3 for a, _ in centres]
    centre_xy = np.array(centres, dtype=float) @ _BASIS
    return PauliCode(
        name=f"color/666/d{d}",
        qubit_positions=np.array(qubits, dtype=float) @ _BASIS,
        generators=generators,
        kinds=(STABILIZER,) * (2 * nf),
        logicals=logicals,
        generator_positions=np.vstack([centre_xy, centre_xy]),
        distances={"x": d, "z": d},
        metadata={"family": "color_666", "distance": d, "colors": colors + colors},
    )


def _check_distance(distance: object) -> int:
    if isinstance(distance, bool) or not isinstance(distance, (int, np.integer)):
        raise TnarenaError(
            f"color code distance {distance!r} is not an integer; give an odd integer >= 3."
        )
    d = int(distance)
    if d < 3 or d % 2 == 0:
        raise TnarenaError(
            f"color code distance {d} is not allowed; give an odd integer >= 3 (3, 5, 7, ...)."
        )
    return d
