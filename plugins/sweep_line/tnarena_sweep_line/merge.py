"""Fold nodes of degree <= 2 into a neighbour before sweeping.

A node with one or two legs (a bit-flip qubit between two generators, a
boundary qubit) adds a whole window operation to the sweep but no width to
the line. Folding it into a neighbour keeps the neighbour's degree (or
lowers it) and removes that operation. The fold is worked out once per
structure; each contraction builds the folded arrays with one einsum per
group (every bond has dimension 2, so a group of h legs costs 2^h terms).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

#: Most nodes in one group (keeps each group's einsum at a few hundred terms).
MAX_GROUP = 5


@dataclass(frozen=True)
class FoldedLayout:
    """The network seen by the sweep: one node per group of original nodes.

    positions : ndarray, shape (M, 2), the position of each group's hub
    bonds : ndarray, shape (B, 2), the two groups each original bond joins
        (equal for a bond inside a group; such bonds appear in no node_bonds)
    node_bonds : per group, the original bond ids of its array's axes
    recipes : per group, (member nodes, einsum operand sublists, output sublist)
    """

    positions: np.ndarray
    bonds: np.ndarray
    node_bonds: tuple[tuple[int, ...], ...]
    recipes: tuple[tuple[tuple[int, ...], tuple[tuple[int, ...], ...], tuple[int, ...]], ...]
    groups_of_pieces: tuple[tuple[int, ...], ...]

    def degree(self, node: int) -> int:
        return len(self.node_bonds[node])

    def components(self) -> list[list[int]]:
        return [list(p) for p in self.groups_of_pieces]

    @cached_property
    def trivial(self) -> bool:
        return all(len(members) == 1 for members, _, _ in self.recipes)

    def arrays(self, arrays: list[np.ndarray]) -> list[np.ndarray]:
        """The group arrays, shape (2,) * degree each, from the original node arrays."""
        if self.trivial:
            return arrays
        out = []
        for members, operands, output in self.recipes:
            if len(members) == 1:
                out.append(arrays[members[0]])
                continue
            args = []
            for m, sub in zip(members, operands):
                args += [arrays[m], list(sub)]
            out.append(np.einsum(*args, list(output)))
        return out


def fold_small_nodes(structure) -> FoldedLayout:
    """Fold every node of degree <= 2 (one at a time, original nodes only) into its busiest neighbour."""
    n = structure.num_nodes
    bonds = np.array(structure.bonds, dtype=int).reshape(-1, 2)
    root = list(range(n))
    members = {v: [v] for v in range(n)}
    legs = {v: list(structure.node_bonds[v]) for v in range(n)}
    for v in sorted(range(n), key=lambda u: (len(legs[u]), u)):
        if root[v] != v or len(members[v]) != 1 or not 1 <= len(legs[v]) <= 2:
            continue
        ends = [root[int(x)] for b in legs[v] for x in bonds[b] if root[int(x)] != v]
        ends = [g for g in ends if len(members[g]) < MAX_GROUP]
        if not ends:
            continue
        g = max(ends, key=lambda u: (len(legs[u]), -u))
        shared = {b for b in legs[v] if root[int(bonds[b][0])] == g or root[int(bonds[b][1])] == g}
        other = [b for b in legs[v] if b not in shared]
        new_legs = []
        for b in legs[g]:
            if b in shared:
                new_legs += other  # the neighbour's leg to v becomes v's other leg, in place
                other = []
            else:
                new_legs.append(b)
        legs[g] = new_legs + other
        members[g] += members.pop(v)
        del legs[v]
        root[v] = g
    hubs = sorted(members)
    index = {g: i for i, g in enumerate(hubs)}
    group = np.array([index[root[v]] for v in range(n)], dtype=int)
    folded_bonds = group[bonds] if len(bonds) else bonds
    recipes = []
    for g in hubs:
        mem = tuple(members[g])
        used = sorted({b for m in mem for b in structure.node_bonds[m]})
        label = {b: i for i, b in enumerate(used)}
        operands = tuple(tuple(label[b] for b in structure.node_bonds[m]) for m in mem)
        recipes.append((mem, operands, tuple(label[b] for b in legs[g])))
    pieces = []
    for piece in structure.components():
        pieces.append(tuple(sorted({int(group[v]) for v in piece})))
    return FoldedLayout(
        positions=np.asarray(structure.positions, dtype=float)[hubs],
        bonds=folded_bonds,
        node_bonds=tuple(tuple(legs[g]) for g in hubs),
        recipes=tuple(recipes),
        groups_of_pieces=tuple(pieces),
    )
