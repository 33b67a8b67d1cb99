"""The subsystem surface code: weight-3 gauge triangles, weight-6 stabilizers.

After Bravyi, Duclos-Cianci, Poulin and Suchara (2013): qubits on the vertices
and on the edges of a square lattice; every face ``f`` holds four triangles,
one at each corner (the corner vertex and the two edges of ``f`` meeting
there). The triangles at the lower-left and upper-right corners are Z-type,
those at the upper-left and lower-right corners X-type. Triangles of one face
that share an edge anticommute, so the gauge group is non-abelian. Its centre
contains, per face, ``S_X = X-triangle(UL) X-triangle(LR)`` and
``S_Z = Z-triangle(LL) Z-triangle(UR)`` of weight 6 (the four edges of the
face and two opposite corners).

Planar layout built here (our choice of boundaries). The patch is the
``L x L`` block of faces, ``L = d - 1``, with every vertex and edge of the
block a qubit: n = 3 L^2 + 4 L + 1 = 3 d^2 - 2 d. Beyond the left and right
sides only the X-type triangles of the outer faces are kept, beyond the top and
bottom sides only the Z-type ones; each such outer face leaves one triangle with
two qubits in the patch, which is itself in the centre (a weight-2 boundary
stabilizer). There are L^2 gauge qubits and k = 1, both distances d. X-bar and
Z-bar are bare logicals (commuting with every gauge generator) found by GF(2)
elimination.
"""

from __future__ import annotations

import numpy as np

from tnarena import gf2
from tnarena.codes.core import GAUGE, STABILIZER, PauliCode
from tnarena.errors import TnarenaError

# corner of a face -> (vertex offset, edges as (kind, di, dj)) ; kind 'h' = bottom edge of row dj
_CORNERS = {
    "LL": ((0, 0), (("h", 0, 0), ("v", 0, 0))),
    "UR": ((1, 1), (("h", 0, 1), ("v", 1, 0))),
    "UL": ((0, 1), (("h", 0, 1), ("v", 0, 0))),
    "LR": ((1, 0), (("h", 0, 0), ("v", 1, 0))),
}
_TYPE = {"LL": "Z", "UR": "Z", "UL": "X", "LR": "X"}


def subsystem_surface_code(distance: int) -> PauliCode:
    """Planar subsystem surface code of distance ``d >= 2``.

    Returns
    -------
    PauliCode
        n = 3 d^2 - 2 d, k = 1, ``distances == {"x": d, "z": d}`` (lightest
        dressed X-type and Z-type logicals). Generators: the 4 (d-1)^2 gauge
        triangles (kind 'gauge'), then per face S_X and S_Z, then the 4 (d-1)
        weight-2 boundary stabilizers (kind 'stabilizer').
        ``metadata["gauge_qubits"] == (d - 1)^2``.
    """
    d = _check_distance(distance)
    size = d - 1
    index, positions = _qubits(size)
    n = len(index)
    gauge, stabs = [], []
    for j in range(size):
        for i in range(size):
            tri = {c: _triangle(i, j, c, index) for c in _CORNERS}
            gauge.extend(_row(tri[c], _TYPE[c], n) for c in ("LL", "UR", "UL", "LR"))
            stabs.append(_row(tri["UL"] + tri["LR"], "X", n))
            stabs.append(_row(tri["LL"] + tri["UR"], "Z", n))
    for i, j, kind in _outer_faces(size):
        for corner, t in _TYPE.items():
            part = _triangle(i, j, corner, index)
            if t == kind and len(part) == 2:
                stabs.append(_row(part, kind, n))
    generators = np.array(gauge + stabs, dtype=np.uint8)
    kinds = (GAUGE,) * len(gauge) + (STABILIZER,) * len(stabs)
    x_bar, z_bar = _bare_logicals(generators, n)
    return PauliCode(
        name=f"subsystem_surface/d{d}",
        qubit_positions=positions,
        generators=generators,
        kinds=kinds,
        logicals=np.array([[x_bar, z_bar]], dtype=np.uint8),
        distances={"x": d, "z": d},
        metadata={"family": "subsystem_surface", "distance": d, "gauge_qubits": size * size},
    )


def _qubits(size: int) -> tuple[dict, np.ndarray]:
    """Qubit index of every vertex ('p', a, b) and edge ('h'/'v', a, b) of the block; positions."""
    keys, pos = [], []
    for b in range(size + 1):
        for a in range(size + 1):
            keys.append(("p", a, b)); pos.append((a, b))
            if a < size:
                keys.append(("h", a, b)); pos.append((a + 0.5, b))
            if b < size:
                keys.append(("v", a, b)); pos.append((a, b + 0.5))
    return {k: q for q, k in enumerate(keys)}, np.array(pos, dtype=float)


def _triangle(i: int, j: int, corner: str, index: dict) -> list[int]:
    """Qubits of the corner triangle of face (i, j) that lie in the patch."""
    (da, db), edges = _CORNERS[corner]
    keys = [("p", i + da, j + db)] + [(k, i + di, j + dj) for k, di, dj in edges]
    return [index[k] for k in keys if k in index]


def _outer_faces(size: int):
    """Faces just outside the block: X-type on the left and right, Z-type on top and bottom."""
    for t in range(size):
        yield -1, t, "X"
        yield size, t, "X"
        yield t, -1, "Z"
        yield t, size, "Z"


def _row(qubits: list[int], kind: str, n: int) -> np.ndarray:
    row = np.zeros(2 * n, dtype=np.uint8)
    row[np.array(qubits) + (0 if kind == "X" else n)] = 1
    return row


def _bare_logicals(gauge: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """An X-type and a Z-type operator commuting with every gauge generator, outside the gauge group."""
    out = []
    for part, other in ((slice(0, n), slice(n, 2 * n)), (slice(n, 2 * n), slice(0, n))):
        same = gauge[:, part][gauge[:, part].any(axis=1)]
        checks = gauge[:, other][gauge[:, other].any(axis=1)]
        candidates = gf2.nullspace(checks)
        outside = candidates[~gf2.in_row_space(same, candidates)]
        row = np.zeros(2 * n, dtype=np.uint8)
        row[part] = outside[0]
        out.append(row)
    return out[0], out[1]


def _check_distance(distance: object) -> int:
    if isinstance(distance, bool) or not isinstance(distance, (int, np.integer)) or distance < 2:
        raise TnarenaError(
            f"subsystem surface code distance {distance!r} is not allowed; give an integer >= 2."
        )
    return int(distance)
