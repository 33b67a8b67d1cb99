"""Sweep-line contraction: an MPS carried across the plane (published method).

A line moves across the layout in a chosen direction. The bonds it currently
crosses, in their order along the line, are the physical legs of an MPS;
each node is absorbed as the line reaches it. Nodes of degree <= 2 are first
folded into a neighbour (see :mod:`tnarena_sweep_line.merge`). With
``truncate = 'layer'`` (default) bonds may grow to 2 chi while the line
crosses one layer (one lattice spacing along the direction) and are cut to
chi by SVD in canonical form when it has crossed it, where the line is
straight; with ``'node'`` every new bond is cut to chi at once. Incoming
bonds that are not next to each other on the line (ties in projection,
overlapping nodes, non-planar drawings) are brought together by swaps first. The geometry (order, swaps,
windows) is worked out once per structure; contracting replays it.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import tnarena
from tnarena.blas import one_blas_thread
from tnarena.errors import TnarenaError
from tnarena.network import DecodingNetwork, NetworkStructure
from tnarena.strategy import Estimate, Parameter, Strategy

from tnarena_sweep_line.merge import FoldedLayout, fold_small_nodes
from tnarena_sweep_line.mps import LineMPS
from tnarena_sweep_line.ordering import SweepSchedule, WindowOp, build_schedule, layer_ends

#: Directions (degrees) tried when direction = "auto".
AUTO_DIRECTIONS = (0.0, 90.0, 180.0, 270.0, 45.0, 135.0, 225.0, 315.0)

#: With truncate = 'layer': bonds may grow to this many times chi inside a layer.
LAYER_SLACK = 2


@dataclass
class SweepPlan:
    """One schedule per connected piece of the network (their logs add)."""

    schedules: list[SweepSchedule]
    # per piece: (lo, hi, node, axes, perm, count, does a layer end after it)
    steps: list[list[tuple[int, int, int, tuple, tuple, int, bool]]]
    chi: int
    cutoff: float
    layout: FoldedLayout
    cap: int  # most singular values kept while absorbing

    @property
    def max_line(self) -> int:
        return max((s.max_line for s in self.schedules), default=0)


def parse_direction(value: Any) -> float | None:
    """Degrees in [0, 360) for an angle, None for 'auto'; TnarenaError otherwise."""
    if isinstance(value, str) and value.strip().lower() == "auto":
        return None
    try:
        angle = float(value)
    except (TypeError, ValueError):
        raise TnarenaError(
            f"strategy 'sweep' parameter 'direction' takes an angle in degrees or 'auto', not {value!r}."
        ) from None
    if not math.isfinite(angle):
        raise TnarenaError("strategy 'sweep' parameter 'direction' must be a finite angle or 'auto'.")
    return angle % 360.0


class SweepLine(Strategy):
    name = "sweep"
    summary = "sweep line across the layout carrying an MPS of bond dimension chi"
    exact = False
    parameters = (
        Parameter("chi", "int", 16, "largest bond dimension of the line MPS", minimum=1, maximum=4096),
        Parameter("direction", "str", "auto",
                  "sweep direction in degrees, or auto (fewest bonds crossing the line among 8 angles)"),
        Parameter("cutoff", "float", 1e-13, "drop singular values below cutoff x the largest", minimum=0.0,
                  maximum=1.0),
        Parameter("truncate", "str", "layer", "cut bonds to chi once per layer the line crosses (bonds up to "
                  "2 chi inside it), or after every node", choices=("layer", "node")),
    )

    def resolve(self, given=None):
        params = super().resolve(given)
        parse_direction(params["direction"])
        return params

    def plan(self, structure: NetworkStructure, params: Mapping[str, Any]) -> SweepPlan:
        angle = parse_direction(params["direction"])
        layout = fold_small_nodes(structure)
        structure = layout
        pieces = structure.components()
        angles = AUTO_DIRECTIONS if angle is None else (angle,)
        best = None
        for a in angles:
            schedules = [build_schedule(structure, a, piece) for piece in pieces]
            cost = (max((s.max_line for s in schedules), default=0), sum(s.swaps for s in schedules))
            if best is None or cost < best[0]:
                best = (cost, schedules)
        schedules = best[1]
        steps = [[_compile(op, structure) for op in s.ops] for s in schedules]
        chi = int(params["chi"])
        if params["truncate"] == "layer":
            ends = [layer_ends(structure, s) for s in schedules]
            cap = LAYER_SLACK * chi
        else:
            ends = [[False] * len(s.ops) for s in schedules]
            cap = chi
        steps = [[st + (e,) for st, e in zip(sts, es)] for sts, es in zip(steps, ends)]
        return SweepPlan(schedules, steps, chi, float(params["cutoff"]), layout, cap)

    def contract(self, plan: SweepPlan, network: DecodingNetwork) -> Estimate:
        with one_blas_thread():  # many small SVDs: threads only wait on each other
            return self._contract(plan, network)

    def _contract(self, plan: SweepPlan, network: DecodingNetwork) -> Estimate:
        arrays = plan.layout.arrays(network.arrays)
        log_value, flops, largest, discarded = 0.0, 0.0, 1, 0.0
        for steps in plan.steps:
            mps = LineMPS(plan.chi, plan.cutoff)
            for lo, hi, node, axes, perm, count, end in steps:
                mps.apply(lo, hi, None if node < 0 else arrays[node], axes, perm, count, plan.cap)
                if end:
                    mps.compress()
                if mps.log_value == -math.inf:
                    break
            log_value += mps.log_value
            flops += mps.flops
            largest = max(largest, mps.largest)
            discarded += mps.discarded
        stats = {
            "flops": flops,
            "largest_intermediate": float(largest),
            "discarded_weight": discarded,
            "max_line": float(plan.max_line),
            "direction": plan.schedules[0].direction if plan.schedules else 0.0,
        }
        return Estimate(log_value, stats)


def _compile(op: WindowOp, structure: FoldedLayout) -> tuple:
    """tensordot axes and the transpose that put the result in line order."""
    width = op.hi - op.lo
    if op.node < 0:
        perm = (0,) + tuple(1 + off for _, off in op.output) + (width + 1,)
        return (op.lo, op.hi, -1, ((), ()), perm, len(op.output))
    degree = structure.degree(op.node)
    if width == 0:
        w_axes, n_axes = (), ()
        kept: list[int] = []
    else:
        w_axes = tuple(1 + off for off, _ in op.contract)
        n_axes = tuple(axis for _, axis in op.contract)
        kept = [off for off in range(width) if off not in {o for o, _ in op.contract}]
    free = [a for a in range(degree) if a not in set(n_axes)]
    n_left = 1 + len(kept)  # D_left and kept legs
    where = {("w", off): 1 + i for i, off in enumerate(kept)}
    where.update({("n", a): n_left + 1 + i for i, a in enumerate(free)})
    perm = (0,) + tuple(where[tuple(leg)] for leg in op.output) + (n_left,)
    return (op.lo, op.hi, op.node, (w_axes, n_axes), perm, len(op.output))


@tnarena.hookimpl
def tnarena_register_strategies(register):
    register(SweepLine())
