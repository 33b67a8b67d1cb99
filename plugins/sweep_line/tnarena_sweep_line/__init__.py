"""Sweep-line contraction: an MPS carried across the plane (published method).

A line moves across the layout in a chosen direction. The bonds it currently
crosses, in their order along the line, are the physical legs of an MPS;
each node is absorbed as the line reaches it. Nodes of degree <= 2 are first
folded into a neighbour (see :mod:`tnarena_sweep_line.merge`). With
``truncate = 'layer'`` (default) bonds may grow to 2 chi while the line
crosses one layer (one lattice spacing along the direction) and are cut to
chi by SVD in canonical form when it has crossed it, where the line is
straight; with ``'node'`` every new bond is cut to chi at once. With ``far_chi`` set, only
the last ``near_layers`` layers before a line stops are cut to chi and earlier ones to far_chi:
a truncation error made far from where the lines are joined is mostly damped by the layers
absorbed after it (measured in benchmarks/README.md), so those layers can be cut harder. Incoming
bonds that are not next to each other on the line (ties in projection,
overlapping nodes, non-planar drawings) are brought together by swaps first. The geometry (order, swaps,
windows) is worked out once per structure; contracting replays it.

A plan remembers, per side, the arrays its last ``MEMOS`` contractions absorbed and the line at
their latest layer ends (``SNAPSHOTS``); the next contraction resumes from whichever of them lets
it start latest: the last layer end before its first different array. The class networks of one
syndrome differ only near their logical operator, so a side that never meets it is taken over
whole (``stats['reused_steps']`` counts the steps taken over), whatever order the classes come
in. The values are the same, bit for bit, as from scratch; ``flops`` and ``discarded_weight``
are those of the whole contraction, steps taken over included. The memo holds up to MEMOS x
(SNAPSHOTS + 1) lines per side (at d = 25, chi 36 about 1.4 MB each).
"""

from __future__ import annotations

import dataclasses
import functools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

import tnarena
from tnarena.errors import TnarenaError
from tnarena.network import DecodingNetwork, NetworkStructure
from tnarena.strategy import Estimate, Parameter, Strategy

from tnarena_sweep_line import batched as _batched
from tnarena_sweep_line.merge import FoldedLayout, fold_small_nodes
from tnarena_sweep_line.mps import LineMPS, Step, log_overlap
from tnarena_sweep_line.sharing import PrefixGroups, take
from tnarena_sweep_line.ordering import (SweepSchedule, WindowOp, build_schedule, layer_ends, reorder_line,
                                         split_at_middle)

#: Directions (degrees) tried when direction = "auto".
AUTO_DIRECTIONS = (0.0, 90.0, 180.0, 270.0, 45.0, 135.0, 225.0, 315.0)

#: Rescale the line every this many steps (and at layer ends): each step changes its norm by at most
#: 2^(legs of one node), so 8 steps stay far inside float64's range.
RESCALE_EVERY = 8

#: With truncate = 'layer': bonds may grow to this many times chi inside a layer.
LAYER_SLACK = 2

#: Line states kept per side and remembered contraction for the next one to resume from (the latest
#: layer ends).
SNAPSHOTS = 3

#: Contractions remembered per side. In direction 90 the decoder's class order (0,0), (1,0), (1,1),
#: (0,1) puts the two classes that differ only in one side's last layer (by Z-bar, the middle row)
#: first and last, with (1,0) and (1,1) contracted between them: three are needed to keep (0,0).
MEMOS = 3


@dataclass
class SweepPlan:
    """Per connected piece of the network (their logs add): one schedule, or two that meet at a cut."""

    schedules: list[tuple[SweepSchedule, ...]]
    steps: list[tuple[list[Step], ...]]  # per piece, per side (each step carries its own cap and chi)
    cutoff: float
    layout: FoldedLayout
    fold_paths: dict = dataclasses.field(default_factory=dict)  # einsum paths of the batched fold, by group
    memo: dict = dataclasses.field(default_factory=dict, repr=False)  # (piece, side) -> [_SideMemo], newest first

    @property
    def max_line(self) -> int:
        return max((s.max_line for sides in self.schedules for s in sides), default=0)

    def __getstate__(self) -> dict:
        return {**self.__dict__, "memo": {}}  # the memo is this process's, not part of the plan


