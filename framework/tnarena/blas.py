"""BLAS threading for strategies that make many small LAPACK calls.

On a machine shared with other work (an arena's worker processes, a second
job), OpenBLAS's threaded SVD of matrices of a few hundred elements can run
tens of times slower than single-threaded, because its threads wait on busy
cores (measured here: an SVD-heavy sweep at chi = 32, 4.97 s with default
threads against 0.16 s with one, under load). Such strategies wrap their
contraction in :func:`one_blas_thread`.
"""

from __future__ import annotations

from contextlib import AbstractContextManager


def one_blas_thread() -> AbstractContextManager:
    """Context manager limiting BLAS/LAPACK to one thread (threadpoolctl), restored on exit."""
    from threadpoolctl import threadpool_limits

    return threadpool_limits(limits=1, user_api="blas")
