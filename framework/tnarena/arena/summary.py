"""Metrics from the store: every task against its point's reference, and summaries.

The reference at a point is the study's reference setting when it succeeded
on every instance there; otherwise its fallback (an approximate reference,
flagged ``approximate_reference`` in every output). Errors are
``|ln P_setting - ln P_reference|`` per logical class whose reference
probability is non-zero (infinite when the setting calls such a class
impossible).
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from tnarena.arena.store import Store

#: Columns of :func:`task_metrics` rows, in export order.
TASK_COLUMNS = ("point", "family", "lattice", "size", "n", "distances", "model", "rate", "options", "setting", "strategy",
                "params", "chosen", "instance", "status", "reason", "syndrome", "reference", "approximate_reference", "classes",
                "log_probs", "abs_errors", "mean_abs_error", "decision", "reference_decision", "agrees",
                "true_class", "logical_failure", "contract_seconds", "decode_seconds", "plan_seconds",
                "shared_plan_seconds",
                "flops", "intermediate_bytes", "traced_peak_bytes", "discarded_weight", "profile")


def task_metrics(store: Store) -> list[dict[str, Any]]:
    """One dict per stored task (columns :data:`TASK_COLUMNS`), errors against the reference."""
    rows = store.rows(
        "SELECT r.*, p.label AS point, p.family, p.lattice, p.size, p.n, p.distances, p.model, p.rate, p.options, "
        "s.label AS setting, s.strategy, s.params, s.reference AS is_reference, s.fallback AS is_fallback, "
        "pl.seconds AS shared_plan_seconds, pl.choice AS choice "
        "FROM results r JOIN points p ON p.id = r.point_id JOIN settings s ON s.id = r.setting_id "
        "LEFT JOIN plans pl ON pl.point_id = r.point_id AND pl.setting_id = r.setting_id "
        "ORDER BY p.id, s.id, r.instance")
    refs = _references(rows)
    by_key = {(r["point_id"], r["setting_id"], r["instance"]): r for r in rows}
    labels = {r["setting_id"]: r["setting"] for r in rows}
    out = []
    for r in rows:
        ref_sid, approximate = refs.get(r["point_id"], (None, False))
        ref = by_key.get((r["point_id"], ref_sid, r["instance"])) if ref_sid is not None else None
        ref_ok = ref is not None and ref["status"] == "ok"
        errors = _abs_errors(r, ref) if (ref_ok and r["status"] == "ok") else None
        label = labels.get(ref_sid)
        out.append({
            "point": r["point"], "family": r["family"], "lattice": r["lattice"], "size": r["size"], "n": r["n"],
            "distances": r["distances"],
            "model": r["model"], "rate": r["rate"], "options": r["options"], "setting": r["setting"],
            "strategy": r["strategy"], "params": r["params"], "chosen": _chosen(r["choice"]), "instance": r["instance"], "status": r["status"],
            "reason": r["reason"], "syndrome": r["syndrome"], "reference": label, "approximate_reference": bool(approximate),
            "classes": _json(r["classes"]), "log_probs": _json(r["log_probs"]), "abs_errors": errors,
            "mean_abs_error": None if errors is None else float(np.mean(errors)) if errors else 0.0,
            "decision": r["decision"], "reference_decision": ref["decision"] if ref_ok else None,
            "agrees": (r["decision"] == ref["decision"]) if (ref_ok and r["status"] == "ok") else None,
            "true_class": r["true_class"], "logical_failure": r["logical_failure"],
            **{k: r[k] for k in ("contract_seconds", "decode_seconds", "plan_seconds", "shared_plan_seconds", "flops",
                                 "intermediate_bytes", "traced_peak_bytes", "discarded_weight")},
            "profile": _json(r["profile"]),
        })
    return out


def _references(rows) -> dict[int, tuple[int, bool]]:
    """point id -> (reference setting id, whether it is the approximate fallback).

    The reference where it succeeded on every instance of the point; else the
    fallback where one was run; else the reference on the instances it did finish.
    """
    states: dict[tuple[int, int], set[str]] = {}
    reference, fallback = set(), set()
    for r in rows:
        states.setdefault((r["point_id"], r["setting_id"]), set()).add(r["status"])
        (reference if r["is_reference"] else fallback if r["is_fallback"] else set()).add(r["setting_id"])
    out: dict[int, tuple[int, bool]] = {}
    for (pid, sid), seen in states.items():
        if sid in fallback and pid not in out:
            out[pid] = (sid, True)
    for (pid, sid), seen in states.items():
        if sid in reference and (seen == {"ok"} or pid not in out):
            out[pid] = (sid, False)
    return out


def _abs_errors(row, ref) -> list[float] | None:
    """|ln P - ln P_ref| per class the reference finds possible; None for a baseline (no ln P)."""
    mine, theirs = _json(row["log_probs"]), _json(ref["log_probs"])
    if mine is None or theirs is None:
        return None
    out = []
    for a, b in zip(mine, theirs):
        if b is None:
            continue
        out.append(math.inf if a is None else abs(a - b))
    return out


def _json(text: str | None) -> Any:
    return None if text is None else json.loads(text)


@dataclass
class SummaryRow:
    """One (point, setting): counts, accuracy against the reference, time and memory."""

    point: str
    lattice: str | None
    size: int
    n: int
    model: str
    rate: float
    setting: str
    strategy: str
    tasks: int
    failed: int
    mean_abs_error: float | None
    max_abs_error: float | None
    agreement: float | None
    logical_failure_rate: float | None
    median_contract_ms: float | None
    plan_ms_per_instance: float  # the shared plan's time (plus any local re-planning) over the tasks
    peak_intermediate_bytes: float | None
    peak_traced_bytes: float | None
    mean_flops: float | None
    reference: str | None
    approximate_reference: bool
    failure_reasons: tuple[str, ...] = ()
    distances: str = ""  # e.g. 'd_x = 7, d_z = 9' as the code reports them
    chosen: str | None = None  # automatic settings: what the chooser picked at this point
    time_split: dict[str, int] | None = None  # profiled studies: samples per bin (tnarena.arena.profiler)


def summarise(metrics: list[dict[str, Any]]) -> list[SummaryRow]:
    """Group task metrics by (point, setting), in stored order."""
    groups: dict[tuple[str, str], list[dict]] = {}
    for m in metrics:
        groups.setdefault((m["point"], m["setting"]), []).append(m)
    out = []
    for (point, setting), ms in groups.items():
        ok = [m for m in ms if m["status"] == "ok"]
        measured = [m["abs_errors"] for m in ok if m["abs_errors"] is not None]  # none for baselines
        errors = [e for errs in measured for e in errs]
        agrees = [m["agrees"] for m in ok if m["agrees"] is not None]
        first = ms[0]
        out.append(SummaryRow(
            point=point, lattice=first["lattice"], size=first["size"], n=first["n"], model=first["model"],
            rate=first["rate"], setting=setting, strategy=first["strategy"], tasks=len(ms),
            failed=len(ms) - len(ok),
            mean_abs_error=float(np.mean(errors)) if errors else (0.0 if measured else None),
            max_abs_error=float(np.max(errors)) if errors else (0.0 if measured else None),
            agreement=float(np.mean(agrees)) if agrees else None,
            logical_failure_rate=float(np.mean([m["logical_failure"] for m in ok])) if ok else None,
            median_contract_ms=1e3 * float(np.median([m["contract_seconds"] for m in ok])) if ok else None,
            plan_ms_per_instance=1e3 * ((first["shared_plan_seconds"] or 0.0)
                                        + sum(m["plan_seconds"] or 0.0 for m in ms)) / len(ms),
            peak_intermediate_bytes=largest(m["intermediate_bytes"] for m in ok),
            peak_traced_bytes=largest(m["traced_peak_bytes"] for m in ok),
            mean_flops=_mean(m["flops"] for m in ok),
            reference=first["reference"], approximate_reference=first["approximate_reference"],
            failure_reasons=tuple(sorted({m["reason"] for m in ms if m["status"] != "ok"})),
            distances=_distances(first["distances"]),
            chosen=first["chosen"],
            time_split=_time_split(m["profile"] for m in ok),
        ))
    return out


def largest(values) -> float | None:
    """The largest of the values that are not None (None when there are none)."""
    vals = [v for v in values if v is not None]
    return float(max(vals)) if vals else None


def _time_split(profiles) -> dict[str, int] | None:
    """Samples per bin summed over the tasks that were profiled (None when none was)."""
    total: dict[str, int] = {}
    for profile in profiles:
        for key, count in (profile or {}).items():
            total[key] = total.get(key, 0) + count
    return total or None


def time_split_text(split: dict[str, int]) -> str:
    """'61% products, 12% decompositions, 27% python (842 samples)'."""
    n = sum(split.values())
    parts = ", ".join(f"{100 * v / n:.0f}% {k}" for k, v in split.items()) if n else "no samples"
    return f"{parts} ({n} samples)"


def _chosen(choice: str | None) -> str | None:
    """The setting an automatic choice picked, e.g. 'sweep:chi=8,direction=0' (None otherwise)."""
    if choice is None:
        return None
    data = json.loads(choice)
    return data["strategy"] + "".join(
        (":" if i == 0 else ",") + f"{k}={v}" for i, (k, v) in enumerate(data["params"].items()))


def _distances(text: str | None) -> str:
    """'{"x": 7, "z": 9}' -> 'd_x = 7, d_z = 9'."""
    found = _json(text) or {}
    return ", ".join(f"d_{k} = {v}" for k, v in sorted(found.items()))


def _mean(values) -> float | None:
    vals = [v for v in values if v is not None]
    return float(np.mean(vals)) if vals else None


#: Column names of the summary table (terminal and report).
SUMMARY_HEADERS = ("setting", "ok/tasks", "mean|dlnP|", "max|dlnP|", "agree", "fail rate", "ms/decode",
                   "plan ms", "peak", "traced")
_WIDTHS = (34, 10, 12, 11, 8, 10, 11, 9, 11, 11)


def summary_cells(r: SummaryRow) -> tuple[str, ...]:
    """The cells of one summary line (SUMMARY_HEADERS), formatted as every table prints them."""
    setting = r.setting if r.chosen is None else f"{r.setting} -> {r.chosen}"
    return (setting, f"{r.tasks - r.failed}/{r.tasks}", _num(r.mean_abs_error), _num(r.max_abs_error),
            _pct(r.agreement), _pct(r.logical_failure_rate), _fixed(r.median_contract_ms),
            _fixed(r.plan_ms_per_instance), _bytes(r.peak_intermediate_bytes), _bytes(r.peak_traced_bytes))


def format_summary(rows: list[SummaryRow]) -> str:
    """The terminal table: one block per point, one line per setting."""
    lines = []
    current = None
    for r in rows:
        if r.point != current:
            current = r.point
            ref = r.reference or "none"
            flag = "  (APPROXIMATE reference: the reference failed here)" if r.approximate_reference else ""
            dist = f", {r.distances}" if r.distances else ""
            lines += ["", f"{r.point}  n = {r.n}{dist}  reference: {ref}{flag}", _line(SUMMARY_HEADERS)]
        lines.append(_line(summary_cells(r)))
        if r.time_split:
            lines.append(f"      contraction time: {time_split_text(r.time_split)}")
        for reason in r.failure_reasons:
            lines.append(f"      failed: {reason}")
    return "\n".join(lines).lstrip("\n")


def _line(cells: tuple[str, ...]) -> str:
    """One table line; a setting too long for its column gets a line of its own above the numbers."""
    rest = "".join(c.rjust(w) for c, w in zip(cells[1:], _WIDTHS[1:]))
    if len(cells[0]) >= _WIDTHS[0]:
        return "  " + cells[0] + "\n  " + " " * _WIDTHS[0] + rest
    return "  " + cells[0].ljust(_WIDTHS[0]) + rest


def _num(v: float | None) -> str:
    return "-" if v is None else ("inf" if math.isinf(v) else f"{v:.2e}")


def _pct(v: float | None) -> str:
    return "-" if v is None else f"{100 * v:.1f}%"


def _fixed(v: float | None) -> str:
    return "-" if v is None else f"{v:.2f}" if v < 100 else f"{v:.0f}"


def _bytes(v: float | None) -> str:
    """'812 B', '12.0 KiB', '1.30 MiB', '2.10 GiB'."""
    if v is None:
        return "-"
    for unit, scale in (("GiB", 2**30), ("MiB", 2**20), ("KiB", 2**10)):
        if v >= scale:
            return f"{v / scale:.3g} {unit}"
    return f"{v:.0f} B"
