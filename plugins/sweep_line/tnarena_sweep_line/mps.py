"""The MPS the sweep line carries, and the one operation it needs.

Sites are arrays of shape (D_left, 2, D_right), one per bond crossing the
line. The MPS is kept in mixed canonical form: sites left of ``center`` are
left-orthogonal, sites right of it right-orthogonal, so truncating the SVD of
a window that holds the centre is the best local truncation. The centre is
normalised after every operation and the logarithm of its norm carried.

Hot paths use matrix products on reshaped arrays and LAPACK directly
(:mod:`tnarena_sweep_line.linalg`); a window whose new bonds fit the cap is
split exactly (an identity site and the block where the rows are fewer than
the columns, else by QR), only wider ones by a truncated SVD.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from tnarena_sweep_line.linalg import lq, qr, svd


_EYES: dict[int, np.ndarray] = {}


def _eye(k: int) -> np.ndarray:
    """The k x k identity, made once per k and read-only (sites are shared, never written)."""
    eye = _EYES.get(k)
    if eye is None:
        eye = _EYES[k] = np.eye(k)
        eye.flags.writeable = False
    return eye


@dataclass(frozen=True, slots=True)
class Step:
    """One compiled window operation (see :class:`tnarena_sweep_line.ordering.WindowOp`).

    lo, hi : the sites [lo, hi) replaced; count : sites that replace them
    node : array index absorbed, -1 for a swap of two sites
    node_perm : for the fast path (every window leg summed against the node),
        the node's axes as (free, in line order) + (summed, in window order);
        None otherwise
    axes, perm : the general path, np.tensordot axes and the transpose into
        (D_left, new legs..., D_right)
    end : a layer ends after this step (cut wide bonds to ``chi``)
    rescale : divide the centre by its norm after this step (the log carried);
        every few steps is enough to stay far from under- and overflow
    cap : most singular values a new bond keeps while this step's layer is absorbed
    chi : most singular values a bond keeps when this step's layer ends
    """

    lo: int
    hi: int
    count: int
    node: int
    node_perm: tuple[int, ...] | None
    axes: tuple
    perm: tuple[int, ...]
    end: bool
    rescale: bool = True
    cap: int = 0
    chi: int = 0


class LineMPS:
    """An MPS over the bonds crossing the sweep line.

    cutoff : singular values below ``cutoff * largest`` are dropped (the most kept per bond is
    given to each operation: ``cap`` while absorbing, ``chi`` when a layer ends).
    """

    def __init__(self, cutoff: float) -> None:
        self.cutoff = cutoff
        self.sites: list[np.ndarray] = []
        self.center = 0
        self.log_value = 0.0
        self.discarded = 0.0
        self.flops = 0.0
        self.largest = 1

    def copy(self) -> "LineMPS":
        """An independent line in the same state (sites are never written in place: shared)."""
        out = LineMPS(self.cutoff)
        out.sites = list(self.sites)
        out.center, out.log_value, out.discarded = self.center, self.log_value, self.discarded
        out.flops, out.largest = self.flops, self.largest
        return out

    # ---- canonical form ----------------------------------------------------
    def _move_center(self, lo: int, hi: int) -> None:
        """QR the centre rightwards to ``lo`` or LQ it leftwards to ``hi - 1``."""
        sites = self.sites
        while self.center < lo:
            a = sites[self.center]
            dl, p, dr = a.shape
            q, r = qr(a.reshape(dl * p, dr))
            sites[self.center] = q.reshape(dl, p, -1)
            b = sites[self.center + 1]
            sites[self.center + 1] = (r @ b.reshape(dr, -1)).reshape(r.shape[0], b.shape[1], b.shape[2])
            self.flops += dl * p * dr * dr
            self.center += 1
        while self.center >= hi:
            a = sites[self.center]
            dl, p, dr = a.shape
            l, q = lq(a.reshape(dl, p * dr))
            sites[self.center] = q.reshape(-1, p, dr)
            b = sites[self.center - 1]
            sites[self.center - 1] = (b.reshape(-1, dl) @ l).reshape(b.shape[0], b.shape[1], l.shape[1])
            self.flops += dl * p * dr * dl
            self.center -= 1

    # ---- the window operation ----------------------------------------------
    def apply(self, step: Step, node: np.ndarray | None) -> None:
        """Replace sites [step.lo, step.hi) by ``step.count`` new sites, absorbing ``node``
        (shape (2,) * degree; None for a swap); bonds wider than ``step.cap`` are truncated."""
        lo, hi, count = step.lo, step.hi, step.count
        if hi > lo:
            if not lo <= self.center < hi:
                self._move_center(lo, hi)
            sites = self.sites
            first = sites[lo]
            dl = first.shape[0]
            block = first.reshape(-1, first.shape[2])
            for i in range(lo + 1, hi):
                b = sites[i]
                self.flops += block.shape[0] * b.shape[0] * b.shape[1] * b.shape[2]
                block = (block @ b.reshape(b.shape[0], -1)).reshape(-1, b.shape[2])
            dr = block.shape[1]
            if step.node_perm is not None:  # every window leg summed against the node
                width = block.shape[0] // dl
                legs = node.transpose(step.node_perm).reshape(-1, width)  # (free, summed)
                self.flops += legs.size * dl * dr
                block = np.matmul(legs, block.reshape(dl, width, dr))  # (D_left, free, D_right)
            elif node is None:  # a swap
                block = block.reshape(dl, 2, 2, dr).transpose(step.perm)
            else:
                block = self._general(block.reshape((dl,) + (2,) * (hi - lo) + (dr,)), node, step)
        else:
            block = self._general(np.ones((1, 1)), node, step)
        self.largest = max(self.largest, block.size)
        self.sites[lo:hi] = self._split(block, count, step.cap)
        if count:
            self.center = lo + count - 1
            if not step.rescale:
                return
            centre = self.sites[self.center]
            norm = math.sqrt(float(np.dot(centre.reshape(-1), centre.reshape(-1))))
        else:
            norm = abs(float(block.reshape(-1)[0]))
            self.center = min(self.center, max(len(self.sites) - 1, 0))
        if norm == 0.0:
            self.log_value = -math.inf
            return
        self.log_value += math.log(norm)
        if count:
            self.sites[self.center] = centre * (1.0 / norm)

    def _general(self, block: np.ndarray, node: np.ndarray, step: Step) -> np.ndarray:
        out = np.tensordot(block, node, axes=step.axes)
        self.flops += out.size * (2 ** len(step.axes[0]))
        return out.transpose(step.perm)

    def compress(self, chi: int) -> None:
        """Cut every bond wider than ``chi`` by one sweep of truncated SVDs across the wide bonds.

        The sweep starts from the end of the wide range nearer the centre and
        leaves the centre at the other end (LQ/QR where a bond is not wide).
        """
        sites = self.sites
        wide = [i for i in range(len(sites) - 1) if sites[i].shape[2] > chi]
        if not wide:
            return
        first, last = wide[0], wide[-1] + 1  # the wide bonds lie between sites first .. last
        if 2 * self.center >= first + last:
            self._move_center(last, last + 1)
            for i in range(last, first, -1):  # right to left: cut the bond (i - 1, i)
                a = sites[i]
                dl, p, dr = a.shape
                m = a.reshape(dl, p * dr)
                if dl > chi:
                    self.flops += m.shape[0] * m.shape[1] * min(m.shape)
                    u, s, vt = svd(m)
                    keep = self._keep(s, chi)
                    left = u[:, :keep] * s[:keep]
                    sites[i] = vt[:keep].reshape(keep, p, dr)
                else:
                    left, q = lq(m)
                    sites[i] = q.reshape(-1, p, dr)
                b = sites[i - 1]
                sites[i - 1] = (b.reshape(-1, dl) @ left).reshape(b.shape[0], p, left.shape[1])
            self.center = first
        else:
            self._move_center(first, first + 1)
            for i in range(first, last):  # left to right: cut the bond (i, i + 1)
                a = sites[i]
                dl, p, dr = a.shape
                m = a.reshape(dl * p, dr)
                if dr > chi:
                    self.flops += m.shape[0] * m.shape[1] * min(m.shape)
                    u, s, vt = svd(m)
                    keep = self._keep(s, chi)
                    right = s[:keep, None] * vt[:keep]
                    sites[i] = u[:, :keep].reshape(dl, p, keep)
                else:
                    q, right = qr(m)
                    sites[i] = q.reshape(dl, p, -1)
                b = sites[i + 1]
                sites[i + 1] = (right @ b.reshape(dr, -1)).reshape(right.shape[0], b.shape[1], b.shape[2])
            self.center = last
        centre = sites[self.center]
        norm = math.sqrt(float(np.dot(centre.reshape(-1), centre.reshape(-1))))
        if norm == 0.0:
            self.log_value = -math.inf
            return
        self.log_value += math.log(norm)
        sites[self.center] = centre * (1.0 / norm)

    def _keep(self, s: np.ndarray, cap: int) -> int:
        """How many singular values ``s`` (descending) survive cutoff and cap; adds the discarded weight."""
        n = s.shape[0]
        top = s[0]
        if top <= 0:
            return 1
        keep = min(n, cap)
        floor = self.cutoff * top
        if s[keep - 1] <= floor:
            keep = max(1, int(np.searchsorted(-s, -floor, side="left")))
        if keep < n:
            s2 = s * s
            self.discarded += float(s2[keep:].sum() / s2.sum())
        return keep

    def _split(self, block: np.ndarray, count: int, cap: int) -> list[np.ndarray]:
        """Cut (D_left, 2, ..., 2, D_right) into ``count`` sites, left to right: by QR where the
        new bond fits ``cap``, else by SVD truncated to ``cap``."""
        if count == 0:
            return []
        dl, dr = block.shape[0], block.shape[-1]
        if count == 1:
            return [block.reshape(dl, 2, dr)]
        rest = block.reshape(dl * 2, -1)
        if count == 2 and rest.shape[0] <= min(rest.shape[1], cap):
            # the common case, exact and canonical without a QR: an identity (left-orthogonal) site,
            # then the block, which holds the centre
            return [_eye(2 * dl).reshape(dl, 2, 2 * dl), rest.reshape(-1, 2, dr)]
        if count == 2 and min(rest.shape) <= cap:  # exact
            self.flops += rest.shape[0] * rest.shape[1] * min(rest.shape)
            q, rest = qr(rest)
            return [q.reshape(dl, 2, -1), rest.reshape(-1, 2, dr)]
        out = []
        for k in range(count - 1):
            m = rest if k == 0 else rest.reshape(dl * 2, -1)
            self.flops += m.shape[0] * m.shape[1] * min(m.shape)
            if min(m.shape) <= cap:
                q, rest = qr(m)
                keep = q.shape[1]
                out.append(q.reshape(dl, 2, keep))
            else:
                u, s, vt = svd(m)
                keep = self._keep(s, cap)
                out.append(u[:, :keep].reshape(dl, 2, keep))
                rest = s[:keep, None] * vt[:keep]
            dl = keep
        out.append(rest.reshape(dl, 2, dr))
        return out


def log_overlap(left: LineMPS, right: LineMPS) -> float:
    """ln |sum over all site legs of left x right|, where ``right`` runs along the line the other way
    (its site i sits on the bond of ``left``'s site L - 1 - i), plus both carried logs."""
    a_sites, b_sites = left.sites, right.sites[::-1]
    if len(a_sites) != len(b_sites):
        raise ValueError(f"lines of {len(a_sites)} and {len(b_sites)} sites cannot be joined")
    env = np.ones((1, 1))  # (D_right of b, D_right of a) so far
    log_env = 0.0
    for a, b in zip(a_sites, b_sites):
        dal, p, dar = a.shape
        dbr, _, dbl = b.shape  # b runs the other way: (D toward a's right, leg, D toward a's left)
        tmp = (env @ a.reshape(dal, p * dar)).reshape(dbl, p, dar).transpose(1, 0, 2).reshape(p * dbl, dar)
        env = b.reshape(dbr, p * dbl) @ tmp
        scale = float(np.abs(env).max())
        if scale == 0.0:
            return -math.inf
        log_env += math.log(scale)
        env = env * (1.0 / scale)
    return left.log_value + right.log_value + log_env + math.log(abs(float(env[0, 0])))
