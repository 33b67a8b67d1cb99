"""Many networks of one structure, their arrays stacked along a leading batch axis.

A :class:`NetworkBatch` is a ``Sequence[DecodingNetwork]``: a strategy whose
``contract_batch`` loops over its networks works on it unchanged, and one that
batches reads :attr:`NetworkBatch.stacks` directly instead of gathering the
per-network arrays itself.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from typing import overload

import numpy as np

from tnarena.errors import TnarenaError
from tnarena.network.structure import DecodingNetwork, NetworkStructure


@dataclass(frozen=True, eq=False)
class NetworkBatch(Sequence[DecodingNetwork]):
    """B networks of one structure.

    Attributes
    ----------
    structure : NetworkStructure
    stacks : tuple of ndarray
        One per node, shape ``(B,) + (2,) * degree``; element ``i`` holds the
        arrays of network ``i``. Arrays every element shares (the COPY tensors)
        are read-only ``np.broadcast_to`` views (stride 0 on the batch axis).
    log_scales : ndarray, shape (B,)
        ``log_scale`` of every element (finite: impossible classes are left out).
    """

    structure: NetworkStructure
    stacks: tuple[np.ndarray, ...]
    log_scales: np.ndarray

    def __len__(self) -> int:
        return int(self.log_scales.shape[0])

    @overload
    def __getitem__(self, index: int) -> DecodingNetwork: ...

    @overload
    def __getitem__(self, index: slice) -> NetworkBatch: ...

    def __getitem__(self, index):
        """An element (a DecodingNetwork whose arrays are views of the stacks) or, for a slice, a batch."""
        if isinstance(index, slice):
            return NetworkBatch(self.structure, tuple(s[index] for s in self.stacks), self.log_scales[index])
        return DecodingNetwork(self.structure, tuple(s[index] for s in self.stacks), float(self.log_scales[index]))

    def __iter__(self) -> Iterator[DecodingNetwork]:
        for i in range(len(self)):
            yield self[i]

    @classmethod
    def from_networks(cls, networks: Sequence[DecodingNetwork]) -> NetworkBatch:
        """Stack the arrays of networks of one structure (at least one).

        An array that is the same object in every network (a COPY tensor) is not
        copied but broadcast; the others are gathered with one ``np.array`` call per shape.
        """
        if isinstance(networks, NetworkBatch):
            return networks
        if not networks:
            raise TnarenaError("a network batch needs at least one network; pass a non-empty sequence.")
        structure = networks[0].structure
        if any(net.structure is not structure and net.structure != structure for net in networks):
            raise TnarenaError("these networks have different structures; batch only networks of one structure.")
        batch, first = len(networks), networks[0].arrays
        stacks: list[np.ndarray | None] = [None] * len(first)
        by_shape: dict[tuple[int, ...], list[int]] = {}
        for v, a in enumerate(first):
            if all(net.arrays[v] is a for net in networks):
                stacks[v] = _shared(a, batch)
            else:
                by_shape.setdefault(a.shape, []).append(v)
        for shape, members in by_shape.items():
            stack = np.array([net.arrays[v] for v in members for net in networks]).reshape(
                (len(members), batch) + shape)
            for j, v in enumerate(members):
                stacks[v] = stack[j]
        scales = np.array([net.log_scale for net in networks], dtype=float)
        return cls(structure, tuple(stacks), scales)

    @classmethod
    def concatenate(cls, batches: Sequence[NetworkBatch]) -> NetworkBatch:
        """One batch holding the elements of ``batches`` (one structure, at least one batch) in order.

        A stack that is broadcast from the same array in every batch stays a broadcast view.
        """
        if not batches:
            raise TnarenaError("concatenate needs at least one network batch.")
        structure = batches[0].structure
        if any(b.structure is not structure and b.structure != structure for b in batches):
            raise TnarenaError("these network batches have different structures; concatenate only one structure.")
        full = [b for b in batches if len(b)] or batches[:1]
        total = sum(len(b) for b in full)
        stacks = []
        for v in range(len(full[0].stacks)):
            parts = [b.stacks[v] for b in full]
            if total and all(p.strides[0] == 0 and np.array_equal(p[0], parts[0][0]) for p in parts):
                stacks.append(_shared(parts[0][0], total))
            else:
                stacks.append(np.concatenate(parts))
        return cls(structure, tuple(stacks), np.concatenate([b.log_scales for b in full]))


def _shared(array: np.ndarray, batch: int) -> np.ndarray:
    """``array`` seen ``batch`` times along a new leading axis, read-only, no copy."""
    return np.broadcast_to(array, (batch,) + array.shape)
