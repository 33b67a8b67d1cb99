"""Contracting many array sets of one network along one tree at once (a leading batch axis).

The network is an einsum with hyperindices (generator ids shared by several
qubit arrays). Each pairwise step of the tree becomes one batched matrix
product: indices both tensors hold and a later tensor still needs ride along
like the batch axis, indices no other tensor holds are summed, the rest form
the rows and columns. Every step divides each batch element by its largest
entry and carries the logarithm, so nothing under- or overflows.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Sequence

import numpy as np


def contract_batch(inputs: Sequence[tuple[int, ...]], ssa_path: Sequence[tuple[int, int]],
                   arrays: Sequence[np.ndarray]) -> np.ndarray:
    """Natural log of |value| of every batch element, shape (B,).

    inputs : index tuple of each input tensor (hyperindices allowed);
    ssa_path : pairwise merges, SSA numbering (inputs 0..n-1, each merge appends one);
    arrays : per input, shape (B, *dims) in the order of its indices.
    """
    remaining = Counter(ix for term in inputs for ix in set(term))
    tensors: dict[int, tuple[np.ndarray, tuple[int, ...]]] = {}
    log_scale = np.zeros(arrays[0].shape[0])
    for k, (array, term) in enumerate(zip(arrays, inputs)):
        array, term = _sum_private(array, term, remaining)
        tensors[k] = _normalised(array, log_scale), term
    next_id = len(inputs)
    for i, j in ssa_path:
        (a, ia), (b, ib) = tensors.pop(i), tensors.pop(j)
        for ix in set(ia) | set(ib):
            remaining[ix] -= (ix in ia) + (ix in ib)
        out, term = _merge(a, ia, b, ib, remaining)
        for ix in term:
            remaining[ix] += 1
        tensors[next_id] = _normalised(out, log_scale), term
        next_id += 1
    total = np.ones_like(log_scale)
    for array, _ in tensors.values():  # what is left: scalars (or pieces no merge joined)
        total = total * np.ascontiguousarray(array).reshape(array.shape[0], -1).sum(axis=1)
    with np.errstate(divide="ignore"):
        return log_scale + np.log(np.abs(total))


def _sum_private(array: np.ndarray, term: tuple[int, ...], remaining: Counter):
    """Sum out indices only this tensor holds (they can never meet another tensor)."""
    axes = [1 + p for p, ix in enumerate(term) if remaining[ix] == 1]
    if not axes:
        return array, term
    for ix in (ix for ix in term if remaining[ix] == 1):
        remaining[ix] = 0
    return _sum_axes(array, axes), tuple(ix for ix in term if remaining[ix] > 0)


def _sum_axes(array: np.ndarray, axes: list[int]) -> np.ndarray:
    """Sum over ``axes`` the same way for every batch element, whatever the batch size.

    The summed axes are moved last and flattened, so each element is one contiguous
    row summed alone (numpy's pairwise order then cannot depend on the batch shape).
    """
    keep = [a for a in range(array.ndim) if a not in axes]
    moved = np.ascontiguousarray(array.transpose(keep + list(axes)))
    return moved.reshape([array.shape[a] for a in keep] + [-1]).sum(axis=-1)


def _merge(a: np.ndarray, ia: tuple[int, ...], b: np.ndarray, ib: tuple[int, ...], remaining: Counter):
    """One pairwise step as a batched matrix product; returns (array, its indices)."""
    a, ia = _sum_private_after(a, ia, ib, remaining)
    b, ib = _sum_private_after(b, ib, ia, remaining)
    shared = [ix for ix in ia if ix in ib]
    kept = [ix for ix in shared if remaining[ix] > 0]  # still needed later: ride along
    summed = [ix for ix in shared if remaining[ix] == 0]
    left = [ix for ix in ia if ix not in ib]
    right = [ix for ix in ib if ix not in ia]
    size = dict(zip(ia, a.shape[1:])) | dict(zip(ib, b.shape[1:]))
    batch = a.shape[0]
    pa = [0] + [1 + ia.index(ix) for ix in kept + left + summed]
    pb = [0] + [1 + ib.index(ix) for ix in kept + summed + right]
    h, l, c, r = (int(np.prod([size[ix] for ix in group])) for group in (kept, left, summed, right))
    am = a.transpose(pa).reshape(batch * h, l, c)
    bm = b.transpose(pb).reshape(batch * h, c, r)
    out = np.matmul(am, bm).reshape((batch, *[size[ix] for ix in kept + left + right]))
    return out, tuple(kept + left + right)


def _sum_private_after(x: np.ndarray, ix: tuple[int, ...], other: tuple[int, ...], remaining: Counter):
    """Sum indices of ``x`` that neither the partner nor any later tensor holds."""
    axes = [1 + p for p, i in enumerate(ix) if i not in other and remaining[i] == 0]
    if not axes:
        return x, ix
    return _sum_axes(x, axes), tuple(i for i in ix if i in other or remaining[i] > 0)


def _normalised(array: np.ndarray, log_scale: np.ndarray) -> np.ndarray:
    """Divide each batch element by its largest |entry|, adding its log to ``log_scale`` in place."""
    top = np.abs(array.reshape(array.shape[0], -1)).max(axis=1)
    safe = np.where(top > 0, top, 1.0)
    with np.errstate(divide="ignore"):
        log_scale += np.where(top > 0, np.log(safe), -np.inf)
    return array / safe.reshape((-1,) + (1,) * (array.ndim - 1))
