"""Logical failure counts on a (size, rate) grid, and their rates with Wilson intervals.

Every threshold function takes the same four plain arrays, so the counts can
come from an arena database or anywhere else:

- ``sizes``: code sizes d (distances), shape (S,), distinct positive integers;
- ``rates``: physical error rates p (probability per qubit), shape (R,), distinct, in [0, 1];
- ``failures``: logical failures counted at (size, rate), integer array, shape (S, R);
- ``trials``: decodes run at (size, rate), integer array, shape (S, R) (a scalar is broadcast).

:func:`as_grid` checks them once and sorts both axes; the other modules use
the :class:`FailureGrid` it returns.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from tnarena.stats import Z95, wilson_interval
from tnarena.errors import TnarenaError


@dataclass(frozen=True)
class FailureGrid:
    """Checked counts, both axes increasing.

    sizes : int array (S,); rates : float array (R,); failures, trials : int arrays (S, R).
    """

    sizes: np.ndarray
    rates: np.ndarray
    failures: np.ndarray
    trials: np.ndarray

    @property
    def observed(self) -> np.ndarray:
        """Observed logical failure rate failures / trials, shape (S, R)."""
        return self.failures / self.trials


@dataclass(frozen=True)
class CurvePoint:
    """One point of a failure curve: size d, physical rate p, counts and the Wilson interval.

    failure_rate : failures / trials (failures per decode); low, high : Wilson bounds at the
    requested confidence (E. B. Wilson, JASA 22, 209, 1927).
    """

    size: int
    rate: float
    failures: int
    trials: int
    failure_rate: float
    low: float
    high: float


def as_grid(sizes: ArrayLike, rates: ArrayLike, failures: ArrayLike, trials: ArrayLike, *,
            min_sizes: int = 1, min_rates: int = 1, purpose: str = "failure rates") -> FailureGrid:
    """Check the four count arrays (layout in the module docstring) and sort both axes.

    Raises
    ------
    TnarenaError
        Fewer than ``min_sizes`` sizes or ``min_rates`` rates, shapes that disagree,
        repeated sizes or rates, counts that are not integers with 0 <= failures <= trials,
        or a point with trials = 0.
    """
    d = np.asarray(sizes)
    p = np.asarray(rates, dtype=float)
    if d.ndim != 1 or p.ndim != 1:
        raise TnarenaError(f"sizes and rates must be 1-D arrays, not shapes {d.shape} and {p.shape}; "
                           f"give one entry per size and one per rate.")
    if len(d) < min_sizes:
        raise TnarenaError(f"{purpose} need at least {min_sizes} sizes, got {len(d)}; add runs at more sizes.")
    if len(p) < min_rates:
        raise TnarenaError(f"{purpose} need at least {min_rates} rates, got {len(p)}; add runs at more rates.")
    if not np.issubdtype(d.dtype, np.integer) or np.any(d < 1) or len(set(d.tolist())) != len(d):
        raise TnarenaError(f"sizes must be distinct positive integers, not {d.tolist()}; give each size once.")
    if not np.all(np.isfinite(p)) or np.any((p < 0) | (p > 1)) or len(set(p.tolist())) != len(p):
        raise TnarenaError(f"rates must be distinct probabilities in [0, 1], not {p.tolist()}; give each rate once.")
    k = _counts("failures", failures, (len(d), len(p)))
    n = _counts("trials", trials, (len(d), len(p)))
    if np.any(n == 0):
        i, j = np.argwhere(n == 0)[0]
        raise TnarenaError(f"trials is 0 at size {d[i]}, rate {p[j]:g}; run at least one decode there "
                           f"or leave that rate out.")
    if np.any((k < 0) | (k > n)):
        i, j = np.argwhere((k < 0) | (k > n))[0]
        raise TnarenaError(f"failures = {k[i, j]} of {n[i, j]} trials at size {d[i]}, rate {p[j]:g}; "
                           f"failures must lie between 0 and the number of trials.")
    si, rj = np.argsort(d), np.argsort(p)
    return FailureGrid(d[si].astype(int), p[rj], k[np.ix_(si, rj)], n[np.ix_(si, rj)])


def _counts(name: str, values: ArrayLike, shape: tuple[int, int]) -> np.ndarray:
    a = np.asarray(values)
    if a.ndim == 0 and name == "trials":
        a = np.full(shape, a)
    if a.shape != shape:
        raise TnarenaError(f"{name} has shape {a.shape} but sizes and rates ask for {shape}; "
                           f"give one row per size and one column per rate.")
    if not (np.issubdtype(a.dtype, np.integer) or (np.all(np.isfinite(a)) and np.all(a == np.round(a)))):
        raise TnarenaError(f"{name} must be whole counts, not {a.tolist()}; pass the numbers of decodes.")
    return a.astype(np.int64)


def failure_rates(sizes: ArrayLike, rates: ArrayLike, failures: ArrayLike, trials: ArrayLike, *,
                  z: float = Z95) -> list[CurvePoint]:
    """Logical failure rate with its Wilson score interval at every (size, rate).

    Parameters
    ----------
    sizes, rates, failures, trials : the count grid, shapes (S,), (R,), (S, R), (S, R).
    z : standard normal quantile of the interval (default 1.96: 95% two-sided).

    Returns
    -------
    list of CurvePoint, S * R of them, by size then rate (both increasing).
    """
    grid = as_grid(sizes, rates, failures, trials)
    points = []
    for i, d in enumerate(grid.sizes):
        for j, p in enumerate(grid.rates):
            k, n = int(grid.failures[i, j]), int(grid.trials[i, j])
            low, high = wilson_interval(k, n, z)
            points.append(CurvePoint(int(d), float(p), k, n, k / n, low, high))
    return points
