"""Binomial statistics shared by reports and threshold estimates."""

from __future__ import annotations

import math

#: Two-sided 95% standard normal quantile, Phi^-1(0.975).
Z95 = 1.959963984540054


def wilson_interval(successes: int, trials: int, z: float = Z95) -> tuple[float, float]:
    """Wilson score interval of a binomial proportion (E. B. Wilson, JASA 22, 209, 1927).

    Parameters
    ----------
    successes, trials : counts, 0 <= successes <= trials, trials >= 1.
    z : standard normal quantile (default: 95% two-sided).

    Returns
    -------
    (low, high) : bounds of the proportion, within [0, 1].
    """
    if trials < 1 or not 0 <= successes <= trials:
        raise ValueError(f"wilson_interval needs 0 <= successes <= trials and trials >= 1, "
                         f"not {successes} of {trials}.")
    p = successes / trials
    shrink = 1.0 + z * z / trials
    centre = (p + z * z / (2 * trials)) / shrink
    half = z / shrink * math.sqrt(p * (1 - p) / trials + z * z / (4 * trials * trials))
    return max(0.0, centre - half), min(1.0, centre + half)
