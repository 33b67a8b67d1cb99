"""What a schedule will cost, and the choice of the cheapest way to cut a piece.

Two measures. :func:`estimate_flops` follows
:class:`tnarena_boundary_columns.mps.BoundaryMPS` step by step on shapes
alone, taking every virtual bond as large as chi and the exact rank bound
allow: instant, but blind to the low ranks the COPY tensors cause, so it can
overstate a cut by 10x or more. :func:`probe_flops` runs the real
contraction once on stand-in arrays (the true COPY tensors, seeded random
qubit arrays) and counts its multiply-adds. The plan screens the candidate
cuts with the first and probes the survivors with the second.
"""

from __future__ import annotations

import numpy as np

from tnarena.errors import TnarenaError
from tnarena.network import GENERATOR, NetworkStructure, copy_tensor

from tnarena_boundary_columns.cells import coarse_grain
from tnarena_boundary_columns.geometry import candidate_grids
from tnarena_boundary_columns.mps import BoundaryMPS
from tnarena_boundary_columns.schedule import PiecePlan, schedule_piece

#: Candidates whose estimate is more than this many times the best one's are not probed.
SCREEN = 10.0

#: Candidates whose estimates all lie within this factor are not worth probing: the best estimate wins.
CLOSE = 1.5


def estimate_flops(piece: PiecePlan, chi: int) -> float:
    """Multiply-adds (tensordot, QR and SVD counted as m n min(m, n)) of one contraction at chi."""
    flops = sum(cell.flops for cell in piece.cells)
    sites: list[tuple[int, int, int]] = []
    for ops in piece.columns:
        products = []
        for op in ops:
            dl, dr = (sites[op.old_site][0], sites[op.old_site][2]) if op.old_site >= 0 else (1, 1)
            bits = op.old_rank
            for i, axes in zip(op.cells, op.axes):
                shared = len(axes[0])
                bits += len(piece.cells[i].labels) - 2 * shared
                flops += dl * dr * 2.0 ** (bits + shared)
            products.append([dl * 2**op.down, 2 ** sum(op.rows), dr * 2**op.up, op.rows])
        shapes, pending = [], None
        for a, p, b, rows in products:
            if pending is not None:
                flops += pending[0] * pending[1] * p * b
                a = pending[0]
                pending = None
            if rows:
                shapes.append([a, p, b, rows])
            else:
                pending = (a, b)
        if pending is not None and shapes:
            x, p, _, rows = shapes[-1]
            flops += x * p * pending[0] * pending[1]
            shapes[-1][2] = pending[1]
        flops, sites = _compress(shapes, chi, flops)
    return flops


def _compress(shapes: list, chi: int, flops: float) -> tuple[float, list[tuple[int, int, int]]]:
    """Shapes after the QR sweep and the truncating SVD sweep (as in BoundaryMPS._compress)."""
    n = len(shapes)
    for i in range(n - 1):
        dl, p, dr, _ = shapes[i]
        k = min(dl * p, dr)
        flops += dl * p * dr * k
        shapes[i][2] = k
        flops += k * dr * shapes[i + 1][1] * shapes[i + 1][2]
        shapes[i + 1][0] = k
    out = []
    for i in range(n - 1, -1, -1):
        dl, p, dr, rows = shapes[i]
        dims = [2**b for b in rows]
        while len(dims) > 1:
            last = dims.pop()
            m, w = dl * (p // last), last * dr
            keep = min(chi, m, w)
            flops += m * w * min(m, w)
            out.append((keep, last, dr))
            p, dr = p // last, keep
        if i > 0:
            keep = min(chi, dl, p * dr)
            flops += dl * p * dr * min(dl, p * dr)
            out.append((keep, p, dr))
            x, q = shapes[i - 1][0], shapes[i - 1][1]
            flops += x * q * dl * keep
            shapes[i - 1][2] = keep
        else:
            out.append((dl, p, dr))
    out.reverse()
    return flops, out


def probe_flops(piece: PiecePlan, structure: NetworkStructure, chi: int, cutoff: float) -> float:
    """Multiply-adds of one contraction at chi on stand-in arrays (COPY tensors, random qubits, seed 0)."""
    rng = np.random.default_rng(0)
    arrays: dict[int, np.ndarray] = {}
    for v in piece.grid.nodes:
        shape = (2,) * structure.degree(v)
        arrays[v] = copy_tensor(len(shape)) if structure.kinds[v] == GENERATOR else rng.uniform(0.1, 1.0, shape)
    flops, cells = 0.0, []
    for recipe in piece.cells:
        tensor, cost = coarse_grain(recipe, arrays)
        cells.append(tensor)
        flops += cost
    mps = BoundaryMPS(chi, cutoff)
    for ops in piece.columns:
        mps.absorb(ops, cells)
    return flops + mps.flops


def candidate_pieces(structure: NetworkStructure, nodes: list[int], direction: int, width: float,
                     max_cell: int) -> list[PiecePlan]:
    """Schedules of every candidate cut of one piece that keeps within max_cell.

    Raises the first candidate's TnarenaError when every candidate breaks max_cell.
    """
    pieces, refusal = [], None
    for grid in candidate_grids(structure, nodes, direction, width):
        try:
            pieces.append(schedule_piece(structure, grid, direction, max_cell))
        except TnarenaError as err:
            refusal = refusal or err
    if not pieces:
        raise refusal
    return pieces


def cheapest_estimate(structure: NetworkStructure, nodes: list[int], direction: int, width: float,
                      max_cell: int, chi: int) -> tuple[float, PiecePlan]:
    """(estimated flops, schedule) of the candidate cut with the smallest :func:`estimate_flops`."""
    pieces = candidate_pieces(structure, nodes, direction, width, max_cell)
    estimates = [estimate_flops(p, chi) for p in pieces]
    best = int(np.argmin(estimates))
    return estimates[best], pieces[best]


def plan_cheapest(structure: NetworkStructure, nodes: list[int], direction: int, width: float,
                  max_cell: int, chi: int, cutoff: float) -> PiecePlan:
    """The schedule of the cheapest candidate cut of one piece (see ``candidate_grids``).

    Candidates are screened by :func:`estimate_flops` (kept within SCREEN times
    the best) and, when the survivors' estimates differ by more than CLOSE,
    ranked by :func:`probe_flops`.
    Raises the first candidate's TnarenaError when every candidate breaks max_cell.
    """
    pieces = candidate_pieces(structure, nodes, direction, width, max_cell)
    estimates = [estimate_flops(p, chi) for p in pieces]
    best = min(estimates)
    kept = [(e, p) for p, e in zip(pieces, estimates) if e <= SCREEN * best]
    if max(e for e, _ in kept) <= CLOSE * best:
        return pieces[estimates.index(best)]
    kept = [p for _, p in kept]
    probes = [probe_flops(p, structure, chi, cutoff) for p in kept]
    return kept[int(np.argmin(probes))]
