"""Elements of a batch that have absorbed the same arrays so far share one line.

The class networks of one syndrome differ only near their logical operator, and
syndromes with no defects near where the sweep starts have equal first layers.
:class:`PrefixGroups` groups the elements of a batch by the arrays a sweep has
absorbed so far; the batched sweep carries one line per group and splits a
group, by taking its line again for each part, when a layer brings arrays that
differ inside it. Equality is exact (the bytes of the arrays), so a line is
shared only by elements whose lines would be identical anyway.
"""

from __future__ import annotations

import numpy as np


def take(stack: np.ndarray, index: np.ndarray) -> np.ndarray:
    """Elements ``index`` (shape (G,)) of a stack (B, ...); a stack broadcast along its batch axis
    (one array for every element, e.g. a COPY tensor) stays a broadcast view."""
    if stack.shape[0] and stack.strides[0] == 0:
        return np.broadcast_to(stack[0], (len(index),) + stack.shape[1:])
    return stack[index]


class PrefixGroups:
    """A partition of a batch of B elements by the arrays absorbed so far, refined layer by layer.

    labels : shape (B,), the group of each element; rep : shape (G,), one element of each group
    (the smallest); count : G. Starts as one group (nothing absorbed yet).
    """

    def __init__(self, batch: int) -> None:
        self.batch = batch
        self.labels = np.zeros(batch, dtype=np.int64)
        self.rep = np.zeros(min(batch, 1), dtype=np.int64)

    @property
    def count(self) -> int:
        return int(self.rep.size)

    def refine(self, stacks: list[np.ndarray]) -> np.ndarray | None:
        """Split the groups by the content of ``stacks`` (each (B, ...), the arrays of one layer).

        Returns, for each new group, the old group it came from (shape (G',), to take the lines
        with), or None when the partition did not change.
        """
        if self.count == self.batch:
            return None
        parts = [s.reshape(self.batch, -1) for s in stacks if s.shape[0] and s.strides[0] != 0]
        if not parts:
            return None
        rows = np.ascontiguousarray(np.concatenate([self.labels[:, None].astype(np.float64)] + parts, axis=1))
        keys = rows.view(np.dtype((np.void, rows.dtype.itemsize * rows.shape[1]))).reshape(-1)
        _, first, inverse = np.unique(keys, return_index=True, return_inverse=True)
        if first.size == self.count:
            return None
        order = np.argsort(first, kind="stable")  # number the groups by their first element
        renumber = np.empty_like(order)
        renumber[order] = np.arange(order.size)
        parent = self.labels[first[order]]
        self.labels = renumber[inverse.reshape(-1)]
        self.rep = first[order]
        return parent
