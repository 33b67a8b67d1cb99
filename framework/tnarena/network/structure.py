"""Decoding networks: a structure (shared by every syndrome) and its arrays.

A network has two kinds of nodes. A *generator* node is a COPY tensor (all
legs equal) standing for the binary variable of one generator of the group
being summed over; a *qubit* node holds single-qubit Pauli probabilities.
Every bond joins a generator node to a qubit node and has dimension 2.
The value of the network times ``exp(log_scale)`` is the class probability.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

GENERATOR = "generator"
QUBIT = "qubit"


@dataclass(frozen=True, eq=False)
class NetworkStructure:
    """Everything about a network except its numbers; hashable by fingerprint.

    Attributes
    ----------
    kinds : tuple of {'generator', 'qubit'}, length N
    labels : tuple of int, length N
        The code's generator index, or qubit index, each node stands for
        (a generator node may stand for a product of several generators: -1).
    positions : ndarray, shape (N, 2)
        Where each node sits in the plane: qubits at their coordinates,
        generators at the centroid of the qubits they touch.
    bonds : ndarray, shape (B, 2), int
        ``(generator node, qubit node)`` pairs; every bond has dimension 2.
    node_bonds : tuple of tuple of int, length N
        For each node, the bond ids of its array's axes, in axis order.
    """

    kinds: tuple[str, ...]
    labels: tuple[int, ...]
    positions: np.ndarray
    bonds: np.ndarray
    node_bonds: tuple[tuple[int, ...], ...]

    @property
    def num_nodes(self) -> int:
        return len(self.kinds)

    @property
    def num_bonds(self) -> int:
        return int(self.bonds.shape[0])

    @property
    def bond_dims(self) -> np.ndarray:
        """Dimension of every bond, shape (B,); all 2 for Pauli codes."""
        return np.full(self.num_bonds, 2, dtype=int)

    def degree(self, node: int) -> int:
        return len(self.node_bonds[node])

    def neighbours(self, node: int) -> list[int]:
        """Nodes joined to ``node``, in the node's axis order."""
        out = []
        for b in self.node_bonds[node]:
            u, v = self.bonds[b]
            out.append(int(v) if u == node else int(u))
        return out

    @cached_property
    def fingerprint(self) -> str:
        """SHA-256 of the kinds, bonds, axis orders and positions (rounded to 1e-9)."""
        h = hashlib.sha256()
        h.update(",".join(self.kinds).encode())
        h.update(np.asarray(self.bonds, dtype=np.int64).tobytes())
        for nb in self.node_bonds:
            h.update(np.asarray(nb, dtype=np.int64).tobytes() + b";")
        h.update(np.round(np.asarray(self.positions, dtype=float), 9).tobytes())
        return h.hexdigest()

    def __hash__(self) -> int:
        return hash(self.fingerprint)

    def __eq__(self, other: object) -> bool:
        return isinstance(other, NetworkStructure) and other.fingerprint == self.fingerprint

    def hyperedges(self) -> tuple[list[tuple[int, ...]], list[int]]:
        """The network with every COPY tensor folded into a shared index.

        Returns ``(inputs, qubit_nodes)``: ``inputs[i]`` lists, in axis order,
        the generator-node ids that qubit node ``qubit_nodes[i]`` is joined
        to. Contracting the qubit arrays as an einsum whose index ``g`` is
        shared by all tensors that list ``g`` (summed, no output) gives the
        value of the network. This is how einsum-style strategies see it.
        """
        qubit_nodes = [i for i, k in enumerate(self.kinds) if k == QUBIT]
        inputs = [tuple(self.neighbours(i)) for i in qubit_nodes]
        return inputs, qubit_nodes

    def components(self) -> list[list[int]]:
        """Connected pieces of the network, each a sorted list of node ids."""
        parent = list(range(self.num_nodes))

        def find(a: int) -> int:
            while parent[a] != a:
                parent[a] = parent[parent[a]]
                a = parent[a]
            return a

        for u, v in self.bonds:
            parent[find(int(u))] = find(int(v))
        groups: dict[int, list[int]] = {}
        for i in range(self.num_nodes):
            groups.setdefault(find(i), []).append(i)
        return sorted(groups.values())


@dataclass(frozen=True, eq=False)
class DecodingNetwork:
    """A structure with its arrays: one error class of one syndrome.

    Attributes
    ----------
    structure : NetworkStructure
    arrays : tuple of ndarray
        One per node, shape ``(2,) * degree`` in the node's axis order.
        Qubit arrays are normalised so their largest entry is 1.
    log_scale : float
        Natural log of the factor taken out (normalisations, constant qubits,
        the 2^-(m - rank) of dependent generators). ``-inf`` when the class
        is impossible (the network is then not worth contracting).
    """

    structure: NetworkStructure
    arrays: tuple[np.ndarray, ...]
    log_scale: float
    metadata: dict = field(default_factory=dict)

    @property
    def is_zero(self) -> bool:
        """True when the class probability is exactly 0."""
        return self.log_scale == -np.inf
