"""Structure-only cost figures, and the sweep directions worth calibrating.

A straight line at offset t across direction theta crosses a bond when the
bond's two end nodes project (x cos theta + y sin theta) strictly on
opposite sides of t. :func:`line_crossings` sweeps t over the gaps between
the projected node positions and counts crossings there; the largest count
bounds the sweep's line MPS (2^count before truncation). Strategies that
declare :meth:`tnarena.strategy.Strategy.cost` give their own figures.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from tnarena.errors import PluginError, TnarenaError
from tnarena.network import NetworkStructure
from tnarena.strategy import Strategy

#: Angles (degrees) tried for a strategy whose ``direction`` parameter is free (no choices).
LINE_ANGLES = (0.0, 90.0, 180.0, 270.0, 45.0, 135.0, 225.0, 315.0)

#: A second direction (not parallel to the best) is calibrated when its cost is within this factor.
SECOND_DIRECTION = 2.0

#: Cost keys that rank directions, the first one present counting (smaller is cheaper).
RANK_KEYS = ("largest_column", "max_crossings", "width", "flops_estimate", "flops")


def line_crossings(structure: NetworkStructure, degrees: float) -> dict[str, float]:
    """Bonds a straight line at angle ``degrees`` crosses, over every offset.

    Returns ``max_crossings`` (largest count over offsets) and ``mean_crossings``
    (mean over the gaps between distinct projected positions).
    """
    bonds = np.asarray(structure.bonds, dtype=np.int64).reshape(-1, 2)
    if not len(bonds):
        return {"max_crossings": 0.0, "mean_crossings": 0.0}
    angle = math.radians(degrees)
    pos = np.asarray(structure.positions, dtype=float).reshape(-1, 2)
    t = np.round(pos[:, 0] * math.cos(angle) + pos[:, 1] * math.sin(angle), 9)
    lo = np.sort(np.minimum(t[bonds[:, 0]], t[bonds[:, 1]]))
    hi = np.sort(np.maximum(t[bonds[:, 0]], t[bonds[:, 1]]))
    levels = np.unique(t)
    if levels.size < 2:
        return {"max_crossings": 0.0, "mean_crossings": 0.0}
    gaps = 0.5 * (levels[1:] + levels[:-1])
    count = np.searchsorted(lo, gaps) - np.searchsorted(hi, gaps)  # lo < gap minus hi < gap
    return {"max_crossings": float(count.max()), "mean_crossings": float(count.mean())}


def direction_values(strategy: Strategy) -> list[Any]:
    """The directions the chooser may try for a strategy ([None] when it has no direction)."""
    param = next((p for p in strategy.parameters if p.name == "direction"), None)
    if param is None:
        return [None]
    if param.choices is not None:
        return list(param.choices)
    return [f"{a:g}" if param.kind == "str" else a for a in LINE_ANGLES]


def setting_cost(strategy: Strategy, structure: NetworkStructure, params: dict[str, Any]) -> dict[str, float]:
    """The strategy's own cost figures, or line crossings where it has none and takes a direction.

    Raises TnarenaError where the strategy refuses the structure.
    """
    resolved = strategy.resolve(params)
    try:
        figures = strategy.cost(structure, resolved)
    except TnarenaError:
        raise
    except Exception as exc:
        raise PluginError(f"strategy {strategy.name!r} raised {type(exc).__name__} in cost(): {exc}") from exc
    if figures is None and params.get("direction") is not None:
        figures = line_crossings(structure, float(params["direction"]))
    return dict(figures or {})


def rank_directions(strategy: Strategy, structure: NetworkStructure, chi: int) -> tuple[list[Any], list[dict]]:
    """Directions to calibrate, cheapest first, and the cost rows behind them.

    The cheapest direction, plus the cheapest one not parallel to it when its cost
    is within SECOND_DIRECTION of the best (timing then decides between them).
    """
    rows, ranked = [], []
    has_chi = any(p.name == "chi" for p in strategy.parameters)
    for value in direction_values(strategy):
        params: dict[str, Any] = {} if value is None else {"direction": value}
        if has_chi:
            params["chi"] = chi
        row: dict[str, Any] = {"strategy": strategy.name, "direction": value}
        try:
            figures = setting_cost(strategy, structure, params)
        except TnarenaError as exc:
            rows.append({**row, "refused": str(exc)})
            continue
        rows.append({**row, **figures})
        rank = next((figures[k] for k in RANK_KEYS if k in figures), 0.0)
        ranked.append((rank, figures.get("mean_crossings", 0.0), len(ranked), value))
    if not ranked:
        return [], rows
    ranked.sort(key=lambda r: r[:3])
    best = ranked[0]
    chosen = [best[3]]
    for rank, _, _, value in ranked[1:]:
        if best[3] is not None and not _parallel(value, best[3]) and rank <= SECOND_DIRECTION * max(best[0], 1e-300):
            chosen.append(value)
            break
    return chosen, rows


def _parallel(a: Any, b: Any) -> bool:
    return abs((float(a) - float(b)) % 180.0) < 1e-9


def exact_costs(strategies: Sequence[Strategy], structure: NetworkStructure) -> list[dict[str, Any]]:
    """Cost rows of the exact strategies (their ``cost`` with default params; skipped when None)."""
    rows = []
    for s in strategies:
        try:
            figures = setting_cost(s, structure, {})
        except TnarenaError as exc:
            rows.append({"strategy": s.name, "direction": None, "refused": str(exc)})
            continue
        if figures:
            rows.append({"strategy": s.name, "direction": None, **figures})
    return rows
