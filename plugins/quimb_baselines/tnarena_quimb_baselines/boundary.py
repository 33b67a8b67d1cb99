"""``quimb_boundary``: quimb's 2D boundary-MPS contraction on the square lattice.

Source: boundary MPS contraction of a 2D tensor network (Verstraete and
Cirac, arXiv:cond-mat/0407066 (2004); from memory, the method is common
practice), as implemented by quimb's ``TensorNetwork2D.contract_boundary``.

``plan`` works out, once per structure, the unit cell of every node (see
:mod:`tnarena_quimb_baselines.grid`) and how each cell is fused into one site
tensor (:mod:`tnarena_quimb_baselines.fusion`); ``contract`` builds the sites
with one einsum per cell, as a ``TensorNetwork2D``, and lets quimb contract
its boundary inwards with bond chi, equalizing norms as it goes so the
exponent is carried separately (values far below float64's range stay finite
in ln).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from tnarena.blas import one_blas_thread
from tnarena.errors import TnarenaError
from tnarena.network import DecodingNetwork, NetworkStructure
from tnarena.strategy import Estimate, Parameter, Strategy

from tnarena_quimb_baselines.fusion import CellRecipe, cell_recipes, fused_grid
from tnarena_quimb_baselines.grid import GridLayout, square_grid_layout
from tnarena_quimb_baselines.scalars import log_of_stripped, run_or_zero

SIDES = ("xmin", "xmax", "ymin", "ymax")


def parse_sequence(value: Any) -> tuple[str, ...] | None:
    """quimb's boundary sequence from 'auto' (None) or comma-separated sides; TnarenaError otherwise."""
    text = str(value).strip().lower()
    if text == "auto":
        return None
    sides = tuple(s.strip() for s in text.split(","))
    if not sides or any(s not in SIDES for s in sides):
        raise TnarenaError(
            f"strategy 'quimb_boundary' parameter 'sequence' takes 'auto' or comma-separated sides from "
            f"{', '.join(SIDES)} (e.g. 'xmin,xmax'), not {value!r}."
        )
    return sides


@dataclass
class BoundaryPlan:
    """The grid layout of one structure, how its cells are fused, and the boundary settings."""

    layout: GridLayout
    recipes: tuple[CellRecipe, ...]
    chi: int
    cutoff: float
    sequence: tuple[str, ...] | None


class QuimbBoundary(Strategy):
    """quimb's ``contract_boundary`` on the square lattice, one grid site per unit cell (a baseline)."""

    name = "quimb_boundary"
    summary = "baseline: quimb TensorNetwork2D.contract_boundary (boundary MPS, bond chi), square lattice only"
    exact = False
    parameters = (
        Parameter("chi", "int", 16, "largest bond of the boundary MPS (quimb max_bond)", minimum=1, maximum=4096),
        Parameter("cutoff", "float", 1e-13, "quimb singular value cutoff, relative to the largest", minimum=0.0,
                  maximum=1.0),
        Parameter("sequence", "str", "auto", "sides the boundary moves in from: auto (quimb's choice: both ends "
                  "of the longer grid axis) or comma-separated xmin, xmax, ymin, ymax"),
    )

    def resolve(self, given=None):
        params = super().resolve(given)
        parse_sequence(params["sequence"])
        return params

    def plan(self, structure: NetworkStructure, params: Mapping[str, Any]) -> BoundaryPlan:
        layout = square_grid_layout(structure)
        return BoundaryPlan(
            layout=layout,
            recipes=cell_recipes(structure, layout),
            chi=int(params["chi"]),
            cutoff=float(params["cutoff"]),
            sequence=parse_sequence(params["sequence"]),
        )

    def contract(self, plan: BoundaryPlan, network: DecodingNetwork) -> Estimate:
        with one_blas_thread():  # the same BLAS policy as every built-in strategy
            return self._contract(plan, network)

    def _contract(self, plan: BoundaryPlan, network: DecodingNetwork) -> Estimate:
        """ln |value| by quimb's boundary contraction, then its exact contraction of what is left.

        quimb does not report the work of the boundary steps: the stats hold
        ``largest_intermediate`` over the tensors seen between quimb calls (site
        tensors, the boundary left at the end, the final exact step), a lower
        bound on the true peak; ``max_bond`` reached; ``final_flops`` of the
        final exact step only. No ``flops`` and no ``discarded_weight``.
        """
        if network.structure.num_nodes != len(plan.layout.cells):
            raise TnarenaError("strategy 'quimb_boundary' got a network whose structure is not the one it planned for.")
        grid = fused_grid(plan.recipes, plan.layout, network)
        largest = max(t.size for t in grid)
        rest = run_or_zero(lambda: grid.contract_boundary(
            max_bond=plan.chi,
            cutoff=plan.cutoff,
            sequence=plan.sequence,
            equalize_norms=1.0,
            final_contract=False,
        ))
        if rest is None:
            return Estimate(-math.inf, {"largest_intermediate": float(largest)})
        largest = max(largest, max(t.size for t in rest))
        max_bond = max(rest.max_bond(), 1)
        # quimb's own choice for the final exact step; cotengra caches the path per shape
        tree = rest.contraction_tree(rest.contraction_path(optimize="auto-hq"))
        mantissa, exponent = rest.contract(all, optimize=tree, strip_exponent=True, check_zero=True)
        stats = {
            "largest_intermediate": float(max(largest, tree.max_size())),
            "max_bond": float(max_bond),
            "final_flops": float(tree.contraction_cost()),
        }
        return Estimate(log_of_stripped(mantissa, exponent, strategy=self.name), stats)

