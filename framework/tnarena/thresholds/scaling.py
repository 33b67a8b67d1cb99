"""Finite-size-scaling fit of failure rates near threshold (a standard method, common practice).

Near the threshold p_c the logical failure rate of size d is taken to depend on
p and d only through x = (p - p_c) d^(1/nu), expanded to second order:

    f(p, d) = A + B x + C x^2.

The five parameters are fitted to every observed rate by weighted nonlinear
least squares (:func:`scipy.optimize.least_squares`); each residual is divided
by the binomial standard error sqrt(f (1 - f) / n), floored at 1/n (the error
of one failure in n) so that points with no failures do not get infinite weight.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from scipy.optimize import least_squares

from tnarena.thresholds.crossings import grid_crossings
from tnarena.thresholds.data import FailureGrid, as_grid

#: Bounds on nu during the fit (open interval, as a closed one just inside).
NU_BOUNDS = (0.3, 5.0)
#: Starting value of nu.
NU_START = 1.5


@dataclass(frozen=True)
class ScalingFit:
    """Fitted f = A + B x + C x^2, x = (p - p_c) d^(1/nu).

    p_c : threshold, probability per qubit; nu : correlation-length exponent (dimensionless);
    A, B, C : coefficients (failure rate per decode, and per unit of x and x^2);
    chi2_dof : weighted residual sum of squares over dof = points - 5;
    converged : whether least_squares reported convergence.
    """

    p_c: float
    nu: float
    A: float
    B: float
    C: float
    chi2_dof: float
    dof: int
    converged: bool

    def scaling_variable(self, sizes: ArrayLike, rates: ArrayLike) -> np.ndarray:
        """x = (p - p_c) d^(1/nu), broadcast over ``sizes`` and ``rates``."""
        return scaling_variable(self.p_c, self.nu, np.asarray(sizes, dtype=float), np.asarray(rates, dtype=float))

    def predict(self, sizes: ArrayLike, rates: ArrayLike) -> np.ndarray:
        """Fitted failure rate A + B x + C x^2 (not clipped), broadcast over ``sizes`` and ``rates``."""
        x = self.scaling_variable(sizes, rates)
        return self.A + self.B * x + self.C * x * x


def scaling_variable(p_c: float, nu: float, sizes: np.ndarray, rates: np.ndarray) -> np.ndarray:
    """x = (p - p_c) d^(1/nu) (dimensionless), numpy broadcasting."""
    return (rates - p_c) * sizes ** (1.0 / nu)


def standard_errors(failures: np.ndarray, trials: np.ndarray) -> np.ndarray:
    """Binomial standard error of the observed rate, floored at 1/trials; same shape as the counts."""
    f = failures / trials
    return np.maximum(np.sqrt(f * (1 - f) / trials), 1.0 / trials)


def fit_scaling(sizes: ArrayLike, rates: ArrayLike, failures: ArrayLike, trials: ArrayLike, *,
                p_c0: float | None = None, nu0: float = NU_START) -> ScalingFit:
    """Fit the scaling form to the count grid (layout in :mod:`tnarena.thresholds.data`).

    Parameters
    ----------
    sizes, rates, failures, trials : counts, at least 2 sizes and 3 rates.
    p_c0 : starting threshold; default the mean of the pairwise crossings, or the
        middle of the rates when no pair crosses.
    nu0 : starting nu.

    Returns
    -------
    ScalingFit, with p_c inside [min(rates), max(rates)] and nu inside NU_BOUNDS.
    """
    grid = as_grid(sizes, rates, failures, trials, min_sizes=2, min_rates=3, purpose="the scaling fit")
    return fit_grid(grid, grid.failures, p_c0=p_c0, nu0=nu0)


def fit_grid(grid: FailureGrid, failures: np.ndarray, *, p_c0: float | None = None,
             nu0: float = NU_START, start: ScalingFit | None = None) -> ScalingFit:
    """Fit to ``failures`` (shape (S, R)) on the checked ``grid``; start from ``start`` when given."""
    d = np.broadcast_to(grid.sizes[:, None], grid.trials.shape).astype(float).ravel()
    p = np.broadcast_to(grid.rates[None, :], grid.trials.shape).ravel()
    f = (failures / grid.trials).ravel()
    w = 1.0 / standard_errors(failures, grid.trials).ravel()
    lo, hi = float(grid.rates[0]), float(grid.rates[-1])
    if start is not None:
        x0 = np.array([start.p_c, start.nu, start.A, start.B, start.C])
    else:
        pc = _starting_threshold(grid, failures) if p_c0 is None else p_c0
        x0 = _starting_values(float(pc), nu0, d, p, f, w)
    bounds = ([lo, NU_BOUNDS[0], -np.inf, -np.inf, -np.inf], [hi, NU_BOUNDS[1], np.inf, np.inf, np.inf])
    x0[0], x0[1] = np.clip(x0[0], lo, hi), np.clip(x0[1], *NU_BOUNDS)

    def residuals(theta: np.ndarray) -> np.ndarray:
        pc, nu, a, b, c = theta
        x = scaling_variable(pc, nu, d, p)
        return w * (a + b * x + c * x * x - f)

    sol = least_squares(residuals, x0, bounds=bounds, x_scale="jac")
    dof = len(f) - 5
    chi2 = float(np.sum(sol.fun ** 2))
    return ScalingFit(*(float(v) for v in sol.x), chi2_dof=chi2 / dof if dof > 0 else float("nan"),
                      dof=dof, converged=bool(sol.status > 0))


def _starting_threshold(grid: FailureGrid, failures: np.ndarray) -> float:
    found = [c.rate for c in grid_crossings(grid, failures) if c.rate is not None]
    return float(np.mean(found)) if found else float(np.mean(grid.rates[[0, -1]]))


def _starting_values(pc: float, nu: float, d: np.ndarray, p: np.ndarray, f: np.ndarray,
                     w: np.ndarray) -> np.ndarray:
    """(p_c, nu, A, B, C) with A, B, C from weighted linear least squares at the given p_c, nu."""
    x = scaling_variable(pc, nu, d, p)
    design = np.stack([np.ones_like(x), x, x * x], axis=1) * w[:, None]
    abc, *_ = np.linalg.lstsq(design, f * w, rcond=None)
    return np.array([pc, nu, *abc])
