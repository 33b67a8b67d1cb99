"""Geometry of a sweep: the order nodes are met and the order of bonds along the line.

Everything here depends only on the network structure and the direction, so
it is computed once per structure (the plan) and replayed on every set of
arrays. The result is a list of :class:`WindowOp`: each rewrites a window of
consecutive MPS sites, optionally absorbing one node's tensor.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: Projections closer than this (in position units) count as ties.
TIE = 1e-9


@dataclass(frozen=True)
class WindowOp:
    """Replace MPS sites [lo, hi) by new sites.

    node : int
        Node absorbed, or -1 for a plain rearrangement (a swap).
    contract : tuple of (window site offset, node axis)
        Window physical legs summed against the node's legs.
    output : tuple of ('w', offset) or ('n', axis)
        Physical legs of the new sites, in line order: a leg kept from the
        window, or a free leg of the node.
    """

    lo: int
    hi: int
    node: int
    contract: tuple[tuple[int, int], ...]
    output: tuple[tuple[str, int], ...]


@dataclass
class SweepSchedule:
    """The replayable sweep: its operations and what they cost in line length."""

    ops: list[WindowOp]
    direction: float  # degrees
    max_line: int  # largest number of bonds crossing the line
    swaps: int
    line: list[int]  # bond ids crossing the line when it stops, in line order (empty after a whole piece)


def sweep_order(positions: np.ndarray, degrees: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Node order along the direction (ties broken along the line).

    Returns (order, t, s): t is the coordinate along the direction, s along the line.
    """
    a = math.radians(degrees)
    u = np.array([math.cos(a), math.sin(a)])
    w = np.array([-math.sin(a), math.cos(a)])
    t = positions @ u
    s = positions @ w
    t_key = np.round(t / TIE) * TIE
    order = np.lexsort((s, t_key))
    return order, t, s


def build_schedule(structure, degrees: float, nodes: list[int] | None = None) -> SweepSchedule:
    """Simulate the sweep over ``nodes`` (default: all) and record every window operation.

    Bonds from ``nodes`` to nodes outside them are never absorbed: they are
    still on the line when it stops (``SweepSchedule.line``)."""
    pos = np.asarray(structure.positions, dtype=float)
    order, t, s = sweep_order(pos, degrees)
    if nodes is not None:
        keep = np.zeros(len(pos), dtype=bool)
        keep[nodes] = True
        order = order[keep[order]]
    rank = np.full(len(pos), len(pos), dtype=int)  # nodes left out come after every swept one
    rank[order] = np.arange(len(order))
    bonds = structure.bonds
    line: list[int] = []  # open bond ids in MPS order
    ops: list[WindowOp] = []
    max_line = 0
    swaps = 0
    for v in order:
        v = int(v)
        axes = structure.node_bonds[v]
        incoming, outgoing = [], []
        for axis, b in enumerate(axes):
            other = int(bonds[b][0] if bonds[b][1] == v else bonds[b][1])
            (incoming if rank[other] < rank[v] else outgoing).append((axis, b, other))
        outgoing.sort(key=lambda item: _leaving_angle(pos[item[2]] - pos[v], degrees))
        if incoming:
            where = sorted(line.index(b) for _, b, _ in incoming)
            swaps += _gather(line, where, ops)
            lo = min(line.index(b) for _, b, _ in incoming)
            hi = lo + len(incoming)
        else:
            lo = hi = _insertion_index(line, bonds, v, t, s, pos)
        # a window with nothing left in it must borrow a neighbour to pass its bond on
        if not outgoing and hi - lo == len(incoming) and len(line) > len(incoming):
            if lo > 0:
                lo -= 1
            else:
                hi += 1
        if not incoming and line and lo == hi:
            if lo > 0:
                lo -= 1
            else:
                hi += 1
        window = line[lo:hi]
        axis_of = {b: axis for axis, b, _ in incoming}
        contract = tuple((off, axis_of[b]) for off, b in enumerate(window) if b in axis_of)
        kept = [("w", off) for off, b in enumerate(window) if b not in axis_of]
        fresh = [("n", axis) for axis, _, _ in outgoing]
        if incoming:
            first = min(off for off, b in enumerate(window) if b in axis_of)
            before = [k for k in kept if k[1] < first]
            after = [k for k in kept if k[1] > first]
            output = before + fresh + after
        elif window and lo < _insertion_index(line, bonds, v, t, s, pos):
            output = kept + fresh  # borrowed the left neighbour
        else:
            output = fresh + kept
        ops.append(WindowOp(lo, hi, v, contract, tuple(output)))
        new_bonds = [window[k[1]] if k[0] == "w" else axes[k[1]] for k in output]
        line[lo:hi] = new_bonds
        max_line = max(max_line, len(line))
    return SweepSchedule(ops=ops, direction=degrees, max_line=max_line, swaps=swaps, line=line)


