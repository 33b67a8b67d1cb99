"""Baselines that wrap quimb, the library researchers contract such networks with today.

Two strategies, each a thin layer over quimb's own algorithms so that the
arena can compare tnarena's strategies against what is used in practice:

- ``quimb_compressed``: ``TensorNetwork.contract_compressed`` along a tree
  found by cotengra's ``HyperCompressedOptimizer`` (Gray and Chan,
  "Hyper-optimized compressed contraction of tensor networks with arbitrary
  geometry", arXiv:2206.07044), for any layout.
- ``quimb_boundary``: ``TensorNetwork2D.contract_boundary`` (boundary MPS) on
  the square lattice, after fusing each unit cell into one grid site.
"""

from __future__ import annotations

import tnarena

from tnarena_quimb_baselines.boundary import QuimbBoundary
from tnarena_quimb_baselines.compressed import QuimbCompressed

__all__ = ["QuimbBoundary", "QuimbCompressed"]


@tnarena.hookimpl
def tnarena_register_strategies(register):
    register(QuimbCompressed())
    register(QuimbBoundary())