@dataclass
class _SideMemo:
    """What one contraction of one side leaves for later ones with the same plan (lines are shared,
    never written: a contraction that resumes from one copies it).

    content : the absorbed arrays, flattened and joined in step order; offsets : where each step's
    array starts in it (shape (steps + 1,)); snapshots : (steps done, line) at the latest layer
    ends; final : the line at the end.
    """

    content: np.ndarray
    offsets: np.ndarray
    snapshots: list[tuple[int, LineMPS]]
    final: LineMPS


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
        Parameter("sides", "int", 2, "sweep from one end (1), or from both ends to a middle cut where the two "
                  "lines are joined exactly (2)", choices=(1, 2)),
        Parameter("far_chi", "int", 0, "bond dimension for layers more than near_layers before the line stops "
                  "(0: chi); truncation errors made there are mostly damped before the lines meet", minimum=0,
                  maximum=4096),
        Parameter("near_layers", "int", 6, "layers before the line stops that are cut to chi when far_chi is set",
                  minimum=0, maximum=100000),
    )

    def resolve(self, given=None):
        params = super().resolve(given)
        parse_direction(params["direction"])
        far = params["far_chi"]
        if far > params["chi"]:
            raise TnarenaError(
                f"strategy 'sweep' parameter 'far_chi' ({far}) must not exceed 'chi' ({params['chi']}): chi is the "
                "bond dimension near where the line stops, the largest; 0 means far_chi = chi.")
        if far and far < params["chi"] and params["truncate"] != "layer":
            raise TnarenaError("strategy 'sweep' parameter 'far_chi' counts layers: it needs truncate = 'layer'.")
        return params

    def plan(self, structure: NetworkStructure, params: Mapping[str, Any]) -> SweepPlan:
        angle = parse_direction(params["direction"])
        layout = fold_small_nodes(structure)
        pieces = layout.components()
        sides = int(params["sides"])
        best = None
        for a in AUTO_DIRECTIONS if angle is None else (angle,):
            schedules = [_piece_schedules(layout, a, piece, sides) for piece in pieces]
            flat = [s for group in schedules for s in group]
            cost = (max((s.max_line for s in flat), default=0), sum(s.swaps for s in flat))
            if best is None or cost < best[0]:
                best = (cost, schedules)
        schedules = best[1]
        chi = int(params["chi"])
        far_chi = int(params["far_chi"]) or chi
        layered = params["truncate"] == "layer"
        steps = []
        for group in schedules:
            per_side = []
            for sched in group:
                ends = layer_ends(layout, sched) if layered else [False] * len(sched.ops)
                if len(group) == 2 and ends:
                    ends[-1] = False  # the two lines are joined exactly, wide bonds and all
                chis = layer_chis(ends, chi, far_chi, int(params["near_layers"]))
                steps_here = [_compile(op, layout, e) for op, e in zip(sched.ops, ends)]
                per_side.append([dataclasses.replace(st, rescale=(k % RESCALE_EVERY == 0 or st.end), chi=c,
                                                     cap=LAYER_SLACK * c if layered else c)
                                 for k, (st, c) in enumerate(zip(steps_here, chis))])
            steps.append(tuple(per_side))
        return SweepPlan(schedules, steps, float(params["cutoff"]), layout)

    def contract(self, plan: SweepPlan, network: DecodingNetwork) -> Estimate:
        with _blas().limit(limits=1, user_api="blas"):  # many small SVDs: threads only wait on each other
            return self._contract(plan, network)

    def contract_batch(self, plan: SweepPlan, networks: Sequence[DecodingNetwork]) -> list[Estimate]:
        """Contract many array sets of the plan's structure at once (a leading batch axis on every site).

        The schedule is replayed once for the whole batch with stacked matrix products, QRs and
        SVDs; each element is normalised on its own and its log carried. A truncated bond keeps,
        for every element, the largest count any element needs under chi and the cutoff (capped at
        chi), so an element may keep a few more singular values than alone, all below ``cutoff``
        times its largest: values agree with :meth:`contract` to within the cutoff, not bit for bit,
        and do not depend on the batch-mates beyond that.
        """
        if not networks:
            return []
        with _blas().limit(limits=1, user_api="blas"):
            return self._contract_batch(plan, networks)

    def _contract_batch(self, plan: SweepPlan, networks: Sequence[DecodingNetwork]) -> list[Estimate]:
        batch = len(networks)
        arrays = _batched.stacked_arrays(plan.layout, networks, plan.fold_paths)
        log_value, discarded = np.zeros(batch), np.zeros(batch)
        flops, largest = 0.0, 1
        for per_side in plan.steps:
            runs = [_run_batch(steps, arrays, plan, batch) for steps in per_side]
            if len(runs) == 1:
                log_value += runs[0][0].log_value[runs[0][1]]
            else:  # join each pair of groups that some element has, once
                (left, a), (right, b) = runs
                pairs = np.stack([a, b], axis=1)
                unique, inverse = np.unique(pairs, axis=0, return_inverse=True)
                joined = _batched.log_overlap(left.take(unique[:, 0]), right.take(unique[:, 1]))
                log_value += joined[inverse.reshape(-1)]
            for mps, labels in runs:
                flops += mps.flops
                largest = max(largest, mps.largest)
                discarded += mps.discarded[labels]
        first = plan.schedules[0][0] if plan.schedules else None
        common = {
            "flops": flops,
            "largest_intermediate": float(largest),
            "max_line": float(plan.max_line),
            "direction": first.direction if first else 0.0,
            "sides": float(max((len(g) for g in plan.schedules), default=1)),
        }
        return [Estimate(float(log_value[b]), {**common, "discarded_weight": float(discarded[b])})
                for b in range(batch)]

    def _contract(self, plan: SweepPlan, network: DecodingNetwork) -> Estimate:
        arrays = plan.layout.arrays(network.arrays)
        log_value, flops, largest, discarded, reused = 0.0, 0.0, 1, 0.0, 0
        for index, per_side in enumerate(plan.steps):
            lines = []
            for side, steps in enumerate(per_side):
                mps, resumed = _run_resuming(steps, arrays, plan, (index, side))
                lines.append(mps)
                reused += resumed
            piece = lines[0].log_value if len(lines) == 1 else log_overlap(*lines)
            log_value += piece
            for mps in lines:
                flops += mps.flops
                largest = max(largest, mps.largest)
                discarded += mps.discarded
            if piece == -math.inf:
                break
        first = plan.schedules[0][0] if plan.schedules else None
        stats = {
            "flops": flops,
            "largest_intermediate": float(largest),
            "discarded_weight": discarded,
            "max_line": float(plan.max_line),
            "direction": first.direction if first else 0.0,
            "sides": float(max((len(g) for g in plan.schedules), default=1)),
            "reused_steps": float(reused),
        }
        return Estimate(log_value, stats)


