"""Turn a DecodingNetwork into a quimb TensorNetwork, so plugins can use quimb.

Each tensor gets the tags ``NODE{i}``, its kind (``GENERATOR`` or ``QUBIT``)
and its position as ``POS{x},{y}`` (see :func:`position_from_tags`); bond b
becomes the index ``b{b}``. The network's ``log_scale`` is not included:
``exp(log_scale) * tn.contract()`` is the class probability.
"""

from __future__ import annotations

import numpy as np

from tnarena.network.structure import DecodingNetwork


def position_tag(x: float, y: float) -> str:
    return f"POS{x:.9g},{y:.9g}"


def position_from_tags(tags) -> tuple[float, float]:
    """The (x, y) carried by a tensor's ``POS`` tag."""
    for tag in tags:
        if tag.startswith("POS"):
            x, y = tag[3:].split(",")
            return float(x), float(y)
    raise KeyError("no POS tag among " + ", ".join(sorted(tags)))


def to_quimb(network: DecodingNetwork):
    """quimb.tensor.TensorNetwork of the network's arrays (without log_scale)."""
    import quimb.tensor as qtn

    s = network.structure
    tensors = []
    for i, (kind, arr, bonds) in enumerate(zip(s.kinds, network.arrays, s.node_bonds)):
        x, y = s.positions[i]
        tags = {f"NODE{i}", kind.upper(), position_tag(float(x), float(y))}
        tensors.append(qtn.Tensor(np.asarray(arr), inds=[f"b{b}" for b in bonds], tags=tags))
    return qtn.TensorNetwork(tensors)
