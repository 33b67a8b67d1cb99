"""Run one setting on the calibration instances and compare it with a reference run."""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from tnarena.codes.core import PauliCode
from tnarena.decode import Decoder
from tnarena.errors import PluginError, TnarenaError
from tnarena.strategy import Strategy

from tnarena.chooser.model import Candidate

#: Bytes per element of the strategies' arrays (float64).
BYTES_PER_ELEMENT = 8


@dataclass
class Run:
    """What one setting gave on every calibration instance.

    log_probs : ndarray, shape (instances, classes), natural log (-inf: impossible)
    decisions : list of class tuples; seconds : decode wall time per instance, s
    """

    candidate: Candidate
    log_probs: np.ndarray | None = None
    decisions: list[tuple[int, ...]] = field(default_factory=list)
    seconds: list[float] = field(default_factory=list)


def run_setting(code: PauliCode, table: np.ndarray, strategy: Strategy, params: dict[str, Any],
                errors: list[np.ndarray], *, time_limit: float | None = None) -> Run:
    """Plan once and decode every error (shape (2n,) each); failures become a candidate status.

    time_limit : float, optional
        Stop after the first instance whose decode takes longer than this, s (the
        candidate keeps the times measured so far and says so in its note).
    """
    candidate = Candidate(strategy.name, dict(params))
    run = Run(candidate)
    try:
        start = time.perf_counter()
        decoder = Decoder(code, table, strategy, params)
        candidate.plan_seconds = time.perf_counter() - start
        rows, largest = [], 0.0
        for error in errors:
            start = time.perf_counter()
            result = decoder.decode_error(error)
            run.seconds.append(time.perf_counter() - start)
            rows.append([c.log_prob for c in result.classes])
            run.decisions.append(result.decision)
            largest = max([largest] + [c.stats.get("largest_intermediate", 0.0) for c in result.classes])
            if time_limit is not None and run.seconds[-1] > time_limit:
                candidate.note = f"stopped after {len(rows)} of {len(errors)} instances (over the time budget)"
                break
    except TnarenaError as exc:
        candidate.status, candidate.note = "refused", str(exc)
        return run
    except (PluginError, MemoryError) as exc:
        candidate.status, candidate.note = "failed", str(exc) or type(exc).__name__
        return run
    run.log_probs = np.array(rows, dtype=float)
    candidate.seconds_per_decode = float(np.mean(run.seconds))
    candidate.memory_bytes = largest * BYTES_PER_ELEMENT
    return run


def compare(run: Run, reference: Run, label: str) -> None:
    """Fill the candidate's error and agreement against a reference run on the same instances.

    Error: |ln P - ln P_ref| over every (instance, class) the reference finds possible,
    mean and max (inf where the candidate says impossible). Only instances both ran count.
    """
    if run.log_probs is None or reference.log_probs is None:
        return
    count = min(len(run.log_probs), len(reference.log_probs))
    if count == 0:
        return
    ours, ref = run.log_probs[:count], reference.log_probs[:count]
    possible = np.isfinite(ref)
    with np.errstate(invalid="ignore"):
        diff = np.where(np.isfinite(ours), np.abs(ours - ref), math.inf)[possible]
    c = run.candidate
    c.error = float(diff.mean()) if diff.size else 0.0
    c.max_error = float(diff.max()) if diff.size else 0.0
    c.agreement = float(np.mean([a == b for a, b in zip(run.decisions[:count], reference.decisions[:count])]))
    c.reference = label
