"""The planar surface code on any planar lattice.

Qubits sit on edges, X-type stabilizers on vertices, Z-type stabilizers on
inner faces. The left and right stretches of the outer boundary are rough:
their vertices carry no stabilizer (edges joining two of them carry no qubit),
so a Z-bar is a path of edges from the left boundary to the right one. The
top and bottom stretches are smooth: an X-bar is a path in the dual from the
bottom of the outer face to its top. Both distances are shortest paths.

Of the shortest paths, each logical takes the one nearest the middle of the
patch (Z-bar the horizontal middle line, X-bar the vertical one, by summed
distance). Any representative gives the same class probabilities; one through
the middle lets a strategy that sweeps the patch from both ends share the work
of classes that differ only by it (the sweep line does).
"""

from __future__ import annotations

import networkx as nx
import numpy as np

from tnarena.codes.core import STABILIZER, PauliCode
from tnarena.errors import TnarenaError
from tnarena.lattices import Lattice

_SIDES = ("left", "right", "bottom", "top")


def planar_surface_code(lattice: Lattice, *, name: str | None = None) -> PauliCode:
    """Planar surface code of a lattice (k = 1) with distances from shortest paths."""
    layout = _Layout(lattice)
    n = layout.n
    rows: list[np.ndarray] = []
    incident: list[list[int]] = [[] for _ in range(lattice.num_vertices)]
    for e, (u, v) in enumerate(lattice.edges):
        if layout.keep[e]:
            incident[u].append(layout.qubit_of_edge[e])
            incident[v].append(layout.qubit_of_edge[e])
    for v in range(lattice.num_vertices):
        if v not in layout.side_of and incident[v]:
            row = np.zeros(2 * n, dtype=np.uint8)
            row[incident[v]] = 1
            rows.append(row)
    for qs in layout.face_qubits:
        row = np.zeros(2 * n, dtype=np.uint8)
        row[n + np.array(qs)] = 1
        rows.append(row)

    z_path, x_path = layout.z_path(), layout.x_path()
    x_bar = np.zeros(2 * n, dtype=np.uint8)
    x_bar[x_path] = 1
    z_bar = np.zeros(2 * n, dtype=np.uint8)
    z_bar[n + np.array(z_path)] = 1
    return PauliCode(
        name=name or f"surface/{lattice.name}",
        qubit_positions=lattice.positions[lattice.edges[layout.keep]].mean(axis=1),
        generators=np.array(rows, dtype=np.uint8),
        kinds=(STABILIZER,) * len(rows),
        logicals=np.array([[x_bar, z_bar]], dtype=np.uint8),
        distances={"x": len(x_path), "z": len(z_path)},
        metadata={"lattice": lattice.name, "family": "surface"},
    )


def surface_distances(lattice: Lattice) -> tuple[int, int]:
    """(d_x, d_z) of the planar surface code of a lattice, without building the code."""
    layout = _Layout(lattice)
    return len(layout.x_path()), len(layout.z_path())


class _Layout:
    """Which vertices are rough, which edges carry qubits, and the shortest logicals."""

    def __init__(self, lattice: Lattice) -> None:
        self.lattice = lattice
        self.cycle = list(lattice.outer)
        left, right = _rough_runs(lattice, self.cycle)
        self.side_of = {v: "L" for v in left} | {v: "R" for v in right}
        self.keep = ~_same_side(lattice.edges, self.side_of)
        self.n = int(self.keep.sum())
        self.qubit_of_edge = -np.ones(lattice.num_edges, dtype=int)
        self.qubit_of_edge[self.keep] = np.arange(self.n)
        self.face_qubits = []
        for face in lattice.faces:
            qs = [int(self.qubit_of_edge[e]) for e in lattice.face_edges(face) if self.keep[e]]
            if qs:
                self.face_qubits.append(qs)

    def z_path(self) -> list[int]:
        return _primal_path(self.lattice, self.side_of, self.keep, self.qubit_of_edge, self._off_middle(1))

    def x_path(self) -> list[int]:
        return _dual_path(
            self.lattice, self.cycle, self.side_of, self.keep, self.qubit_of_edge, self.face_qubits,
            self._off_middle(0),
        )

    def _off_middle(self, axis: int) -> np.ndarray:
        """Per qubit, a path-length weight 1 + eps * (distance from the middle line across ``axis``,
        over the patch's extent): eps is small enough that no detour of even one extra qubit pays."""
        pos = self.lattice.positions
        centre = self.lattice.positions[self.lattice.edges[self.keep]].mean(axis=1)[:, axis]
        lo, hi = pos[:, axis].min(), pos[:, axis].max()
        off = np.abs(centre - (lo + hi) / 2) / max(hi - lo, 1e-12)  # in [0, 1/2]
        return 1.0 + off / (self.n + 1)


