"""Study reports: a Markdown file with PNG plots, and a CSV of every task.

:func:`write_report` reads a study database and writes ``report.md``: one
table per point (the numbers of the terminal summary), the points whose
reference is approximate, the failures with their reasons, and three plots
per (code family, lattice, noise model) drawn by :mod:`tnarena.arena.report_plots`.
:func:`export_csv` writes the task metrics, one row per task.
"""

from __future__ import annotations

import csv
import datetime
import importlib.util
import json
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from tnarena.arena.store import Store
from tnarena.arena.summary import TASK_COLUMNS, SummaryRow, largest, summarise, summary_cells, task_metrics
from tnarena.errors import TnarenaError


#: Errors below this are drawn at it on log axes (the reference itself has error 0).
ERROR_FLOOR = 1e-16

_TABLE_HEAD = ("setting", "ok/tasks", "mean abs ΔlnP", "max abs ΔlnP", "agree", "fail rate", "ms/decode",
               "plan ms", "peak memory", "traced peak")


# ---- public helpers --------------------------------------------------------------------------
def export_csv(store: Store, path: str | Path) -> int:
    """Write every task's metrics to ``path`` as CSV; return the number of rows written.

    Columns are :data:`~tnarena.arena.summary.TASK_COLUMNS` in order; lists
    (classes, log_probs, abs_errors) are JSON text; None is an empty cell.
    """
    metrics = task_metrics(store)
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    with path.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(TASK_COLUMNS)
        for m in metrics:
            writer.writerow([_csv_cell(m[c]) for c in TASK_COLUMNS])
    return len(metrics)


def pareto_front(times: Sequence[float], errors: Sequence[float]) -> np.ndarray:
    """Mask of the points no other point beats in both (time, error), smaller being better.

    A point is beaten when another is no slower and no less accurate, and
    strictly better in one of the two. Returns a bool array, shape (len(times),).
    """
    t, e = np.asarray(times, dtype=float), np.asarray(errors, dtype=float)
    no_worse = (t[None, :] <= t[:, None]) & (e[None, :] <= e[:, None])
    better = (t[None, :] < t[:, None]) | (e[None, :] < e[:, None])
    return ~np.any(no_worse & better, axis=1)


# ---- what the plots show ------------------------------------------------------------------------
@dataclass
class Marker:
    """One setting at one size of a group: pooled over the group's rates.

    median_ms : median contraction time per decode, ms; mean_error : mean
    |ln P - ln P_ref| over classes and instances (inf: a possible class called
    impossible); peak_bytes / traced_bytes : largest over the pooled tasks.
    """

    setting: str
    median_ms: float | None
    mean_error: float | None
    peak_bytes: float | None
    traced_bytes: float | None
    is_reference: bool


@dataclass
class Group:
    """The points of one (family, lattice, model, options): one set of plots."""

    family: str
    lattice: str | None
    model: str
    options: str
    rows: list[SummaryRow] = field(default_factory=list)
    markers: dict[int, list[Marker]] = field(default_factory=dict)  # size -> one per setting
    n: dict[int, int] = field(default_factory=dict)  # size -> qubits

    @property
    def title(self) -> str:
        where = f", {self.lattice} lattice" if self.lattice else ""
        opts = json.loads(self.options)
        extra = "".join(f", {k} = {v}" for k, v in opts.items())
        return f"{self.family} code{where}, {self.model} noise{extra}"

    @property
    def slug(self) -> str:
        parts = [self.family, self.lattice or "", self.model, *(f"{k}{v}" for k, v in json.loads(self.options).items())]
        return "-".join("".join(c if c.isalnum() else "_" for c in str(p)) for p in parts if p)

    def memory(self) -> dict[str, tuple[float | None, float | None]]:
        """setting -> (largest intermediate, tracemalloc peak) in bytes, over every size and rate."""
        out: dict[str, list[Marker]] = {}
        for markers in self.markers.values():
            for m in markers:
                out.setdefault(m.setting, []).append(m)
        return {s: (largest(m.peak_bytes for m in ms), largest(m.traced_bytes for m in ms))
                for s, ms in out.items()}

    @property
    def approximate_points(self) -> list[str]:
        return sorted({r.point for r in self.rows if r.approximate_reference})