@functools.cache
def _blas():
    """One threadpoolctl controller for the process: building one scans the loaded libraries
    (0.4 ms, 2-10% of a bit-flip contraction at d = 9); limiting through it costs 10 us."""
    from threadpoolctl import ThreadpoolController

    return ThreadpoolController()


def _run_resuming(steps: list[Step], arrays: list, plan: SweepPlan, key: tuple[int, int]) -> tuple[LineMPS, int]:
    """Replay one side's schedule on the arrays, resuming from the remembered contraction with this
    plan (one of the last ``MEMOS``) that absorbed the same arrays longest: the line it leaves, and
    how many steps were taken over.

    Class networks of one syndrome differ only near their logical operator, so a side that never
    meets it is not redone and one that meets it late restarts from the layer end before. The
    line is a function of the arrays absorbed so far alone, so the result is the same, bit for
    bit, as contracting from scratch.
    """
    nodes = [arrays[step.node].reshape(-1) for step in steps if step.node >= 0]
    content = np.concatenate(nodes) if nodes else np.zeros(0)
    memos = plan.memo.get(key, [])
    if memos:  # the offsets follow from the plan alone: worked out on its first contraction
        offsets = memos[0].offsets
    else:
        sizes = np.zeros(len(steps) + 1, dtype=np.int64)
        sizes[1:] = [arrays[step.node].size if step.node >= 0 else 0 for step in steps]
        offsets = np.cumsum(sizes)
    start, source = 0, None
    for memo in memos:
        if memo.content.shape != content.shape:
            continue
        differ = np.flatnonzero(memo.content != content)
        if differ.size == 0:  # the same arrays as that contraction: its line, and it becomes the newest
            plan.memo[key] = [memo] + [m for m in memos if m is not memo]
            return memo.final, len(steps)
        same = int(np.searchsorted(offsets, differ[0], side="right")) - 1  # steps whose arrays agree
        done = max((d for d, _ in memo.snapshots if d <= same), default=0)
        if done > start:
            start, source = done, memo
    if source is None:
        mps, snapshots = LineMPS(plan.cutoff), []
    else:
        mps = next(line for d, line in source.snapshots if d == start).copy()
        snapshots = [s for s in source.snapshots if s[0] <= start]
    for k in range(start, len(steps)):
        step = steps[k]
        mps.apply(step, None if step.node < 0 else arrays[step.node])
        if step.end:
            mps.compress(step.chi)
            snapshots = (snapshots + [(k + 1, mps.copy())])[-SNAPSHOTS:]
        if mps.log_value == -math.inf:
            break
    plan.memo[key] = ([_SideMemo(content, offsets, snapshots, mps)] + memos)[:MEMOS]
    return mps, start


