"""The boundary MPS and the one step it takes: absorb a column, compress to chi.

Sites are arrays of shape (Dl, P, Dr), one per row with bonds into the next
column (P = 2 ** bonds). A step forms the exact MPO x MPS product (one
product site per group, see ``schedule``), folds product sites that have no
bond to the next column into a neighbour, brings the product into left
canonical form with QR (bottom to top) and truncates it top to bottom with
SVDs at the orthogonality centre, splitting product sites that span several
rows on the way (published method: boundary MPS with SVD compression in
canonical form). Norms are divided out as they appear and their natural
logarithm is carried in ``log_value``.
"""

from __future__ import annotations

import math

import numpy as np

from tnarena_boundary_columns.schedule import GroupOp


class BoundaryMPS:
    """The MPS between the columns absorbed so far and the rest.

    chi : most singular values kept per virtual bond; cutoff : singular values
    below ``cutoff * largest`` are dropped as well.
    """

    def __init__(self, chi: int, cutoff: float) -> None:
        self.chi = chi
        self.cutoff = cutoff
        self.sites: list[np.ndarray] = []
        self.log_value = 0.0
        self.discarded = 0.0
        self.flops = 0.0
        self.largest = 1

    # ---- one column ------------------------------------------------------------
    def absorb(self, ops: tuple[GroupOp, ...], cells: list[np.ndarray]) -> None:
        """Apply one column (its groups, in row order) and compress the result to chi."""
        products = [self._product(op, cells) for op in ops]
        sites = self._fold(products)
        if sites is None:
            return
        self.sites = self._compress(sites) if sites else []

    def _product(self, op: GroupOp, cells: list[np.ndarray]) -> tuple[np.ndarray, tuple[int, ...]]:
        """The group's product site, shape (Dl * 2^down, 2^physical, Dr * 2^up), and its rows."""
        if op.old_site >= 0:
            site = self.sites[op.old_site]
            dl, dr = site.shape[0], site.shape[2]
            run = site.reshape((dl,) + (2,) * op.old_rank + (dr,))
        else:
            dl = dr = 1
            run = np.ones((1, 1))
        for i, axes in zip(op.cells, op.axes):
            run = np.tensordot(run, cells[i], axes=axes)
            self.flops += run.size * 2.0 ** len(axes[0])
            self.largest = max(self.largest, run.size)
        run = run.transpose(op.perm).reshape(dl * 2**op.down, -1, dr * 2**op.up)
        return run, op.rows

    def _fold(self, products: list) -> list | None:
        """Merge product sites without physical bonds into a neighbour; None when the MPS closed to 0."""
        sites: list[list] = []
        pending = None  # matrix (D, D') waiting to be multiplied into the next site
        for site, rows in products:
            if pending is not None:
                site = np.tensordot(pending, site, axes=(1, 0))
                self.flops += site.size * pending.shape[1]
                pending = None
            if rows:
                sites.append([site, rows])
                continue
            pending = site.reshape(site.shape[0], site.shape[2])
            norm = float(np.abs(pending).max()) if pending.size else 0.0
            if not self._carry(norm):
                return None
            pending = pending / norm
        if pending is not None:
            if sites:
                sites[-1][0] = np.tensordot(sites[-1][0], pending, axes=(2, 0))
                self.flops += sites[-1][0].size * pending.shape[0]
            else:  # the last column: the MPS closed into a number
                self._carry(abs(float(pending.reshape(-1)[0])))
                self.sites = []
                return None
        return sites

    def _compress(self, sites: list) -> list[np.ndarray]:
        """Left-canonical QR sweep, then truncating SVD sweep from the top (splitting rows)."""
        n = len(sites)
        for i in range(n - 1):
            a = sites[i][0]
            dl, p, dr = a.shape
            q, r = np.linalg.qr(a.reshape(dl * p, dr))
            self.flops += dl * p * dr * min(dl * p, dr)
            norm = float(np.linalg.norm(r))
            if not self._carry(norm):
                return []
            sites[i][0] = q.reshape(dl, p, -1)
            sites[i + 1][0] = np.tensordot(r / norm, sites[i + 1][0], axes=(1, 0))
            self.flops += sites[i + 1][0].size * r.shape[1]
        norm = float(np.linalg.norm(sites[-1][0]))
        if not self._carry(norm):
            return []
        sites[-1][0] = sites[-1][0] / norm
        out: list[np.ndarray] = []
        for i in range(n - 1, -1, -1):
            a, rows = sites[i]
            dims = [2**k for k in rows]
            while len(dims) > 1:  # split the top row off a site spanning several rows
                last = dims.pop()
                dl, dr = a.shape[0], a.shape[2]
                vh, us = self._svd_right(a.reshape(dl * (a.shape[1] // last), last * dr))
                out.append(vh.reshape(-1, last, dr))
                a = us.reshape(dl, -1, vh.shape[0])
            if i > 0:
                dl, p, dr = a.shape
                vh, us = self._svd_right(a.reshape(dl, p * dr))
                out.append(vh.reshape(-1, p, dr))
                sites[i - 1][0] = np.tensordot(sites[i - 1][0], us, axes=(2, 0))
            else:
                norm = float(np.linalg.norm(a))
                if not self._carry(norm):
                    return []
                out.append(a / norm)
        out.reverse()
        for a in out:
            self.largest = max(self.largest, a.size)
        return out

    # ---- helpers ---------------------------------------------------------------
    def _svd_right(self, m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Truncated SVD m ~ (U S) Vh; returns (Vh, U S) with at most chi kept values."""
        self.largest = max(self.largest, m.size)
        try:
            u, s, vh = np.linalg.svd(m, full_matrices=False)
        except np.linalg.LinAlgError:  # rare LAPACK convergence failure: the slower driver
            import scipy.linalg

            u, s, vh = scipy.linalg.svd(m, full_matrices=False, lapack_driver="gesvd")
        self.flops += m.shape[0] * m.shape[1] * min(m.shape)
        keep = int(np.count_nonzero(s > self.cutoff * s[0])) if s.size and s[0] > 0 else 1
        keep = max(1, min(keep, self.chi))
        total = float(np.dot(s, s))
        if keep < s.size and total > 0:
            self.discarded += float(np.dot(s[keep:], s[keep:])) / total
        return vh[:keep], u[:, :keep] * s[:keep]

    def _carry(self, norm: float) -> bool:
        """Add ln(norm) to log_value; False (log_value -inf, or NaN if not finite) when it is 0."""
        if norm == 0.0 or not math.isfinite(norm):
            self.log_value = -math.inf if norm == 0.0 else math.nan
            self.sites = []
            return False
        self.log_value += math.log(norm)
        return True