def groups(metrics: list[dict[str, Any]]) -> list[Group]:
    """Task metrics gathered per (family, lattice, model, options), in stored order."""
    out: dict[tuple, Group] = {}
    tasks: dict[tuple, dict[tuple[int, str], list[dict]]] = {}
    for m in metrics:
        key = (m["family"], m["lattice"], m["model"], m["options"])
        group = out.setdefault(key, Group(*key))
        group.n[m["size"]] = m["n"]
        tasks.setdefault(key, {}).setdefault((m["size"], m["setting"]), []).append(m)
    for key, group in out.items():
        group.rows = summarise([m for m in metrics if (m["family"], m["lattice"], m["model"], m["options"]) == key])
        for (size, setting), ms in tasks[key].items():
            group.markers.setdefault(size, []).append(_marker(setting, ms))
    return list(out.values())


def _marker(setting: str, ms: list[dict[str, Any]]) -> Marker:
    ok = [m for m in ms if m["status"] == "ok"]
    errors = [e for m in ok if m["abs_errors"] is not None for e in m["abs_errors"]]
    with_ref = [m for m in ok if m["abs_errors"] is not None]
    return Marker(
        setting=setting,
        median_ms=1e3 * float(np.median([m["contract_seconds"] for m in ok])) if ok else None,
        mean_error=float(np.mean(errors)) if errors else (0.0 if with_ref else None),
        peak_bytes=largest(m["intermediate_bytes"] for m in ok),
        traced_bytes=largest(m["traced_peak_bytes"] for m in ok),
        is_reference=bool(ms) and all(m["setting"] == m["reference"] for m in ms),
    )


# ---- the report --------------------------------------------------------------------------------
def write_report(store: Store, out_dir: str | Path) -> Path:
    """Write ``report.md`` and its PNG plots to ``out_dir``; return the path of report.md.

    Files: ``report.md``; per (family, lattice, noise model) group with slug G
    (e.g. ``surface-square-bit_flip``): ``accuracy-G.png``, ``memory-G.png``,
    ``failure-G.png``. Needs matplotlib (drawn with the Agg backend).
    """
    if importlib.util.find_spec("matplotlib") is None:
        raise TnarenaError("the report draws its plots with matplotlib, which is not installed; "
                           "install it (pip install matplotlib) and run the report again.")
    from tnarena.arena import report_plots

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    metrics = task_metrics(store)
    found = groups(metrics)
    styles = report_plots.setting_styles([m["setting"] for m in metrics])
    lines = _header(store, metrics)
    lines += ["", "## Plots"]
    for group in found:
        lines += _plot_section(group, styles, out, report_plots)
    lines += ["", "## Summary per point", ""]
    lines += _point_tables(summarise(metrics))
    lines += ["", "## Failures", ""] + _failure_table(metrics)
    path = out / "report.md"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _header(store: Store, metrics: list[dict[str, Any]]) -> list[str]:
    meta = store.meta()
    failed = sum(m["status"] != "ok" for m in metrics)
    points = list(dict.fromkeys(m["point"] for m in metrics))
    settings = list(dict.fromkeys(m["setting"] for m in metrics))
    finished = store.rows("SELECT MAX(finished) AS t FROM runs")
    when = finished[0]["t"] if finished and finished[0]["t"] is not None else None
    lines = [f"# {meta.get('title', 'untitled study')}", "",
             f"- study seed: {meta.get('seed', '-')}",
             f"- report written: {_utc(datetime.datetime.now(datetime.UTC))}",
             f"- last run finished: {_utc_from(when)}",
             f"- database: `{Path(store.path).name}`",
             f"- {len(metrics)} tasks ({failed} failed) at {len(points)} points, {len(settings)} strategy settings"]
    approximate = sorted({m["point"] for m in metrics if m["approximate_reference"]}, key=points.index)
    if approximate:
        ref = sorted({m["reference"] for m in metrics if m["approximate_reference"]})
        lines += ["", (f"> **⚠ Approximate reference at {len(approximate)} of {len(points)} points**: the "
                       f"reference setting failed there, so errors and agreement are measured against "
                       f"{', '.join(ref)}, not an exact value. These points are marked ⚠ below.")]
    if not metrics:
        lines += ["", "The database holds no results yet: run the study first."]
    return lines


def _utc(moment: datetime.datetime) -> str:
    return moment.strftime("%Y-%m-%d %H:%M UTC")


def _utc_from(seconds: float | None) -> str:
    if seconds is None:
        return "-"
    return _utc(datetime.datetime.fromtimestamp(seconds, datetime.UTC))


