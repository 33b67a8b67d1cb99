"""Threshold figures (matplotlib, PNG): failure curves with the scaling fit, and p_c against chi.

Figures are :class:`matplotlib.figure.Figure` objects saved by the Agg canvas,
without pyplot, so the caller's backend and open figures are untouched.
"""

from __future__ import annotations

from pathlib import Path

import matplotlib
import numpy as np
from matplotlib.figure import Figure

from tnarena.thresholds.bootstrap import ThresholdEstimate
from tnarena.thresholds.convergence import ChiStep
from tnarena.thresholds.data import failure_rates

DPI = 120
_RC = {"font.size": 9, "axes.titlesize": 9, "axes.labelsize": 9, "legend.fontsize": 8,
       "xtick.labelsize": 8, "ytick.labelsize": 8, "axes.spines.top": False, "axes.spines.right": False}


def plot_threshold(estimate: ThresholdEstimate, path: str | Path, *, title: str = "Threshold estimate") -> Path:
    """Two panels: failure rate against p (Wilson 95% bars, fitted curves, p_c band) and the data collapse.

    The left panel shows each size in its own colour, the scaling fit as lines and the
    bootstrap interval of p_c as a shaded band; the right panel plots the same rates
    against x = (p - p_c) d^(1/nu) with the fitted parabola. Returns ``path``.
    """
    grid, fit = estimate.grid, estimate.fit
    points = failure_rates(grid.sizes, grid.rates, grid.failures, grid.trials)
    cmap = matplotlib.colormaps["viridis"]
    colours = [cmap(i / max(1, len(grid.sizes) - 1) * 0.9) for i in range(len(grid.sizes))]
    dense = np.linspace(grid.rates[0], grid.rates[-1], 200)
    with matplotlib.rc_context(_RC):
        fig = Figure(figsize=(9.0, 3.8), layout="constrained")
        curves, collapse = fig.subplots(1, 2)
        lo, hi = estimate.p_c_interval
        curves.axvspan(lo, hi, color="0.85", label=f"p_c {estimate.level:.0%} bootstrap: [{lo:.4f}, {hi:.4f}]")
        curves.axvline(fit.p_c, color="0.4", lw=0.8, ls="--", label=f"fitted p_c = {fit.p_c:.4f}")
        x_all = []
        for i, (d, colour) in enumerate(zip(grid.sizes, colours)):
            mine = [q for q in points if q.size == d]
            f = np.array([q.failure_rate for q in mine])
            bars = np.array([[q.failure_rate - q.low for q in mine], [q.high - q.failure_rate for q in mine]])
            curves.errorbar(grid.rates, f, yerr=bars, fmt="o", ms=3.5, capsize=2, color=colour, label=f"d = {d}")
            curves.plot(dense, np.clip(fit.predict(d, dense), 0, 1), color=colour, lw=1)
            x = fit.scaling_variable(d, grid.rates)
            x_all.append(x)
            collapse.errorbar(x, f, yerr=bars, fmt="o", ms=3.5, capsize=2, color=colour, label=f"d = {d}")
        xs = np.linspace(min(map(np.min, x_all)), max(map(np.max, x_all)), 200)
        collapse.plot(xs, np.clip(fit.A + fit.B * xs + fit.C * xs * xs, 0, 1), color="k", lw=1,
                      label=f"A + Bx + Cx², ν = {fit.nu:.2f}")
        curves.set_xlabel("physical error rate p (probability per qubit)")
        curves.set_ylabel("logical failure rate (per decode)")
        curves.set_title(f"failure rate, Wilson 95% intervals; χ²/dof = {fit.chi2_dof:.2f}")
        collapse.set_xlabel("x = (p − p_c) d^(1/ν) (dimensionless)")
        collapse.set_ylabel("logical failure rate (per decode)")
        nu_lo, nu_hi = estimate.nu_interval
        collapse.set_title(f"data collapse; ν {estimate.level:.0%} bootstrap: [{nu_lo:.2f}, {nu_hi:.2f}]")
        curves.legend(loc="lower right")
        collapse.legend(loc="upper left")
        fig.suptitle(title)
        return _save(fig, path)


def plot_chi_convergence(steps: list[ChiStep], path: str | Path, *,
                         title: str = "Threshold against bond dimension") -> Path:
    """p_c with its interval against chi (log2 axis); converged steps in a filled marker. Returns ``path``."""
    chi = np.array([s.chi for s in steps], dtype=float)
    pc = np.array([s.p_c for s in steps])
    bars = np.array([[s.p_c - s.low for s in steps], [s.high - s.p_c for s in steps]])
    with matplotlib.rc_context(_RC):
        fig = Figure(figsize=(4.8, 3.4), layout="constrained")
        ax = fig.subplots()
        ax.errorbar(chi, pc, yerr=bars, fmt="-", color="0.5", capsize=3, lw=0.8)
        done = np.array([bool(s.converged) for s in steps])
        ax.plot(chi[done], pc[done], "o", color="C2", label="within the previous interval")
        ax.plot(chi[~done], pc[~done], "o", mfc="white", color="C3", label="first chi, or moved outside")
        ax.set_xscale("log", base=2)
        ax.set_xticks(chi, [f"{c:g}" for c in chi])
        ax.minorticks_off()
        ax.set_xlabel("bond dimension χ")
        ax.set_ylabel("threshold p_c (probability per qubit)")
        ax.legend()
        fig.suptitle(title)
        return _save(fig, path)


def _save(fig: Figure, path: str | Path) -> Path:
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fig.savefig(path, dpi=DPI)
    return path