def reorder_line(schedule: SweepSchedule, target: list[int]) -> None:
    """Append swaps to ``schedule`` so its final line is ``target`` (the same bonds in another order)."""
    line = schedule.line
    if sorted(line) != sorted(target):
        raise ValueError("the two lines do not cross the same bonds")
    where = {b: i for i, b in enumerate(target)}
    for end in range(len(line) - 1, 0, -1):  # bubble sort by target position
        for i in range(end):
            if where[line[i]] > where[line[i + 1]]:
                _swap(line, i, schedule.ops)
                schedule.swaps += 1


def _leaving_angle(d: np.ndarray, degrees: float) -> float:
    """Order in which bonds leaving a node cross a line just ahead of it (small s first)."""
    a = math.radians(degrees)
    along = d[0] * math.cos(a) + d[1] * math.sin(a)
    across = -d[0] * math.sin(a) + d[1] * math.cos(a)
    if along <= TIE:
        return math.copysign(math.pi / 2, across) if across else math.pi / 2
    return math.atan2(across, along)


def _gather(line: list[int], where: list[int], ops: list[WindowOp]) -> int:
    """Swap sites so the sites at ``where`` (sorted) become consecutive around their median;
    returns swaps made. Each site moves next to its already gathered neighbour, so it only
    passes sites that are not gathered."""
    pos = list(where)
    mid = len(pos) // 2
    count = 0
    for k in range(mid - 1, -1, -1):  # left of the median: move right
        while pos[k] < pos[k + 1] - 1:
            _swap(line, pos[k], ops)
            pos[k] += 1
            count += 1
    for k in range(mid + 1, len(pos)):  # right of the median: move left
        while pos[k] > pos[k - 1] + 1:
            _swap(line, pos[k] - 1, ops)
            pos[k] -= 1
            count += 1
    return count


def _swap(line: list[int], i: int, ops: list[WindowOp]) -> None:
    ops.append(WindowOp(i, i + 2, -1, (), (("w", 1), ("w", 0))))
    line[i], line[i + 1] = line[i + 1], line[i]


def _insertion_index(line, bonds, v, t, s, pos) -> int:
    """Where a node with no absorbed neighbour enters the line: by where open bonds cross it."""
    if not line:
        return 0
    tv, sv = t[v], s[v]
    for i, b in enumerate(line):
        x, y = int(bonds[b][0]), int(bonds[b][1])
        if t[x] > t[y]:
            x, y = y, x
        span = t[y] - t[x]
        crossing = s[x] if span <= TIE else s[x] + (tv - t[x]) * (s[y] - s[x]) / span
        if crossing > sv:
            return i
    return len(line)


def split_at_middle(structure, degrees: float, nodes: list[int]) -> tuple[list[int], list[int]]:
    """``nodes`` cut in two by a line across the direction: those before it and those after.

    The cut falls between two distinct coordinates along the direction (never
    through a row of ties), as near half the nodes as possible; ([], nodes)
    when they all share one coordinate.
    """
    pos = np.asarray(structure.positions, dtype=float)[nodes]
    a = math.radians(degrees)
    t = np.round(pos @ np.array([math.cos(a), math.sin(a)]) / TIE) * TIE
    order = np.argsort(t, kind="stable")
    gaps = [k for k in range(1, len(order)) if t[order[k]] > t[order[k - 1]]]
    if not gaps:
        return [], list(nodes)
    k = min(gaps, key=lambda g: (abs(2 * g - len(order)), g))
    ids = np.asarray(nodes)[order]
    return [int(v) for v in ids[:k]], [int(v) for v in ids[k:]]


def layer_ends(structure, schedule: SweepSchedule, width: float | None = None) -> list[bool]:
    """For each op of ``schedule``: does a layer of the sweep end after it?

    A layer holds the nodes met while the line advances by ``width`` (position
    units along the direction; default: the median non-zero length of the
    bonds projected on the direction, one lattice spacing on regular lattices).
    The last op always ends a layer.
    """
    pos = np.asarray(structure.positions, dtype=float)
    a = math.radians(schedule.direction)
    t = pos @ np.array([math.cos(a), math.sin(a)])
    if width is None:
        steps = np.abs(t[structure.bonds[:, 0]] - t[structure.bonds[:, 1]]) if len(structure.bonds) else np.zeros(0)
        steps = steps[steps > TIE]
        width = float(np.median(steps)) if steps.size else 1.0
    ends = [False] * len(schedule.ops)
    start = None
    last = -1
    for k, op in enumerate(schedule.ops):
        if op.node < 0:
            continue
        tv = t[op.node]
        if start is None:
            start = tv
        elif tv >= start + width - TIE:
            ends[last] = True
            start = tv
        last = k
    if ends:
        ends[-1] = True
    return ends
