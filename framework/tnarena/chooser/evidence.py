"""The evidence behind a choice as plain-text tables (what ``tnarena choose`` prints)."""

from __future__ import annotations

import math
from typing import Any

from tnarena.arena.summary import _bytes  # the arena's memory format: '812 B', '1.30 MiB'
from tnarena.chooser.model import Choice

HEADERS = ("", "setting", "status", "ms/decode", "plan s", "mean |dlnP|", "max |dlnP|", "agree", "vs", "memory",
           "note")


def candidate_table(choice: Choice) -> str:
    """One row per candidate tried, in order; the chosen one marked '*'."""
    rows = []
    for c in choice.candidates:
        rows.append(("*" if c.chosen else "", c.label, c.status, _num(c.seconds_per_decode, 1e3, ".3g"),
                     _num(c.plan_seconds, 1.0, ".2f"), _num(c.error, 1.0, ".2e"), _num(c.max_error, 1.0, ".2e"),
                     _num(c.agreement, 1.0, ".2f"), c.reference, _bytes(c.memory_bytes), _short(c.note)))
    return _table(HEADERS, rows)


def cost_table(choice: Choice) -> str:
    """The structure-only figures, one row per strategy and direction."""
    keys: list[str] = []
    for row in choice.costs:
        keys += [k for k in row if k not in ("strategy", "direction") and k not in keys]
    rows = [(r["strategy"], "" if r.get("direction") is None else str(r["direction"]),
             *(_figure(r.get(k)) for k in keys)) for r in choice.costs]
    return _table(("strategy", "direction", *keys), rows)


def summary_line(choice: Choice) -> str:
    """'chosen: sweep:chi=8,direction=0 (meets |dlnP| <= 0.001, agreement >= 0.99 within budget)'."""
    t = choice.target
    if choice.met:
        why = f"meets mean |dlnP| <= {t.max_error:g} and agreement >= {t.min_agreement:g} within the budget"
    else:
        why = "NO setting met the target within the budget; this is the most accurate one that ran"
    where = " (answered from the store)" if choice.from_store else ""
    return f"chosen: {choice.label} ({why}){where}"


def report(choice: Choice) -> str:
    """Summary line, the budget, the cost figures and the candidate table."""
    b = choice.budget
    head = [summary_line(choice),
            f"budget: {b.seconds_per_decode * 1e3:g} ms per decode, {_bytes(b.memory_bytes)} largest intermediate; "
            f"{choice.calibration} calibration instances, seed {choice.seed}; structure {choice.fingerprint[:12]}"]
    parts = ["\n".join(head)]
    if choice.costs:
        parts.append("cost model (structure only):\n" + cost_table(choice))
    parts.append("candidates (* chosen):\n" + candidate_table(choice))
    return "\n\n".join(parts)


def _table(headers: tuple[str, ...], rows: list[tuple[Any, ...]]) -> str:
    widths = [max([len(h)] + [len(str(r[i])) for r in rows]) for i, h in enumerate(headers)]
    lines = ["  ".join(h.ljust(w) for h, w in zip(headers, widths)).rstrip()]
    lines += ["  ".join(str(v).ljust(w) for v, w in zip(r, widths)).rstrip() for r in rows]
    return "\n".join(lines)


def _num(value: float | None, scale: float, fmt: str) -> str:
    if value is None:
        return "-"
    return "inf" if math.isinf(value) else format(value * scale, fmt)


def _figure(value: Any) -> str:
    if value is None:
        return "-"
    if isinstance(value, str):
        return _short(value)
    return f"{value:.4g}"


def _short(text: str, width: int = 60) -> str:
    return text if len(text) <= width else text[: width - 3] + "..."
