"""Where the failure curves of consecutive sizes cross (common practice: REFERENCES 12).

Below threshold a larger code fails less often, above it more often, so the
curves of two sizes cross near the threshold. The crossing is found on the
observed rates by linear interpolation of their difference between
neighbouring physical rates.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from tnarena.thresholds.data import FailureGrid, as_grid


@dataclass(frozen=True)
class Crossing:
    """The crossing of the curves of ``smaller`` and ``larger`` (sizes), at physical rate ``rate``.

    rate : probability per qubit; None when the curves do not cross upwards inside the rates run.
    """

    smaller: int
    larger: int
    rate: float | None


def crossing_rate(rates: np.ndarray, smaller: np.ndarray, larger: np.ndarray) -> float | None:
    """First rate where ``larger - smaller`` goes from <= 0 to > 0, linearly interpolated.

    Parameters
    ----------
    rates : increasing physical rates, shape (R,).
    smaller, larger : failure rates of the smaller and the larger size at those rates, shape (R,).

    Returns
    -------
    The interpolated rate, or None when the difference never turns from <= 0 to > 0
    (the larger size is better or worse everywhere, or only crosses downwards).
    """
    diff = np.asarray(larger, dtype=float) - np.asarray(smaller, dtype=float)
    for j in range(len(diff) - 1):
        if diff[j] <= 0 < diff[j + 1]:
            step = rates[j + 1] - rates[j]
            return float(rates[j] + step * diff[j] / (diff[j] - diff[j + 1]))
    return None


def pairwise_crossings(sizes: ArrayLike, rates: ArrayLike, failures: ArrayLike,
                       trials: ArrayLike) -> list[Crossing]:
    """Crossing of each pair of consecutive sizes, from observed failure rates.

    Parameters
    ----------
    sizes, rates, failures, trials : the count grid (:mod:`tnarena.thresholds.data`),
        at least 2 sizes and 2 rates.

    Returns
    -------
    list of Crossing, S - 1 of them, for (d_1, d_2), (d_2, d_3), ... with sizes increasing.
    """
    return grid_crossings(as_grid(sizes, rates, failures, trials, min_sizes=2, min_rates=2, purpose="crossings"))


def grid_crossings(grid: FailureGrid, failures: np.ndarray | None = None) -> list[Crossing]:
    """Consecutive-size crossings on a checked grid, of ``failures`` (shape (S, R)) or the grid's own."""
    f = (grid.failures if failures is None else failures) / grid.trials
    return [Crossing(int(grid.sizes[i]), int(grid.sizes[i + 1]), crossing_rate(grid.rates, f[i], f[i + 1]))
            for i in range(len(grid.sizes) - 1)]