def _run_batch(steps: list[Step], arrays: list, plan: SweepPlan,
               batch: int) -> tuple[_batched.BatchLineMPS, np.ndarray]:
    """Replay one schedule on stacked arrays (each (B,) + node shape); every element runs to the end.

    Elements that absorbed the same arrays so far share a line (:mod:`tnarena_sweep_line.sharing`):
    returns the lines, one per group, and each element's group (shape (B,)).
    """
    groups = PrefixGroups(batch)
    mps = _batched.BatchLineMPS(groups.count, plan.cutoff)
    start = 0
    for stop in [k + 1 for k, step in enumerate(steps) if step.end] + [len(steps)]:
        layer = steps[start:stop]
        nodes = sorted({step.node for step in layer if step.node >= 0})
        parent = groups.refine([arrays[v] for v in nodes])
        if parent is not None:
            mps = mps.take(parent)
        mine = {v: arrays[v] if groups.count == batch else take(arrays[v], groups.rep) for v in nodes}
        for step in layer:
            mps.apply(step, None if step.node < 0 else mine[step.node])
            if step.end:
                mps.compress(step.chi)
        start = stop
    return mps, groups.labels


def layer_chis(ends: Sequence[bool], chi: int, far_chi: int, near_layers: int) -> list[int]:
    """Per op of one line: the bond dimension its layer is cut to when the layer ends.

    ``ends`` flags the ops after which a layer ends. The last ``near_layers`` layers before the
    line stops, and the ops after its last layer end, get ``chi``; earlier layers ``far_chi``.
    """
    out = []
    remaining = sum(ends)  # layer ends at or after this op
    for end in ends:
        out.append(chi if remaining <= near_layers else far_chi)
        remaining -= bool(end)
    return out


def _piece_schedules(layout: FoldedLayout, angle: float, piece: list[int], sides: int) -> tuple[SweepSchedule, ...]:
    """One sweep over ``piece`` at ``angle``; with sides = 2, a sweep from each end stopping at the
    middle cut (the second line reordered to run opposite the first), when the piece spans two layers."""
    if sides == 2:
        near, far = split_at_middle(layout, angle, piece)
        if near and far:
            one = build_schedule(layout, angle, near)
            two = build_schedule(layout, (angle + 180.0) % 360.0, far)
            reorder_line(two, one.line[::-1])
            return one, two
    return (build_schedule(layout, angle, piece),)


def _compile(op: WindowOp, structure: FoldedLayout, end: bool) -> Step:
    """The fast-path node permutation, or tensordot axes and the transpose into line order."""
    width = op.hi - op.lo
    count = len(op.output)
    if op.node < 0:
        perm = (0,) + tuple(1 + off for _, off in op.output) + (width + 1,)
        return Step(op.lo, op.hi, count, -1, None, ((), ()), perm, end)
    degree = structure.degree(op.node)
    if width == 0:
        w_axes, n_axes = (), ()
        kept: list[int] = []
    else:
        w_axes = tuple(1 + off for off, _ in op.contract)
        n_axes = tuple(axis for _, axis in op.contract)
        kept = [off for off in range(width) if off not in {o for o, _ in op.contract}]
    node_perm = None
    if width and not kept:
        node_perm = tuple(axis for _, axis in op.output) + n_axes
    free = [a for a in range(degree) if a not in set(n_axes)]
    n_left = 1 + len(kept)  # D_left and kept legs
    where = {("w", off): 1 + i for i, off in enumerate(kept)}
    where.update({("n", a): n_left + 1 + i for i, a in enumerate(free)})
    perm = (0,) + tuple(where[tuple(leg)] for leg in op.output) + (n_left,)
    return Step(op.lo, op.hi, count, op.node, node_perm, (w_axes, n_axes), perm, end)


@tnarena.hookimpl
def tnarena_register_strategies(register):
    register(SweepLine())
