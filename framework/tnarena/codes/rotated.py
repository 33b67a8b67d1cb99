"""The rotated square-lattice surface code and its XZZX variant.

Layout. Qubits sit at the integer points ``(i, j)``, ``0 <= i, j < d``. Every
unit square with lower-left corner ``(i, j)``, ``0 <= i, j < d - 1``, is a
weight-4 face; it is X-type when ``i + j`` is even and Z-type otherwise. Along
the top and bottom sides (``j = -1`` and ``j = d - 1``) the X-type half-faces
of weight 2 are kept, along the left and right sides (``i = -1`` and
``i = d - 1``) the Z-type ones. X-bar is X on the column ``i = 0`` and Z-bar is
Z on the row ``j = 0``: n = d^2, k = 1, both distances d.

The XZZX variant applies a Hadamard to every qubit with ``i + j`` odd (swaps
its X and Z columns). Every weight-4 face then reads X on its lower-left and
upper-right qubits and Z on the other two; the code is the rotated XZZX
surface code, locally Clifford-equivalent to the CSS one (same n, k and
minimum weight d).
"""

from __future__ import annotations

import numpy as np

from tnarena.codes.core import STABILIZER, PauliCode
from tnarena.errors import TnarenaError


def rotated_surface_code(distance: int) -> PauliCode:
    """Rotated CSS surface code of distance ``d >= 2`` on d x d qubits.

    Returns
    -------
    PauliCode
        n = d^2, k = 1, ``distances == {"x": d, "z": d}``. Generators are the
        faces in the order of their lower-left corner (row by row); generator
        positions are face centres.
    """
    d = _check_distance(distance)
    n = d * d
    rows, centres = [], []
    for j in range(-1, d):
        for i in range(-1, d):
            corners = [(i + a, j + b) for a, b in ((0, 0), (1, 0), (0, 1), (1, 1))]
            inside = [c for c in corners if 0 <= c[0] < d and 0 <= c[1] < d]
            x_type = (i + j) % 2 == 0
            if len(inside) == 4 or (len(inside) == 2 and _kept_half(i, j, d, x_type)):
                row = np.zeros(2 * n, dtype=np.uint8)
                offset = 0 if x_type else n
                row[[offset + a + d * b for a, b in inside]] = 1
                rows.append(row)
                centres.append((i + 0.5, j + 0.5))
    x_bar = np.zeros(2 * n, dtype=np.uint8)
    x_bar[[d * b for b in range(d)]] = 1  # column i = 0
    z_bar = np.zeros(2 * n, dtype=np.uint8)
    z_bar[[n + a for a in range(d)]] = 1  # row j = 0
    qubits = np.array([(a, b) for b in range(d) for a in range(d)], dtype=float)
    return PauliCode(
        name=f"rotated_surface/d{d}",
        qubit_positions=qubits,
        generators=np.array(rows, dtype=np.uint8),
        kinds=(STABILIZER,) * len(rows),
        logicals=np.array([[x_bar, z_bar]], dtype=np.uint8),
        generator_positions=np.array(centres, dtype=float),
        distances={"x": d, "z": d},
        metadata={"family": "rotated_surface", "distance": d},
    )


def xzzx_code(distance: int) -> PauliCode:
    """Rotated XZZX surface code of distance ``d >= 2``: the rotated code with a
    Hadamard on every qubit ``(i, j)`` with ``i + j`` odd.

    Returns
    -------
    PauliCode
        n = d^2, k = 1. ``distances == {"min": d}`` (lightest logical of any
        Pauli type; the code is not CSS, so X-type and Z-type distances are not
        the meaningful pair).
    """
    base = rotated_surface_code(distance)
    n, d = base.n, base.metadata["distance"]
    pos = base.qubit_positions
    odd = ((pos[:, 0] + pos[:, 1]).round().astype(int) % 2 == 1)
    swap = np.arange(2 * n)
    cols = np.flatnonzero(odd)
    swap[cols], swap[n + cols] = n + cols, cols
    return PauliCode(
        name=f"xzzx/d{d}",
        qubit_positions=pos,
        generators=base.generators[:, swap],
        kinds=base.kinds,
        logicals=base.logicals[:, :, swap],
        generator_positions=base.generator_positions,
        distances={"min": d},
        metadata={"family": "xzzx", "distance": d},
    )


def _kept_half(i: int, j: int, d: int, x_type: bool) -> bool:
    """Whether the boundary half-face with lower-left corner (i, j) is a stabilizer."""
    top_or_bottom = j in (-1, d - 1) and 0 <= i < d - 1
    left_or_right = i in (-1, d - 1) and 0 <= j < d - 1
    return (top_or_bottom and x_type) or (left_or_right and not x_type)


def _check_distance(distance: object) -> int:
    if isinstance(distance, bool) or not isinstance(distance, (int, np.integer)) or distance < 2:
        raise TnarenaError(
            f"rotated surface code distance {distance!r} is not allowed; give an integer >= 2."
        )
    return int(distance)
