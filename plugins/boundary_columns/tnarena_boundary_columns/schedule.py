"""The replayable column schedule of one connected piece (computed once per structure).

The boundary MPS after column c has one site per row of column c that has
bonds into column c + 1; a site's physical leg groups those bonds (sorted by
bond id, dimension 2 ** count). Applying column c + 1 (an MPO whose cells are
chained vertically) pairs every incoming site with the cells of the rows
nearest to it: one *group*. Contracting a group (site and cells, shared bonds
summed) gives one site of the exact MPO x MPS product, whose virtual legs are
(old virtual leg, bonds to the group below / above). Cells below or above
every incoming site form groups of their own (the old virtual leg there has
dimension 1), so no old bond needs to be carried through a cell. Since every
bond joins adjacent rows, bonds only join adjacent groups.
"""

from __future__ import annotations

from bisect import bisect_left
from dataclasses import dataclass

from tnarena.errors import TnarenaError
from tnarena.network import NetworkStructure

from tnarena_boundary_columns.cells import CellRecipe, plan_cell
from tnarena_boundary_columns.geometry import Grid

#: Labels of the incoming site's virtual legs in a group's label list (bond ids are >= 0).
LEFT, RIGHT = -1, -2


@dataclass(frozen=True)
class GroupOp:
    """One site of the MPO x MPS product.

    old_site : int
        Index of the incoming MPS site, or -1 (then the virtual legs have dimension 1).
    old_rank : int
        Bonds grouped in that site's physical leg (its shape is (Dl, 2 ** old_rank, Dr)).
    cells : tuple of int
        Cell tensors absorbed, in row order (indices into the piece's cells).
    axes : tuple of (tuple of int, tuple of int)
        ``np.tensordot`` axes (product so far, cell) for each cell.
    perm : tuple of int
        Transpose of the product into (Dl, down bonds, physical bonds, Dr, up bonds).
    down, up : int
        Bonds joined to the group below / above (they widen the virtual legs by 2 ** count).
    rows : tuple of int
        Physical bonds of each new site this product is split into (rows with any), in row order.
    """

    old_site: int
    old_rank: int
    cells: tuple[int, ...]
    axes: tuple[tuple[tuple[int, ...], tuple[int, ...]], ...]
    perm: tuple[int, ...]
    down: int
    up: int
    rows: tuple[int, ...]


@dataclass(frozen=True)
class PiecePlan:
    """Everything ``contract`` replays for one connected piece.

    grid : Grid; cells : tuple of CellRecipe; columns : tuple of tuple of GroupOp (one tuple
    per column, groups in row order); max_sites : most sites the boundary MPS has;
    largest_cell : elements of the largest cell tensor (or bond-only product) planned.
    """

    grid: Grid
    cells: tuple[CellRecipe, ...]
    columns: tuple[tuple[GroupOp, ...], ...]
    max_sites: int
    largest_cell: int


def schedule_piece(structure: NetworkStructure, grid: Grid, direction: int, max_cell: int) -> PiecePlan:
    """Cells, groups and tensordot specs of one connected piece cut by ``grid``.

    Raises TnarenaError when a cell tensor (bond legs only) would exceed max_cell elements.
    """
    members: dict[tuple[int, int], list[int]] = {}
    for v in grid.nodes:
        members.setdefault((int(grid.column[v]), int(grid.row[v])), []).append(v)
    keys = sorted(members)
    cells = tuple(plan_cell(structure, c, r, members[(c, r)]) for c, r in keys)
    for cell in cells:
        _check_size(cell.largest, cell.column, cell.row, grid, direction, max_cell)
    index = {key: i for i, key in enumerate(keys)}
    n_columns = keys[-1][0] + 1 if keys else 0
    incoming: list[tuple[int, tuple[int, ...]]] = []  # (row, bond ids) of each MPS site
    columns, max_sites = [], 0
    largest = max((c.largest for c in cells), default=1)
    for col in range(n_columns):
        rows = [r for c, r in keys if c == col]
        groups = _groups([r for r, _ in incoming], rows)
        holders: dict[int, list[int]] = {}
        for g, (k, cell_rows) in enumerate(groups):
            mine = list(incoming[k][1]) if k >= 0 else []
            for r in cell_rows:
                mine += cells[index[(col, r)]].labels
            for b in mine:
                holders.setdefault(b, []).append(g)
        ops, outgoing = [], []
        for g, (k, cell_rows) in enumerate(groups):
            op, sites, size = _plan_group(g, k, col, incoming, [index[(col, r)] for r in cell_rows], cells,
                                          holders, structure, grid)
            _check_size(size, col, cell_rows[0] if cell_rows else incoming[k][0], grid, direction, max_cell)
            largest = max(largest, size)
            ops.append(op)
            outgoing += sites
        columns.append(tuple(ops))
        incoming = outgoing
        max_sites = max(max_sites, len(incoming))
    if incoming:
        raise RuntimeError("strategy 'columns': bonds left open after the last column (schedule bug)")
    return PiecePlan(grid, cells, tuple(columns), max_sites, largest)


