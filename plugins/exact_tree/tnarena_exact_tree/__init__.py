"""Exact contraction along a hypergraph-partitioned contraction tree.

Every COPY tensor of the decoding network becomes a shared (hyper)index, so
the network is one einsum over the qubit arrays. cotengra's hyper-optimizer
searches contraction trees, partitioning the hypergraph with kahypar when it
is installed (a greedy search otherwise, said once on stderr). The tree is
found once per structure; contraction strips exponents as it goes so that
values far below float64's range keep full precision.
"""

from __future__ import annotations

import importlib.util
import math
import random
import sys
from contextlib import contextmanager
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

import tnarena
from tnarena.errors import TnarenaError
from tnarena.network import DecodingNetwork, NetworkBatch, NetworkStructure
from tnarena.strategy import Estimate, Parameter, Strategy

_WARNED = False
#: Elements of the largest batched intermediate: batches are split so as not to exceed it
#: (past it the batch axis no longer saves time: measured in benchmarks/README.md).
BATCH_ELEMENTS = 2.0**18


def kahypar_available() -> bool:
    return importlib.util.find_spec("kahypar") is not None


@dataclass
class ExactPlan:
    """A contraction tree for one structure and the figures that describe it."""

    tree: Any  # cotengra.ContractionTree, or None when there is nothing to contract
    qubit_nodes: list[int]
    inputs: list[tuple[int, ...]]  # generator ids each qubit array is indexed by (hyperedge einsum)
    threads: int
    flops: float
    largest_intermediate: float
    width: float
    method: str


