"""Thin QR, LQ and SVD of small real matrices through LAPACK directly.

The sweep factors thousands of matrices of a few dozen rows per contraction,
where numpy's wrappers cost more than the arithmetic (measured here on 4 x 4:
``np.linalg.qr`` 27 us against 10 us for dgeqrf + dorgqr; ``np.linalg.svd``
17 us against 9 us for dgesdd). Inputs are not checked for NaN or inf.
"""

from __future__ import annotations

import numpy as np
from scipy.linalg import lapack

_geqrf, _orgqr = lapack.dgeqrf, lapack.dorgqr
_gesdd, _gesvd = lapack.dgesdd, lapack.dgesvd


_UPPER: dict[tuple[int, int], np.ndarray] = {}  # upper-triangle masks by shape (np.triu costs 7 us)


def _upper(shape: tuple[int, int]) -> np.ndarray:
    mask = _UPPER.get(shape)
    if mask is None:
        mask = _UPPER[shape] = np.triu(np.ones(shape, dtype=bool))
    return mask


def qr(m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """m (r, c) = q (r, k) @ r_ (k, c), k = min(r, c), q with orthonormal columns."""
    k = min(m.shape)
    a, tau, _, info = _geqrf(m)
    if info:
        raise np.linalg.LinAlgError(f"dgeqrf failed (info {info})")
    r_ = a[:k] * _upper((k, m.shape[1]))
    q, _, info = _orgqr(a[:, :k], tau, overwrite_a=1)
    if info:
        raise np.linalg.LinAlgError(f"dorgqr failed (info {info})")
    return q, r_


def lq(m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """m (r, c) = l (r, k) @ q (k, c), k = min(r, c), q with orthonormal rows."""
    q, r_ = qr(m.T)
    return r_.T, q.T


def svd(m: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Thin SVD m (r, c) = u (r, k) diag(s) vt (k, c), s descending; dgesvd if dgesdd does not converge."""
    u, s, vt, info = _gesdd(m, compute_uv=1, full_matrices=0)
    if info > 0:
        u, s, vt, info = _gesvd(m, compute_uv=1, full_matrices=0)
    if info:
        raise np.linalg.LinAlgError(f"SVD did not converge (info {info})")
    return u, s, vt