def _plot_section(group: Group, styles: dict, out: Path, plots) -> list[str]:
    approx = group.approximate_points
    lines = ["", f"### {group.title}" + (" ⚠" if approx else "")]
    accuracy = plots.plot_accuracy(group, styles, out / f"accuracy-{group.slug}.png")
    memory = plots.plot_memory(group, styles, out / f"memory-{group.slug}.png")
    failure = plots.plot_failure(group, out / f"failure-{group.slug}.png")
    for path, caption in ((accuracy, _accuracy_caption(group)), (memory, _MEMORY_CAPTION),
                          (failure, _FAILURE_CAPTION)):
        lines += ["", f"![{caption.split(':')[0]}, {group.title}]({path.name})", "", f"*{caption}*"]
    if approx:
        lines += ["", f"⚠ Errors at {', '.join(approx)} are against an approximate reference."]
    return lines


def _accuracy_caption(group: Group) -> str:
    fronts = []
    for size in sorted(group.markers):
        drawn = [m for m in group.markers[size] if m.median_ms is not None and m.mean_error is not None
                 and math.isfinite(m.mean_error)]
        mask = pareto_front([m.median_ms for m in drawn], [m.mean_error for m in drawn])
        fronts.append(f"size {size}: " + ", ".join(m.setting for m, on in zip(drawn, mask) if on))
    hidden = sorted({m.setting for ms in group.markers.values() for m in ms
                     if m.mean_error is not None and math.isinf(m.mean_error)})
    text = (f"Accuracy against time: each marker is a strategy setting at its median contraction time per "
            f"decode and its mean |Δ ln P| against the reference, pooled over the rates of one size per panel; "
            f"the dashed step line joins the Pareto front (circled: no setting is both faster and more "
            f"accurate), and errors below {ERROR_FLOOR:g} (the reference itself, exact agreement) are drawn "
            f"at {ERROR_FLOOR:g} (dotted line). Pareto front: {'; '.join(fronts)}.")
    if hidden:
        text += f" Not drawn (infinite error, a possible class called impossible): {', '.join(hidden)}."
    return text


_MEMORY_CAPTION = ("Peak memory per strategy setting: for each setting the left bar is the strategy's own largest "
                   "intermediate tensor and the right bar the tracemalloc peak around the contraction (Python "
                   "overhead included), each the largest over the tasks that finished at any size and rate here "
                   "(a failed setting shows its smaller sizes only), in bytes on a log axis.")
_FAILURE_CAPTION = ("Logical failure rate against physical error rate: one line per size for the reference "
                    "setting with Wilson 95% intervals over the instances of each point, other settings as "
                    "faint dotted lines; where a larger size lies below a smaller one the code is below threshold.")


def _point_tables(rows: list[SummaryRow]) -> list[str]:
    lines: list[str] = []
    current = None
    for r in rows:
        if r.point != current:
            current = r.point
            ref = r.reference or "none"
            flag = (f" · **⚠ APPROXIMATE reference**: the reference failed here; errors and agreement are "
                    f"against {ref}" if r.approximate_reference else "")
            lines += ["", f"### {_cell(r.point)}{' ⚠' if r.approximate_reference else ''}", "",
                      f"n = {r.n} · reference: {_cell(ref)}{flag}", "",
                      _row(_TABLE_HEAD), "|" + "|".join([":--"] + ["--:"] * (len(_TABLE_HEAD) - 1)) + "|"]
        lines.append(_row(summary_cells(r)))
    return lines


def _failure_table(metrics: list[dict[str, Any]]) -> list[str]:
    counts: dict[tuple[str, str, str], int] = {}
    tasks: dict[tuple[str, str], int] = {}
    for m in metrics:
        tasks[(m["point"], m["setting"])] = tasks.get((m["point"], m["setting"]), 0) + 1
        if m["status"] != "ok":
            key = (m["point"], m["setting"], m["reason"] or "no reason recorded")
            counts[key] = counts.get(key, 0) + 1
    if not counts:
        return ["No task failed."]
    lines = [_row(("point", "setting", "failed/tasks", "reason")), "|:--|:--|--:|:--|"]
    for (point, setting, reason), count in counts.items():
        lines.append(_row((point, setting, f"{count}/{tasks[(point, setting)]}", reason)))
    return lines


def _row(cells: Sequence[str]) -> str:
    return "| " + " | ".join(_cell(c) for c in cells) + " |"


def _cell(text: str) -> str:
    """Markdown-safe table cell: pipes escaped, one line."""
    return str(text).replace("|", "\\|").replace("\n", " ")


def _csv_cell(value: Any) -> Any:
    if isinstance(value, (list, tuple, dict)):
        return json.dumps(value)
    return "" if value is None else value
