"""One site array per unit cell for quimb's ``TensorNetwork2D``, the recipe worked out once per structure.

quimb's 2D class wants one tensor per grid cell and one bond per pair of
neighbouring cells. Which nodes a cell holds, which of their bonds stay inside
it (summed), which go to which neighbour (fused into one bond, in bond-id
order on both sides) and the einsum path all follow from the structure, so
:func:`cell_recipes` works them out at plan time and :func:`fused_grid` runs
one ``np.einsum`` per cell for each array set. (Doing the same with quimb's
``contract_tags`` and ``fuse_multibonds`` on every contraction took 160 ms per
network at d = 25, depolarizing, 10-40% of the baseline's time.)
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tnarena.errors import TnarenaError
from tnarena.network import DecodingNetwork, NetworkStructure
from tnarena_quimb_baselines.grid import Cell, GridLayout

SITE_TAG, X_TAG, Y_TAG = "I{},{}", "X{}", "Y{}"

#: Most distinct bonds among one cell's nodes: np.einsum labels axes with the 52 ASCII letters.
MAX_CELL_LEGS = 52


@dataclass(frozen=True)
class CellRecipe:
    """How to build one cell's site array.

    members : the nodes in the cell (empty: the site is the scalar 1)
    operands : einsum sublist of each member's array (labels local to the cell)
    output : labels of the legs that leave the cell, grouped by neighbour in ``inds`` order
    path : np.einsum contraction path (False where there is nothing to contract)
    shape : the site array's shape, one axis per neighbour (2^legs to it)
    inds : quimb index name of the bond to each neighbour (the same on both sides)
    """

    cell: Cell
    members: tuple[int, ...]
    operands: tuple[tuple[int, ...], ...]
    output: tuple[int, ...]
    path: list | bool
    shape: tuple[int, ...]
    inds: tuple[str, ...]


def _einsum_args(arrays, operands) -> list:
    """np.einsum's interleaved arguments: each array followed by its sublist."""
    args: list = []
    for array, sub in zip(arrays, operands):
        args += [array, list(sub)]
    return args


def _bond_name(a: Cell, b: Cell) -> str:
    (r1, c1), (r2, c2) = sorted((a, b))
    return f"g{r1},{c1}_{r2},{c2}"


def cell_recipes(structure: NetworkStructure, layout: GridLayout) -> tuple[CellRecipe, ...]:
    """One recipe per grid cell, row by row (the layout must come from this structure)."""
    cells = layout.cells
    bonds = np.asarray(structure.bonds, dtype=int).reshape(-1, 2)
    members: dict[Cell, list[int]] = {}
    for node, cell in enumerate(cells):
        members.setdefault(cell, []).append(node)
    lx, ly = layout.shape
    recipes = []
    for row in range(lx):
        for col in range(ly):
            cell = (row, col)
            nodes = tuple(members.get(cell, ()))
            if not nodes:
                recipes.append(CellRecipe(cell, (), (), (), False, (), ()))
                continue
            used = sorted({b for v in nodes for b in structure.node_bonds[v]})
            if len(used) > MAX_CELL_LEGS:
                raise TnarenaError(
                    f"strategy 'quimb_boundary' would fuse {len(used)} bonds in the unit cell {cell}, over the "
                    f"{MAX_CELL_LEGS} numpy's einsum can label; use sweep or quimb_compressed for this network.")
            label = {b: i for i, b in enumerate(used)}
            to: dict[Cell, list[int]] = {}
            for b in used:
                u, v = (int(x) for x in bonds[b])
                other = cells[v] if cells[u] == cell else cells[u]
                if other != cell:
                    to.setdefault(other, []).append(b)
            neighbours = sorted(to)
            output = tuple(label[b] for n in neighbours for b in sorted(to[n]))
            operands = tuple(tuple(label[b] for b in structure.node_bonds[v]) for v in nodes)
            path: list | bool = False
            if len(nodes) > 2:
                dummies = [np.ones((2,) * len(sub)) for sub in operands]
                path = np.einsum_path(*_einsum_args(dummies, operands), list(output), optimize="greedy")[0]
            recipes.append(CellRecipe(cell, nodes, operands, output, path,
                                      tuple(2 ** len(to[n]) for n in neighbours),
                                      tuple(_bond_name(cell, n) for n in neighbours)))
    return tuple(recipes)


def fused_grid(recipes: tuple[CellRecipe, ...], layout: GridLayout, network: DecodingNetwork):
    """The network as a quimb ``TensorNetwork2D``: one tensor per cell, tagged ``I{row},{col}``,
    ``X{row}`` and ``Y{col}``, a single bond between neighbouring cells (``log_scale`` left out)."""
    import quimb.tensor as qtn

    arrays = network.arrays
    tensors = []
    for r in recipes:
        row, col = r.cell
        if not r.members:
            data = np.ones(())
        else:
            members = [arrays[v] for v in r.members]
            data = np.einsum(*_einsum_args(members, r.operands), list(r.output), optimize=r.path).reshape(r.shape)
        tags = (SITE_TAG.format(row, col), X_TAG.format(row), Y_TAG.format(col))
        tensors.append(qtn.Tensor(data, inds=r.inds, tags=tags))
    lx, ly = layout.shape
    return qtn.TensorNetwork(tensors, virtual=True).view_as_(
        qtn.TensorNetwork2D, Lx=lx, Ly=ly, site_tag_id=SITE_TAG, x_tag_id=X_TAG, y_tag_id=Y_TAG)