def _rough_runs(lattice: Lattice, cycle: list[int]) -> tuple[list[int], list[int]]:
    """Longest contiguous runs of outer-boundary vertices nearest the left and right sides."""
    pts = lattice.positions[cycle]
    lo, hi = lattice.positions.min(axis=0), lattice.positions.max(axis=0)
    dist = np.stack([pts[:, 0] - lo[0], hi[0] - pts[:, 0], pts[:, 1] - lo[1], hi[1] - pts[:, 1]], 1)
    side = dist.argmin(axis=1)
    runs = []
    for s in (0, 1):
        run = _longest_cyclic_run(side == s)
        if not run:
            raise TnarenaError(
                f"the {lattice.name} patch has no {_SIDES[s]} boundary; build a larger patch."
            )
        runs.append([cycle[i] for i in run])
    if len(cycle) - len(runs[0]) - len(runs[1]) < 2:
        raise TnarenaError(
            f"the {lattice.name} patch is too small for a planar code (no smooth boundary left)."
        )
    return runs[0], runs[1]


def _longest_cyclic_run(mask: np.ndarray) -> list[int]:
    m = len(mask)
    if mask.all():
        return list(range(m))
    start = int(np.flatnonzero(~mask)[0])
    best: list[int] = []
    cur: list[int] = []
    for step in range(1, m + 1):
        i = (start + step) % m
        if mask[i]:
            cur.append(i)
            if len(cur) > len(best):
                best = list(cur)
        else:
            cur = []
    return best


def _same_side(edges: np.ndarray, side_of: dict[int, str]) -> np.ndarray:
    a = np.array([side_of.get(int(u), "") for u in edges[:, 0]])
    b = np.array([side_of.get(int(v), "") for v in edges[:, 1]])
    return (a == b) & (a != "")


def _primal_path(lattice, side_of, keep, qubit_of_edge, weight) -> list[int]:
    """Qubits of a shortest edge path from the left rough boundary to the right one (the lightest
    by ``weight``, shape (n,), among them)."""
    graph = nx.Graph()
    for e, (u, v) in enumerate(lattice.edges):
        if keep[e]:
            a, b = side_of.get(int(u), int(u)), side_of.get(int(v), int(v))
            q = int(qubit_of_edge[e])
            graph.add_edge(a, b, qubit=q, weight=float(weight[q]))
    nodes = nx.shortest_path(graph, "L", "R", weight="weight")
    return [graph.edges[a, b]["qubit"] for a, b in zip(nodes, nodes[1:])]


def _dual_path(lattice, cycle, side_of, keep, qubit_of_edge, face_qubits, weight) -> list[int]:
    """Qubits crossed by a shortest dual path from the bottom smooth boundary to the top one (the
    lightest by ``weight``, shape (n,), among them)."""
    owner: dict[int, list] = {}
    for f, qs in enumerate(face_qubits):
        for q in qs:
            owner.setdefault(q, []).append(f)
    # outer-boundary edges between the left and right runs: bottom (after left, CCW), then top
    m = len(cycle)
    start = next(i for i in range(m) if side_of.get(cycle[i]) == "L" and side_of.get(cycle[i - 1]) != "L")
    label = None
    for step in range(m):
        a, b = cycle[(start + step) % m], cycle[(start + step + 1) % m]
        sa, sb = side_of.get(a), side_of.get(b)
        if sa == "L" and sb != "L":
            label = "bottom"
        elif sa == "R" and sb != "R":
            label = "top"
        e = lattice.edge_id(a, b)
        if keep[e] and label is not None:
            owner.setdefault(int(qubit_of_edge[e]), []).append(label)
    graph = nx.Graph()
    for q, ends in owner.items():
        if len(ends) == 2:
            graph.add_edge(ends[0], ends[1], qubit=q, weight=float(weight[q]))
    nodes = nx.shortest_path(graph, "bottom", "top", weight="weight")
    return [graph.edges[a, b]["qubit"] for a, b in zip(nodes, nodes[1:])]
