"""Column boundary MPS (published method: boundary MPS contraction of a 2D network).

The layout is turned so the sweep runs in one of four directions and cut into
columns (bins along the sweep) and rows (bins across it), both placed so that
every bond joins cells in the same or adjacent columns and rows; the nodes in
one cell are coarse-grained into one tensor. Of the candidate cuts (uniform or
greedy bins, see ``geometry``) the plan keeps the cheapest (see ``cost``). Column by column, the cells
(chained vertically, an MPO) are applied to a boundary MPS with one site per
row and the result is compressed back to bond dimension chi by SVDs in
canonical form. Connected pieces are contracted separately and their logs
added. The cutting and every tensordot spec are worked out once per structure
(the plan); contracting replays them.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import tnarena
from tnarena.blas import one_blas_thread
from tnarena.network import DecodingNetwork, NetworkStructure
from tnarena.strategy import Estimate, Parameter, Strategy

from tnarena_boundary_columns.cells import coarse_grain
from tnarena_boundary_columns.geometry import DIRECTIONS
from tnarena_boundary_columns.mps import BoundaryMPS
from tnarena_boundary_columns.cost import cheapest_estimate, plan_cheapest
from tnarena_boundary_columns.schedule import PiecePlan


@dataclass(frozen=True)
class ColumnsPlan:
    """One schedule per connected piece (their logs add), and the truncation settings."""

    pieces: tuple[PiecePlan, ...]
    chi: int
    cutoff: float
    direction: int

    @property
    def max_sites(self) -> int:
        return max((p.max_sites for p in self.pieces), default=0)

    @property
    def columns(self) -> int:
        return max((len(p.columns) for p in self.pieces), default=0)


class ColumnBoundaryMPS(Strategy):
    name = "columns"
    summary = "column boundary MPS: columns of coarse-grained cells applied as MPOs, compressed to chi"
    exact = False
    parameters = (
        Parameter("chi", "int", 16, "largest bond dimension of the boundary MPS", minimum=1, maximum=4096),
        Parameter("direction", "int", 0, "direction the columns are swept in, degrees",
                  choices=tuple(DIRECTIONS)),
        Parameter("width", "float", 0.0,
                  "column width in position units; 0: automatic (the cheapest of uniform and greedy cuts that keep "
                  "every bond within adjacent columns)",
                  minimum=0.0),
        Parameter("max_cell", "int", 2**22, "largest cell tensor allowed (bond legs only), in elements",
                  minimum=1),
        Parameter("cutoff", "float", 1e-13, "drop singular values below cutoff x the largest", minimum=0.0,
                  maximum=1.0),
    )

    def plan(self, structure: NetworkStructure, params: Mapping[str, Any]) -> ColumnsPlan:
        direction = int(params["direction"])
        pieces = tuple(
            plan_cheapest(structure, piece, direction, float(params["width"]), int(params["max_cell"]),
                          int(params["chi"]), float(params["cutoff"]))
            for piece in structure.components()
        )
        return ColumnsPlan(pieces, int(params["chi"]), float(params["cutoff"]), direction)

    def cost(self, structure: NetworkStructure, params: Mapping[str, Any]) -> dict[str, float]:
        """Columns, largest column (most boundary-MPS sites) and estimated flops at chi, from shapes alone.

        Each piece's cut is the one with the smallest :func:`estimate_flops` (no probe
        contraction, so it may differ from the cut :meth:`plan` keeps). Raises
        TnarenaError where every cut breaks ``max_cell``.
        """
        columns, sites, flops = 0, 0, 0.0
        for piece in structure.components():
            best = cheapest_estimate(structure, piece, int(params["direction"]), float(params["width"]),
                                     int(params["max_cell"]), int(params["chi"]))
            columns, sites = max(columns, len(best[1].columns)), max(sites, best[1].max_sites)
            flops += best[0]
        return {"columns": float(columns), "largest_column": float(sites), "flops_estimate": flops}

    def contract(self, plan: ColumnsPlan, network: DecodingNetwork) -> Estimate:
        with one_blas_thread():  # many small SVDs: threads only wait on each other
            return self._contract(plan, network)

    def _contract(self, plan: ColumnsPlan, network: DecodingNetwork) -> Estimate:
        log_value, flops, largest, discarded = 0.0, 0.0, 1, 0.0
        for piece in plan.pieces:
            cells = []
            for recipe in piece.cells:
                tensor, cost = coarse_grain(recipe, network.arrays)
                cells.append(tensor)
                flops += cost
                largest = max(largest, tensor.size)
            mps = BoundaryMPS(plan.chi, plan.cutoff)
            for ops in piece.columns:
                mps.absorb(ops, cells)
                if not math.isfinite(mps.log_value):
                    break
            log_value += mps.log_value
            flops += mps.flops
            largest = max(largest, mps.largest)
            discarded += mps.discarded
            if log_value == -math.inf:
                break
        stats = {
            "flops": flops,
            "largest_intermediate": float(largest),
            "discarded_weight": discarded,
            "columns": float(plan.columns),
            "max_sites": float(plan.max_sites),
            "direction": float(plan.direction),
        }
        return Estimate(log_value, stats)


@tnarena.hookimpl
def tnarena_register_strategies(register):
    register(ColumnBoundaryMPS())
