"""``quimb_compressed``: quimb's hyper-optimized compressed contraction, any layout.

Source: J. Gray and G. K.-L. Chan, "Hyper-optimized compressed contraction of
tensor networks with arbitrary geometry", arXiv:2206.07044 (2022), as
implemented by quimb's ``TensorNetwork.contract_compressed`` and cotengra's
``HyperCompressedOptimizer``.

``plan`` searches a compressed contraction tree (a
``cotengra.ContractionTreeCompressed``, scored for the given chi) on the
structure alone; ``contract`` hands that same tree object to
``contract_compressed`` for every array set, so the search runs once per
structure. quimb accepts a tree for ``optimize`` and only reads its path,
chi and compress-late setting from it, which is what makes the reuse valid:
the tensors are put in node order, the order the tree was built on.
"""

from __future__ import annotations

import importlib.util
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from tnarena.blas import one_blas_thread
from tnarena.errors import TnarenaError
from tnarena.network import DecodingNetwork, NetworkStructure
from tnarena.network.quimb_adapter import to_quimb
from tnarena.strategy import Estimate, Parameter, Strategy

from tnarena_quimb_baselines.scalars import check_finite, log_of_stripped, run_or_zero

#: cotengra's default tree builders for compressed contraction; kahypar-agglom needs kahypar.
METHODS = ("greedy-compressed", "greedy-span", "kahypar-agglom")


@dataclass
class CompressedPlan:
    """A compressed contraction tree for one structure.

    tree : cotengra.ContractionTreeCompressed, or None for a network of at most two tensors
    num_nodes : tensors the tree was built on (node order)
    chi, cutoff : the compression settings handed to quimb
    estimated_flops, estimated_largest : cotengra's estimates for the tree at chi
    """

    tree: Any
    num_nodes: int
    chi: int
    cutoff: float
    estimated_flops: float
    estimated_largest: float


class QuimbCompressed(Strategy):
    """quimb's ``contract_compressed`` along a cotengra compressed tree (a baseline)."""

    name = "quimb_compressed"
    summary = "baseline: quimb contract_compressed along a cotengra HyperCompressedOptimizer tree, bond chi"
    exact = False
    parameters = (
        Parameter("chi", "int", 16, "largest bond kept by compression (quimb max_bond)", minimum=1, maximum=4096),
        Parameter("search_time", "float", 1.0, "wall-clock budget of the compressed tree search, seconds "
                  "(0: no time limit, max_repeats trials only, which makes the plan reproducible)", minimum=0.0),
        Parameter("max_repeats", "int", 32, "most trial trees the search draws", minimum=1, maximum=100000),
        Parameter("cutoff", "float", 1e-13, "quimb singular value cutoff (its default mode for compressed "
                  "contraction: relative sum of squares)", minimum=0.0, maximum=1.0),
        Parameter("seed", "int", 0, "seed of the tree search", minimum=0),
    )

    def plan(self, structure: NetworkStructure, params: Mapping[str, Any]) -> CompressedPlan:
        chi, cutoff = int(params["chi"]), float(params["cutoff"])
        if structure.num_nodes < 3:  # nothing to compress: contracted exactly
            return CompressedPlan(None, structure.num_nodes, chi, cutoff, 0.0, 1.0)
        import cotengra as ctg

        inputs = [tuple(f"b{b}" for b in bonds) for bonds in structure.node_bonds]
        size_dict = {f"b{b}": 2 for b in range(structure.num_bonds)}
        methods = METHODS if importlib.util.find_spec("kahypar") else METHODS[:2]
        optimizer = ctg.HyperCompressedOptimizer(
            chi=chi,
            methods=methods,
            max_repeats=params["max_repeats"],
            max_time=params["search_time"] if params["search_time"] > 0 else None,
            parallel=False,
            progbar=False,
            on_trial_error="ignore",
            # seeds for the hyper-parameter sampler and for each trial's own draws, so a plan is reproducible
            seed=params["seed"],
            optlib_opts={"seed": params["seed"]},
            constants={method: {"seed": params["seed"]} for method in methods},
        )
        tree = ctg.array_contract_tree(inputs, (), size_dict, optimize=optimizer)
        return CompressedPlan(
            tree=tree,
            num_nodes=structure.num_nodes,
            chi=chi,
            cutoff=cutoff,
            estimated_flops=float(tree.total_flops_compressed(chi)),
            estimated_largest=float(tree.max_size_compressed(chi)),
        )

    def contract(self, plan: CompressedPlan, network: DecodingNetwork) -> Estimate:
        with one_blas_thread():  # the same BLAS policy as every built-in strategy
            return self._contract(plan, network)

    def _contract(self, plan: CompressedPlan, network: DecodingNetwork) -> Estimate:
        """ln |value| by ``contract_compressed`` along the plan's tree.

        Stats: ``flops`` and ``largest_intermediate`` measured on the pairwise
        contractions quimb performs (compression work not counted), and
        cotengra's estimates for the tree at chi (``estimated_flops``, which
        counts QR and SVD too, and ``estimated_largest_intermediate``). quimb
        does not report discarded weight, so there is none.
        """
        tn = to_quimb(network)
        if plan.tree is None:
            mantissa, exponent = tn.contract(all, strip_exponent=True, check_zero=True) if tn.num_tensors else (1.0, 0.0)
            return Estimate(log_of_stripped(mantissa, exponent, strategy=self.name), {})
        if tn.num_tensors != plan.num_nodes:
            raise TnarenaError(f"strategy {self.name!r} got a network whose structure is not the one it planned for.")
        meter = _Meter()
        result = run_or_zero(lambda: tn.contract_compressed(
            plan.tree,
            max_bond=plan.chi,
            cutoff=plan.cutoff,
            strip_exponent=True,
            callback_pre_contract=meter.before,
            callback_post_contract=meter.after,
            callback_post_compress=meter.compressed,
        ))
        mantissa, exponent = (0.0, 0.0) if result is None else result
        stats = {
            "flops": meter.flops,
            "largest_intermediate": float(meter.largest),
            "estimated_flops": plan.estimated_flops,
            "estimated_largest_intermediate": plan.estimated_largest,
        }
        return Estimate(log_of_stripped(mantissa, exponent, strategy=self.name), stats)


class _Meter:
    """Counts multiply-adds of the pairwise contractions and the largest tensor they make.

    The QR / SVD work of compression is not counted (quimb does not report
    it); ``estimated_flops`` in the stats, cotengra's estimate, includes it.
    """

    def __init__(self) -> None:
        self.flops = 0.0
        self.largest = 1

    def before(self, tn, tids) -> None:
        t1, t2 = (tn.tensor_map[tid] for tid in tids)
        shared = 1
        for ind in set(t1.inds) & set(t2.inds):
            shared *= t1.ind_size(ind)
        self.flops += t1.size * t2.size / shared

    def after(self, tn, tid) -> None:
        tensor = tn.tensor_map[tid]
        check_finite(tensor)
        self.largest = max(self.largest, tensor.size)

    def compressed(self, tn, tids) -> None:
        for tid in tids:
            check_finite(tn.tensor_map[tid])