def _groups(site_rows: list[int], cell_rows: list[int]) -> list[tuple[int, list[int]]]:
    """(incoming site or -1, cell rows) in row order: each cell joins the nearest site (ties: lower)."""
    if not site_rows:
        return [(-1, [r]) for r in cell_rows]
    below = [(-1, [r]) for r in cell_rows if r < site_rows[0]]
    above = [(-1, [r]) for r in cell_rows if r > site_rows[-1]]
    middle: list[tuple[int, list[int]]] = [(k, []) for k in range(len(site_rows))]
    for r in cell_rows:
        if site_rows[0] <= r <= site_rows[-1]:
            k = bisect_left(site_rows, r)
            if site_rows[k] != r and r - site_rows[k - 1] <= site_rows[k] - r:
                k -= 1
            middle[k][1].append(r)
    return below + middle + above


def _plan_group(g: int, k: int, col: int, incoming, cell_ids: list[int], cells: tuple[CellRecipe, ...],
                holders: dict[int, list[int]], structure: NetworkStructure, grid: Grid):
    """The GroupOp of group g, the new sites it yields as (row, bond ids), and its bond-only size."""
    labels = [LEFT] + (list(incoming[k][1]) if k >= 0 else []) + [RIGHT]
    axes, size = [], 2 ** (len(labels) - 2)
    for i in cell_ids:
        mine = cells[i].labels
        shared = [b for b in labels if b in mine]
        axes.append((tuple(labels.index(b) for b in shared), tuple(mine.index(b) for b in shared)))
        labels = [b for b in labels if b not in shared] + [b for b in mine if b not in shared]
        size = max(size, 2 ** (len(labels) - 2))
    down, up = [], []
    physical: dict[int, list[int]] = {cells[i].row: [] for i in cell_ids}
    for b in labels:
        if b < 0:
            continue
        others = [h for h in holders[b] if h != g]
        if not others:
            physical[_row_in(structure, grid, b, col)].append(b)
        elif others == [g - 1]:
            down.append(b)
        elif others == [g + 1]:
            up.append(b)
        else:
            raise RuntimeError(f"strategy 'columns': bond {b} joins non-adjacent groups (schedule bug)")
    down.sort()
    up.sort()
    sites = [(r, tuple(sorted(bs))) for r, bs in sorted(physical.items()) if bs]
    flat = [b for _, bs in sites for b in bs]
    order = [LEFT] + down + flat + [RIGHT] + up
    op = GroupOp(k, len(incoming[k][1]) if k >= 0 else 0, tuple(cell_ids), tuple(axes),
                 tuple(labels.index(b) for b in order), len(down), len(up), tuple(len(bs) for _, bs in sites))
    return op, sites, size


def _row_in(structure: NetworkStructure, grid: Grid, bond: int, column: int) -> int:
    """Row of the end of ``bond`` in ``column``, whose other end must be in the next column."""
    u, v = (int(x) for x in structure.bonds[bond])
    if grid.column[u] != column:
        u, v = v, u
    if grid.column[u] != column or grid.column[v] != column + 1:
        raise RuntimeError(f"strategy 'columns': bond {bond} skips a column (schedule bug)")
    return int(grid.row[u])


def _check_size(size: int, column: int, row: int, grid: Grid, direction: int, max_cell: int) -> None:
    """TnarenaError when a planned tensor (bond legs only) exceeds max_cell elements."""
    if size <= max_cell:
        return
    raise TnarenaError(
        f"strategy 'columns': the cell at column {column}, row {row} (direction {direction}, column width "
        f"{grid.width:.6g}) would hold {size} elements, more than max_cell = {max_cell}; give a smaller "
        f"column width (parameter 'width', 0 for the least allowed), another direction, or a larger max_cell."
    )
