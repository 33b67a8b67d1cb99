"""Threshold estimate with a parametric bootstrap interval for p_c and nu.

The bootstrap (Efron and Tibshirani, *An Introduction to the Bootstrap*, 1993;
parametric variant, percentile intervals; common practice) redraws the failures
at every point from Binomial(trials, observed rate), refits the scaling form
(:mod:`tnarena.thresholds.scaling`) to each redraw and takes the percentiles
of the refitted p_c and nu.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from tnarena.errors import TnarenaError
from tnarena.thresholds.crossings import Crossing, grid_crossings
from tnarena.thresholds.data import FailureGrid, as_grid
from tnarena.thresholds.scaling import NU_START, ScalingFit, fit_grid


@dataclass(frozen=True)
class ThresholdEstimate:
    """Scaling fit, bootstrap intervals and pairwise crossings of one family of failure curves.

    grid : the checked counts; fit : fit to the observed counts;
    p_c_interval, nu_interval : (low, high) percentile bootstrap bounds at ``level``;
    p_c_samples, nu_samples : the refitted values, shape (resamples,);
    crossings : consecutive-size crossings of the observed curves.
    """

    grid: FailureGrid
    fit: ScalingFit
    level: float
    p_c_interval: tuple[float, float]
    nu_interval: tuple[float, float]
    p_c_samples: np.ndarray
    nu_samples: np.ndarray
    crossings: list[Crossing]


def estimate_threshold(sizes: ArrayLike, rates: ArrayLike, failures: ArrayLike, trials: ArrayLike, *,
                       resamples: int = 200, level: float = 0.95, seed: int | np.random.Generator = 0,
                       p_c0: float | None = None, nu0: float = NU_START) -> ThresholdEstimate:
    """Fit the scaling form and bootstrap p_c and nu.

    Parameters
    ----------
    sizes, rates, failures, trials : the count grid (:mod:`tnarena.thresholds.data`),
        at least 2 sizes and 3 rates.
    resamples : number of bootstrap redraws, >= 10.
    level : coverage of the percentile intervals, in (0, 1).
    seed : seed of a numpy Generator (PCG64), or a Generator to draw from.
    p_c0, nu0 : starting values of the central fit (see :func:`~tnarena.thresholds.scaling.fit_scaling`);
        each redraw starts from the central fit.

    Returns
    -------
    ThresholdEstimate
    """
    if resamples < 10:
        raise TnarenaError(f"resamples = {resamples} is too few for a bootstrap interval; use at least 10 "
                           f"(200 is the default).")
    if not 0 < level < 1:
        raise TnarenaError(f"level = {level} is not a coverage; give a number between 0 and 1, such as 0.95.")
    grid = as_grid(sizes, rates, failures, trials, min_sizes=2, min_rates=3, purpose="the threshold estimate")
    fit = fit_grid(grid, grid.failures, p_c0=p_c0, nu0=nu0)
    rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)
    samples = np.empty((resamples, 2))
    for r in range(resamples):
        redrawn = rng.binomial(grid.trials, grid.observed)
        refit = fit_grid(grid, redrawn, start=fit)
        samples[r] = refit.p_c, refit.nu
    tails = [(1 - level) / 2, (1 + level) / 2]
    p_lo, p_hi = np.quantile(samples[:, 0], tails)
    nu_lo, nu_hi = np.quantile(samples[:, 1], tails)
    return ThresholdEstimate(grid, fit, level, (float(p_lo), float(p_hi)), (float(nu_lo), float(nu_hi)),
                             samples[:, 0].copy(), samples[:, 1].copy(), grid_crossings(grid))
