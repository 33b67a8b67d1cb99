"""Coarse-graining: the nodes that fall in one cell contracted into one tensor.

The order of the pairwise contractions is fixed per structure (plan time,
:func:`plan_cell`); :func:`coarse_grain` replays it on a network's arrays.
A cell tensor has one axis of dimension 2 per bond leaving the cell.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from tnarena.network import NetworkStructure


@dataclass(frozen=True)
class CellRecipe:
    """How to build one cell tensor.

    column, row : int
        The cell's place in its piece's grid.
    nodes : tuple of int
        Nodes in the order they are contracted.
    steps : tuple of (tuple of int, tuple of int)
        For each node after the first, ``np.tensordot`` axes (tensor so far, node array).
    labels : tuple of int
        Bond ids of the finished tensor's axes, in axis order (shape (2,) * len(labels)).
    largest : int
        Elements of the largest tensor built on the way.
    flops : float
        Multiply-adds the contractions take.
    """

    column: int
    row: int
    nodes: tuple[int, ...]
    steps: tuple[tuple[tuple[int, ...], tuple[int, ...]], ...]
    labels: tuple[int, ...]
    largest: int
    flops: float


def plan_cell(structure: NetworkStructure, column: int, row: int, nodes: list[int]) -> CellRecipe:
    """Greedy order: next the node sharing most bonds with the tensor so far (then the smallest result)."""
    left = sorted(nodes, key=lambda v: (-structure.degree(v), v))
    first = left.pop(0)
    labels = list(structure.node_bonds[first])
    order, steps, largest, flops = [first], [], 2 ** len(labels), 0.0
    while left:
        def cost(v: int) -> tuple[int, int, int]:
            mine = structure.node_bonds[v]
            shared = sum(1 for b in mine if b in labels)
            return (-shared, len(labels) + len(mine) - 2 * shared, v)

        v = min(left, key=cost)
        left.remove(v)
        mine = list(structure.node_bonds[v])
        shared = [b for b in labels if b in mine]
        steps.append((tuple(labels.index(b) for b in shared), tuple(mine.index(b) for b in shared)))
        labels = [b for b in labels if b not in shared] + [b for b in mine if b not in shared]
        largest = max(largest, 2 ** len(labels))
        flops += 2.0 ** (len(labels) + len(shared))
        order.append(v)
    return CellRecipe(column, row, tuple(order), tuple(steps), tuple(labels), largest, flops)


def coarse_grain(recipe: CellRecipe,
                 arrays: Sequence[np.ndarray] | Mapping[int, np.ndarray]) -> tuple[np.ndarray, float]:
    """The cell tensor, shape (2,) * len(recipe.labels), and the multiply-adds it took.

    arrays : node id -> array of shape (2,) * degree (a network's arrays, or a mapping).
    """
    tensor = np.asarray(arrays[recipe.nodes[0]], dtype=float)
    flops = 0.0
    for node, axes in zip(recipe.nodes[1:], recipe.steps):
        tensor = np.tensordot(tensor, arrays[node], axes=axes)
        flops += tensor.size * 2.0 ** len(axes[0])
    return tensor, flops
