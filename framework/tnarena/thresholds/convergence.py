"""Is the threshold estimate converged in the bond dimension chi? (common practice)

Given p_c with its interval at increasing chi, each step from one chi to the
next is called converged when each estimate lies inside the other's interval,
i.e. raising chi moved p_c by less than its own statistical error.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from tnarena.errors import TnarenaError


@dataclass(frozen=True)
class ChiStep:
    """p_c (probability per qubit) at bond dimension ``chi`` with interval (low, high).

    change : p_c minus p_c at the previous chi (None at the first chi);
    converged : both estimates inside each other's interval (None at the first chi).
    """

    chi: int
    p_c: float
    low: float
    high: float
    change: float | None
    converged: bool | None


def chi_convergence(chis: ArrayLike, p_c: ArrayLike, intervals: ArrayLike) -> list[ChiStep]:
    """One row per chi, sorted by chi, each compared with the previous chi.

    Parameters
    ----------
    chis : bond dimensions, shape (K,), distinct, K >= 2.
    p_c : threshold estimate at each chi, shape (K,).
    intervals : (low, high) of each estimate, shape (K, 2), low <= p_c <= high.

    Returns
    -------
    list of ChiStep; the estimate is converged in chi when the last step is.
    """
    c, p, iv = np.asarray(chis), np.asarray(p_c, dtype=float), np.asarray(intervals, dtype=float)
    if c.ndim != 1 or len(c) < 2 or len(set(c.tolist())) != len(c):
        raise TnarenaError(f"chi convergence needs at least 2 distinct chi values, not {c.tolist()}; "
                           f"estimate the threshold at more bond dimensions.")
    if p.shape != c.shape or iv.shape != (len(c), 2):
        raise TnarenaError(f"p_c has shape {p.shape} and intervals {iv.shape}, but {len(c)} chi values ask for "
                           f"({len(c)},) and ({len(c)}, 2); give one estimate and one (low, high) per chi.")
    if np.any((iv[:, 0] > p) | (p > iv[:, 1])):
        raise TnarenaError("every interval must contain its estimate (low <= p_c <= high); "
                           "pass (low, high) bounds in that order.")
    steps: list[ChiStep] = []
    for k in np.argsort(c):
        prev = steps[-1] if steps else None
        lo, hi, pc = float(iv[k, 0]), float(iv[k, 1]), float(p[k])
        change = None if prev is None else pc - prev.p_c
        ok = None if prev is None else bool(lo <= prev.p_c <= hi and prev.low <= pc <= prev.high)
        steps.append(ChiStep(int(c[k]), pc, lo, hi, change, ok))
    return steps


def chi_table(steps: list[ChiStep]) -> str:
    """Markdown table of :func:`chi_convergence` rows: chi, p_c, interval, change, converged."""
    lines = ["| chi | p_c | interval | change from previous chi | converged |", "|--:|--:|:--|--:|:--|"]
    for s in steps:
        change = "-" if s.change is None else f"{s.change:+.5f}"
        verdict = "-" if s.converged is None else ("yes" if s.converged else "no")
        lines.append(f"| {s.chi} | {s.p_c:.5f} | [{s.low:.5f}, {s.high:.5f}] | {change} | {verdict} |")
    return "\n".join(lines)