class ExactTree(Strategy):
    name = "exact"
    summary = "exact contraction along a hypergraph-partitioned tree (cotengra + kahypar)"
    exact = True
    parameters = (
        Parameter("method", "str", "auto",
                  "tree search: auto (kahypar partitions and greedy trials, best kept), kahypar, or greedy (one "
                  "instant greedy tree)", choices=("auto", "kahypar", "greedy")),
        Parameter("search_time", "float", 2.0,
                  "wall-clock budget of the tree search, seconds (soft: checked between trials)", minimum=0.0),
        Parameter("max_repeats", "int", 64, "most trial trees the search draws", minimum=1, maximum=100000),
        Parameter("reconfigure", "bool", False, "refine the best tree by subtree reconfiguration (slow at scale)"),
        Parameter("max_intermediate", "float", 2.0**27,
                  "largest intermediate tensor allowed, in elements (2^27 float64 = 1 GiB)", minimum=1.0),
        Parameter("seed", "int", 0, "seed of the tree search", minimum=0),
        Parameter("threads", "int", 1,
                  "BLAS threads while contracting (0: the library default; >1 threads suffer on a busy machine)",
                  minimum=0, maximum=256),
    )

    def plan(self, structure: NetworkStructure, params: Mapping[str, Any]) -> ExactPlan:
        import cotengra as ctg

        inputs, qubit_nodes = structure.hyperedges()
        if not inputs:
            return ExactPlan(None, [], [], params["threads"], 0.0, 1.0, 0.0, "none")
        method = _choose_method(params["method"])
        size_dict = {g: 2 for term in inputs for g in term}
        if method == "greedy" or len(inputs) <= 2:
            optimizer: Any = "greedy"
        else:
            # kahypar alone draws many poor partitions on planar networks within a
            # short budget; racing it against greedy trials keeps the best of both
            methods = ["kahypar", "greedy"] if method == "auto" else ["kahypar"]
            optimizer = ctg.HyperOptimizer(
                methods=methods,
                max_repeats=params["max_repeats"],
                max_time=params["search_time"] if params["search_time"] > 0 else None,
                reconf_opts={} if params["reconfigure"] else None,
                parallel=False,
                # flops alone picks trees that move much memory and run slower (benchmarks/README.md)
                minimize="combo",
                on_trial_error="ignore",
                progbar=False,
                seed=params["seed"],
            )
        tree = ctg.array_contract_tree(inputs, (), size_dict, optimize="greedy")
        if optimizer != "greedy":
            # a short search budget may end before its first good trial: keep greedy as a floor
            with _seeded_global_random(params["seed"]):
                searched = ctg.array_contract_tree(inputs, (), size_dict, optimize=optimizer)
            if searched.combo_cost() < tree.combo_cost():
                tree = searched
        largest = float(tree.max_size())
        if largest > params["max_intermediate"]:
            raise TnarenaError(
                f"exact contraction needs an intermediate of {largest:.3g} elements "
                f"(2^{math.log2(largest):.1f}), over the budget max_intermediate = "
                f"{params['max_intermediate']:.3g}; raise the budget or use an approximate strategy."
            )
        return ExactPlan(
            tree=tree,
            qubit_nodes=qubit_nodes,
            inputs=[tuple(term) for term in inputs],
            threads=params["threads"],
            flops=float(tree.contraction_cost()),
            largest_intermediate=largest,
            width=float(tree.contraction_width()),
            method=method,
        )

    def cost(self, structure: NetworkStructure, params: Mapping[str, Any]) -> dict[str, float]:
        """Width (log2 elements), flops and largest intermediate (elements) of one greedy tree.

        No search: an upper bound on what :meth:`plan` finds (it keeps greedy as a floor).
        """
        import cotengra as ctg

        inputs, _ = structure.hyperedges()
        if not inputs:
            return {"width": 0.0, "flops": 0.0, "largest_intermediate": 1.0}
        size_dict = {g: 2 for term in inputs for g in term}
        tree = ctg.array_contract_tree(inputs, (), size_dict, optimize="greedy")
        return {"width": float(tree.contraction_width()), "flops": float(tree.contraction_cost()),
                "largest_intermediate": float(tree.max_size())}

    def contract(self, plan: ExactPlan, network: DecodingNetwork) -> Estimate:
        stats = {
            "flops": plan.flops,
            "largest_intermediate": plan.largest_intermediate,
            "width": plan.width,
        }
        if plan.tree is None:
            return Estimate(0.0, stats)
        arrays = [network.arrays[i] for i in plan.qubit_nodes]
        with _blas_threads(plan.threads):
            mantissa, exponent = plan.tree.contract(arrays, strip_exponent=True, check_zero=True)
        value = float(np.abs(mantissa))
        log_value = -math.inf if value == 0.0 else math.log(value) + float(exponent) * math.log(10.0)
        return Estimate(log_value, stats)

    def contract_batch(self, plan: ExactPlan, networks) -> list[Estimate]:
        """All networks at once: a leading batch axis on every array, one batched product per tree step."""
        from tnarena_exact_tree.batched import contract_batch

        group = max(1, int(BATCH_ELEMENTS // max(plan.largest_intermediate, 1.0)))
        if plan.tree is None or not networks or group == 1:  # large intermediates: the batch axis buys nothing
            return [self.contract(plan, net) for net in networks]
        stats = {"flops": plan.flops, "width": plan.width}
        path = plan.tree.get_ssa_path()
        stacks = NetworkBatch.from_networks(networks).stacks  # a NetworkBatch brings its own
        out = []
        with _blas_threads(plan.threads):
            for at in range(0, len(networks), group):
                arrays = [stacks[q][at:at + group] for q in plan.qubit_nodes]
                batch_stats = stats | {"largest_intermediate": plan.largest_intermediate * min(group, len(networks) - at)}
                out += [Estimate(float(v), dict(batch_stats)) for v in contract_batch(plan.inputs, path, arrays)]
        return out


@contextmanager
def _seeded_global_random(seed: int):
    """Seed Python's global ``random`` for the search, then restore it.

    Some of cotengra's trial functions draw from the global generator, so
    without this the same seed gave different (equally cheap) trees in one
    process. With it the tree depends only on the seed, as long as the search
    ends by ``max_repeats`` rather than by ``search_time``.
    """
    state = random.getstate()
    random.seed(seed)
    try:
        yield
    finally:
        random.setstate(state)


def _blas_threads(threads: int):
    from contextlib import nullcontext

    from threadpoolctl import threadpool_limits

    return nullcontext() if threads == 0 else threadpool_limits(limits=threads, user_api="blas")


def _choose_method(requested: str) -> str:
    """'auto', 'kahypar' or 'greedy', falling back to greedy (said once) without kahypar."""
    global _WARNED
    if requested == "greedy":
        return "greedy"
    if kahypar_available():
        return requested
    if requested == "kahypar":
        raise TnarenaError(
            "strategy 'exact' with method=kahypar needs the kahypar package; "
            "install it (pip install kahypar) or use method=greedy."
        )
    if not _WARNED:
        print("tnarena exact: kahypar is not installed; searching trees greedily instead.", file=sys.stderr)
        _WARNED = True
    return "greedy"


@tnarena.hookimpl
def tnarena_register_strategies(register):
    register(ExactTree())
