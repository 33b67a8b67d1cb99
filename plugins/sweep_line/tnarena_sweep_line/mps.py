"""The MPS the sweep line carries, and the one operation it needs.

Sites are arrays of shape (D_left, 2, D_right), one per bond crossing the
line. The MPS is kept in mixed canonical form: sites left of ``center`` are
left-orthogonal, sites right of it right-orthogonal, so truncating the SVD of
a window that holds the centre is the best local truncation. The centre is
normalised after every operation and the logarithm of its norm carried.
"""

from __future__ import annotations

import math

import numpy as np


class LineMPS:
    """An MPS over the bonds crossing the sweep line.

    chi : most singular values kept per bond; cutoff : singular values below
    ``cutoff * largest`` are dropped as well.
    """

    def __init__(self, chi: int, cutoff: float) -> None:
        self.chi = chi
        self.cutoff = cutoff
        self.sites: list[np.ndarray] = []
        self.center = 0
        self.log_value = 0.0
        self.discarded = 0.0
        self.flops = 0.0
        self.largest = 1

    # ---- canonical form ----------------------------------------------------
    def _move_center(self, lo: int, hi: int) -> None:
        sites = self.sites
        while self.center < lo:
            a = sites[self.center]
            dl, p, dr = a.shape
            q, r = np.linalg.qr(a.reshape(dl * p, dr))
            sites[self.center] = q.reshape(dl, p, -1)
            sites[self.center + 1] = np.tensordot(r, sites[self.center + 1], axes=(1, 0))
            self.flops += dl * p * dr * dr
            self.center += 1
        while self.center >= hi:
            a = sites[self.center]
            dl, p, dr = a.shape
            q, r = np.linalg.qr(a.reshape(dl, p * dr).T)
            sites[self.center] = q.T.reshape(-1, p, dr)
            sites[self.center - 1] = np.tensordot(sites[self.center - 1], r.T, axes=(2, 0))
            self.flops += dl * p * dr * dl
            self.center -= 1

    # ---- the window operation ----------------------------------------------
    def apply(self, lo: int, hi: int, node: np.ndarray | None, axes: tuple, perm: tuple, count: int,
              cap: int | None = None) -> None:
        """Replace sites [lo, hi) by ``count`` new sites.

        node : the absorbed node's array, or None; axes : (window axes, node axes)
        for np.tensordot; perm : transpose of the result into
        (D_left, new physical legs..., D_right).
        """
        if hi > lo:
            self._move_center(lo, hi)
            block = self.sites[lo]
            for i in range(lo + 1, hi):
                block = np.tensordot(block, self.sites[i], axes=(block.ndim - 1, 0))
                self.flops += block.size * self.sites[i].shape[0]
        else:
            block = np.ones((1, 1))
        if node is not None:
            out = np.tensordot(block, node, axes=axes)
            self.flops += out.size * (2 ** len(axes[0]))
            block = out
        block = block.transpose(perm)
        self.largest = max(self.largest, block.size)
        self.sites[lo:hi] = self._split(block, count, self.chi if cap is None else cap)
        if count:
            self.center = lo + count - 1
            centre = self.sites[self.center]
            norm = float(np.linalg.norm(centre))
        else:
            norm = abs(float(block.reshape(-1)[0]))
            self.center = min(self.center, max(len(self.sites) - 1, 0))
        if norm == 0.0:
            self.log_value = -math.inf
            return
        self.log_value += math.log(norm)
        if count:
            self.sites[self.center] = centre / norm

    def compress(self) -> None:
        """Cut every bond wider than chi, sweeping the centre across them (QR elsewhere)."""
        sites = self.sites
        wide = [i for i in range(len(sites) - 1) if sites[i].shape[2] > self.chi]
        if not wide:
            return
        self._move_center(wide[0], wide[0] + 1)
        for i in range(wide[0], wide[-1] + 1):
            a = sites[i]
            dl, p, dr = a.shape
            m = a.reshape(dl * p, dr)
            if dr > self.chi:
                u, s, vh = np.linalg.svd(m, full_matrices=False)
                self.flops += m.shape[0] * m.shape[1] * min(m.shape)
                keep = self._keep(s, self.chi)
                sites[i] = u[:, :keep].reshape(dl, p, keep)
                r = s[:keep, None] * vh[:keep]
            else:
                q, r = np.linalg.qr(m)
                sites[i] = q.reshape(dl, p, -1)
            sites[i + 1] = np.tensordot(r, sites[i + 1], axes=(1, 0))
        self.center = wide[-1] + 1
        norm = float(np.linalg.norm(sites[self.center]))
        if norm == 0.0:
            self.log_value = -math.inf
            return
        self.log_value += math.log(norm)
        sites[self.center] /= norm

    def _keep(self, s: np.ndarray, cap: int) -> int:
        """How many singular values ``s`` (descending) survive cutoff and cap; adds the discarded weight."""
        keep = int(np.count_nonzero(s > self.cutoff * s[0])) if s[0] > 0 else 1
        keep = max(1, min(keep, cap))
        total = float(np.dot(s, s))
        if keep < s.size and total > 0:
            self.discarded += float(np.dot(s[keep:], s[keep:])) / total
        return keep

    def _split(self, block: np.ndarray, count: int, cap: int) -> list[np.ndarray]:
        """Cut (D_left, 2, ..., 2, D_right) into ``count`` sites, left to right, truncating."""
        if count == 0:
            return []
        dl, dr = block.shape[0], block.shape[-1]
        rest = block.reshape(dl, -1)
        out = []
        for _ in range(count - 1):
            m = rest.reshape(dl * 2, -1)
            u, s, vh = np.linalg.svd(m, full_matrices=False)
            self.flops += m.shape[0] * m.shape[1] * min(m.shape)
            keep = self._keep(s, cap)
            out.append(u[:, :keep].reshape(dl, 2, keep))
            rest = s[:keep, None] * vh[:keep]
            dl = keep
        out.append(rest.reshape(dl, 2, dr))
        return out
