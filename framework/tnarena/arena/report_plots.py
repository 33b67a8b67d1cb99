"""The report's figures (matplotlib, PNG): accuracy, memory, logical failure.

Figures are made with :class:`matplotlib.figure.Figure` and saved by the Agg
canvas, without pyplot, so the caller's backend and open figures are untouched.

Each function draws one :class:`~tnarena.arena.report.Group` (one family,
lattice and noise model) to one PNG and returns its path. Settings keep one
colour and marker across every figure of a report (:func:`setting_styles`).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from pathlib import Path

import matplotlib
import numpy as np
from matplotlib.figure import Figure
from matplotlib.patches import Patch
from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

from tnarena.arena.report import ERROR_FLOOR, Group, Marker, pareto_front
from tnarena.stats import wilson_interval

DPI = 120
_MARKERS = "osD^vPX<>hp*"
#: Relative sideways offset between sizes in the failure plot, so error bars do not hide each other.
_DODGE = 0.015
_RC = {"font.size": 9, "axes.titlesize": 9, "axes.labelsize": 9, "legend.fontsize": 8,
       "xtick.labelsize": 8, "ytick.labelsize": 8, "axes.spines.top": False, "axes.spines.right": False}


def setting_styles(settings: Iterable[str]) -> dict[str, tuple[tuple[float, ...], str]]:
    """setting label -> (colour, marker), in first-seen order (tab10 colours, then repeats)."""
    names = list(dict.fromkeys(settings))
    cmap = matplotlib.colormaps["tab10"]
    return {name: (cmap(i % 10), _MARKERS[i % len(_MARKERS)]) for i, name in enumerate(names)}


def plot_accuracy(group: Group, styles: dict, path: Path) -> Path:
    """Mean |Δ ln P| against median contraction ms, log-log, one panel per size, Pareto front drawn."""
    sizes = sorted(group.markers)
    with matplotlib.rc_context(_RC):
        fig = Figure(figsize=(3.0 * len(sizes) + 0.8, 3.6), layout="constrained")
        axes = fig.subplots(1, len(sizes), sharey=True, squeeze=False)
        highest = ERROR_FLOOR
        for ax, size in zip(axes[0], sizes):
            highest = max(highest, _accuracy_panel(ax, group.markers[size], styles))
            ax.set_title(f"size {size} (n = {group.n[size]} qubits)")
            ax.set_xlabel("median contraction time per decode (ms)")
        axes[0][0].set_ylabel("mean |Δ ln P| against the reference")
        axes[0][0].set_ylim(ERROR_FLOOR / 4, highest * 4)  # shared by every panel
        _finish(fig, axes[0], group.title, path)
    return path


def _accuracy_panel(ax, markers: list[Marker], styles: dict) -> float:
    """Draw one size; return the largest error drawn."""
    drawn = [m for m in markers if m.median_ms is not None and m.mean_error is not None
             and math.isfinite(m.mean_error)]
    t = np.array([m.median_ms for m in drawn])
    e = np.array([m.mean_error for m in drawn])
    shown = np.maximum(e, ERROR_FLOOR)
    ax.axhline(ERROR_FLOOR, color="0.75", lw=0.8, ls=":", zorder=0)
    if drawn:
        front = pareto_front(t, e)
        order = np.argsort(t[front], kind="stable")
        ax.plot(t[front][order], shown[front][order], drawstyle="steps-post", color="0.35", lw=1.1, ls="--",
                zorder=1, label="Pareto front (circled)")
        ax.scatter(t[front], shown[front], s=150, facecolors="none", edgecolors="0.2", lw=1.0, zorder=3)
    for m, ti, ei in zip(drawn, t, shown):
        colour, marker = styles[m.setting]
        edge = {"edgecolors": "black", "linewidths": 1.3} if m.is_reference else {}
        ax.scatter([ti], [ei], color=colour, marker=marker, s=42, zorder=2, label=m.setting, **edge)
    if any(m.is_reference for m in drawn):
        ax.scatter([], [], color="white", edgecolors="black", linewidths=1.3, marker="o", s=42,
                   label="black edge: the reference")
    ax.set_xscale("log")
    ax.set_yscale("log")
    if drawn:
        lo, hi = _decade_span(t)
        ax.set_xlim(lo, hi)
        if hi / lo <= 300:  # 1-2-5 ticks where decades alone would leave one label
            ax.xaxis.set_major_locator(LogLocator(base=10, subs=(1.0, 2.0, 5.0)))
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
    ax.xaxis.set_minor_formatter(NullFormatter())
    ax.grid(True, which="major", lw=0.4, alpha=0.5)
    return float(shown.max()) if drawn else ERROR_FLOOR


def _decade_span(values: np.ndarray) -> tuple[float, float]:
    """Log-axis limits around ``values`` (> 0) with a margin, at least one decade wide."""
    lo, hi = float(values.min()) / 1.4, float(values.max()) * 1.4
    if hi / lo < 10:
        centre = math.sqrt(lo * hi)
        lo, hi = centre / math.sqrt(10), centre * math.sqrt(10)
    return lo, hi


def plot_memory(group: Group, styles: dict, path: Path) -> Path:
    """Bars per setting: largest intermediate (strategy's figure) and tracemalloc peak, bytes, log axis."""
    memory = group.memory()
    names = list(memory)
    peak = [np.nan if memory[s][0] is None else memory[s][0] for s in names]
    traced = [np.nan if memory[s][1] is None else memory[s][1] for s in names]
    x = np.arange(len(names))
    with matplotlib.rc_context(_RC):
        fig = Figure(figsize=(max(4.5, 0.8 * len(names) + 2.5), 3.4), layout="constrained")
        ax = fig.subplots()
        colours = [styles[s][0] for s in names]
        ax.bar(x - 0.2, peak, 0.38, color=colours, edgecolor="0.2", lw=0.5)
        ax.bar(x + 0.2, traced, 0.38, color=colours, edgecolor="0.2", lw=0.5, hatch="///", alpha=0.55)
        ax.set_yscale("log")
        ax.set_xticks(x, names, rotation=30, ha="right", rotation_mode="anchor")
        ax.set_ylabel("peak memory (bytes)")
        ax.grid(True, axis="y", which="major", lw=0.4, alpha=0.5)
        ax.legend(handles=[Patch(facecolor="0.6", edgecolor="0.2", label="largest intermediate (strategy)"),
                           Patch(facecolor="0.6", edgecolor="0.2", hatch="///", alpha=0.55,
                                 label="tracemalloc peak")],
                  loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False)
        ax.set_title(group.title)
        fig.savefig(path, dpi=DPI)
    return path


def plot_failure(group: Group, path: Path) -> Path:
    """Logical failure rate against physical rate, one line per size; reference with Wilson 95% bars."""
    sizes = sorted({r.size for r in group.rows})
    cmap = matplotlib.colormaps["viridis"]
    with matplotlib.rc_context(_RC):
        fig = Figure(figsize=(5.6, 3.4), layout="constrained")
        ax = fig.subplots()
        for i, size in enumerate(sizes):
            colour = cmap(0.85 * i / max(1, len(sizes) - 1))
            rows = sorted((r for r in group.rows if r.size == size), key=lambda r: r.rate)
            _faint_lines(ax, rows, colour)
            ref = [r for r in rows if r.setting == r.reference and r.logical_failure_rate is not None]
            if not ref:
                continue
            rates = np.array([r.rate for r in ref]) * (1 + _DODGE * (i - (len(sizes) - 1) / 2))
            y = np.array([r.logical_failure_rate for r in ref])
            bounds = np.array([wilson_interval(round(r.logical_failure_rate * (r.tasks - r.failed)),
                                               r.tasks - r.failed) for r in ref])
            ax.errorbar(rates, y, yerr=[y - bounds[:, 0], bounds[:, 1] - y], color=colour, marker="o", ms=4,
                        lw=1.4, capsize=3, label=f"size {size} (n = {group.n[size]})")
        ax.plot([], [], color="0.5", lw=0.8, ls=":", alpha=0.6, label="other settings")
        ax.set_xlabel("physical error rate p")
        ax.set_ylabel("logical failure rate")
        ax.set_ylim(-0.02, min(1.02, ax.get_ylim()[1]))
        ax.grid(True, lw=0.4, alpha=0.5)
        ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False, title="reference setting")
        ax.set_title(group.title)
        fig.savefig(path, dpi=DPI)
    return path


def _faint_lines(ax, rows, colour) -> None:
    others: dict[str, list] = {}
    for r in rows:
        if r.setting != r.reference and r.logical_failure_rate is not None:
            others.setdefault(r.setting, []).append((r.rate, r.logical_failure_rate))
    for points in others.values():
        xs, ys = zip(*points)
        ax.plot(xs, ys, color=colour, lw=0.8, ls=":", alpha=0.6, zorder=0)


def _finish(fig, axes, title: str, path: Path) -> None:
    """One legend for every panel (below them), a title, write the PNG."""
    handles: dict[str, object] = {}
    for ax in axes:
        for h, label in zip(*ax.get_legend_handles_labels()):
            handles.setdefault(label, h)
    fig.legend(list(handles.values()), list(handles), loc="outside lower center", ncols=min(3, len(handles)),
               frameon=False)
    fig.suptitle(title)
    fig.savefig(path, dpi=DPI)

