"""Run a study: prepare its points, work out what is missing from the store, run it.

Two phases. First every compared setting and the reference at every point;
then the fallback reference at the points where the reference failed (its
plan refused, a time or memory limit). Each phase plans every (point,
setting) once, in the workers, and stores the pickled plan; then decodes
with it. Plans and tasks already in the store are never made again, so
running a study twice resumes it, with the same plans.
"""

from __future__ import annotations

import json
import sys
import time
from collections.abc import Callable
from dataclasses import dataclass
from typing import TextIO

from tnarena.arena.pool import LocalPool
from tnarena.arena.progress import Progress
from tnarena.arena.store import Store
from tnarena.arena.study import Point, Setting, Study
from tnarena.arena.worker import PLAN_UNIT, Chunk, build_code_and_noise
from tnarena.catalog import Catalog
from tnarena.errors import TnarenaError
from tnarena.network.builder import NetworkBuilder

#: Instances per chunk: one worker plans once per chunk it is the first to see.
CHUNK_SIZE = 8


@dataclass
class RunOutcome:
    run_id: int
    tasks_run: int
    tasks_failed: int
    seconds: float


def run_study(study: Study, store: Store, catalog: Catalog, *, workers: int = 1,
              executor: Callable[..., object] | None = None, progress: TextIO | None = sys.stderr,
              chunk_size: int = CHUNK_SIZE) -> RunOutcome:
    """Run what the store does not hold yet; return what this run did.

    executor : factory ``(catalog, workers, time_limit=, memory_limit=)`` of an
    object with ``run(chunks, on_result)`` (default :class:`LocalPool`).
    """
    start = time.monotonic()
    store.bind_study(study.seed, study.title, study.source)
    point_ids = prepare_points(study, store, catalog, progress)
    setting_ids = store.set_settings(_setting_rows(study, catalog))
    pool = (executor or LocalPool)(catalog, workers, time_limit=study.time_limit, memory_limit=study.memory_limit)
    gate = GiveUp(study.give_up_after, study.time_limit)
    pool.skip = gate
    run_id = store.start_run(workers, 0)
    first = study.settings + ([study.reference] if study.reference not in study.settings else [])
    counts = [0, 0]
    try:
        _run_phase(study, store, pool, run_id, point_ids, setting_ids, first, chunk_size, progress, counts)
        if study.fallback is not None and study.fallback not in first:
            needing = _needing_fallback(study, store, point_ids, setting_ids)
            _run_phase(study, store, pool, run_id, needing, setting_ids, [study.fallback], chunk_size, progress,
                       counts)
    finally:
        store.finish_run(run_id)
    return RunOutcome(run_id, counts[0], counts[1], time.monotonic() - start)


def _run_phase(study: Study, store: Store, pool, run_id: int, point_ids: dict[Point, int],
               setting_ids: dict[str, int], settings: list[Setting], chunk_size: int,
               progress: TextIO | None, counts: list[int]) -> None:
    """Plan every (point, setting) with missing tasks that has no plan yet, then decode."""
    pending = _pending(study, store, point_ids, setting_ids, settings)
    plans = store.plans()
    to_plan = [Chunk(point, setting, pid, sid, (PLAN_UNIT,), study.seed, study.trace_memory, kind="plan")
               for (point, setting, pid, sid), todo in pending.items() if todo and (pid, sid) not in plans]
    if to_plan:
        bar = Progress(len(to_plan), stream=progress, unit="plans")

        def on_plan(chunk: Chunk, unit: int, row: dict) -> None:
            store.add_plan(chunk.point_id, chunk.setting_id, run_id, row)
            bar.advance(failed=row["status"] != "ok")

        pool.run(to_plan, on_plan)
        bar.close()
        plans = store.plans()
    chunks, refused = [], []
    for (point, setting, pid, sid), todo in pending.items():
        plan = plans.get((pid, sid))
        if plan is None:
            continue
        if plan["status"] != "ok":
            refused += [(pid, sid, i, plan["reason"]) for i in todo]
            continue
        for at in range(0, len(todo), chunk_size):
            chunks.append(Chunk(point, setting, pid, sid, tuple(todo[at:at + chunk_size]), study.seed,
                                study.trace_memory, plan=plan["plan"], choice=plan["choice"],
                                profile=study.profile))
    total = len(refused) + sum(len(c.instances) for c in chunks)
    if not total:
        return
    bar = Progress(total, stream=progress, unit="tasks")

    def on_result(chunk: Chunk, instance: int, row: dict) -> None:
        store.add_result(chunk.point_id, chunk.setting_id, instance, run_id, row)
        pool.skip.saw(chunk, row)
        bar.advance(failed=row["status"] != "ok")

    for pid, sid, instance, reason in refused:  # no plan: every task fails for the plan's reason
        store.add_result(pid, sid, instance, run_id, {"status": "failed", "reason": reason})
        bar.advance(failed=True)
    pool.run(chunks, on_result)
    bar.close()
    counts[0] += bar.done
    counts[1] += bar.failed


class GiveUp:
    """Skips a (point, setting) once it has run past the time limit ``after`` times (0: never).

    Called by the executor before a chunk starts; told every result by the runner. Counts
    start afresh in each run, so a resumed study tries such settings again.
    """

    def __init__(self, after: int, time_limit: float) -> None:
        self.after, self.time_limit = after, time_limit
        self.timeouts: dict[tuple[int, int], int] = {}

    def saw(self, chunk: Chunk, row: dict) -> None:
        if (row.get("reason") or "").startswith("time limit exceeded"):
            key = (chunk.point_id, chunk.setting_id)
            self.timeouts[key] = self.timeouts.get(key, 0) + 1

    def __call__(self, chunk: Chunk) -> str | None:
        count = self.timeouts.get((chunk.point_id, chunk.setting_id), 0)
        if self.after and count >= self.after:
            return (f"skipped: {count} tasks of this setting at this point ran past the time limit "
                    f"({self.time_limit:g} s); raise time_limit or give_up_after to run it")
        return None


def prepare_points(study: Study, store: Store, catalog: Catalog, progress: TextIO | None) -> dict[Point, int]:
    """Build each point's code and noise once (catching impossible ones early); record them."""
    ids = {}
    codes: dict[str, object] = {}
    tty = progress is not None and getattr(progress, "isatty", lambda: False)()
    if progress is not None and not tty:
        print(f"preparing {len(study.points)} point(s)", file=progress, flush=True)
    for i, point in enumerate(study.points):
        if tty:
            print(f"\rpreparing point {i + 1}/{len(study.points)}: {point.label}\033[K", end="", file=progress,
                  flush=True)
        try:
            code, table = build_code_and_noise(catalog, study.seed, point)
        except TnarenaError as exc:
            raise TnarenaError(f"point {point.label}: {exc}") from None
        codes[point.code_key] = code
        structure = NetworkBuilder(code, table).structure
        ids[point] = store.upsert_point(point.key, point.label, {
            "family": point.family, "lattice": point.lattice, "size": point.size, "model": point.model,
            "rate": point.rate, "options": json.dumps(dict(point.options)), "n": code.n, "k": code.k,
            "distances": json.dumps(dict(code.distances)), "fingerprint": structure.fingerprint,
            "nodes": structure.num_nodes,
        })
    if tty:
        print(file=progress)
    return ids


def _setting_rows(study: Study, catalog: Catalog) -> list[dict]:
    return [{"key": s.key, "label": s.label, "strategy": s.strategy, "params": json.dumps(dict(s.params)),
             "exact": int(s.kind == "strategy" and catalog.strategy(s.strategy).exact),  # auto: not known ahead
             "compared": int(s in study.settings),
             "reference": int(s == study.reference), "fallback": int(s == study.fallback)}
            for s in study.all_settings]


def _pending(study: Study, store: Store, point_ids: dict[Point, int], setting_ids: dict[str, int],
             settings: list[Setting]) -> dict[tuple, list[int]]:
    """(point, setting, point id, setting id) -> instances with no stored result."""
    done = store.finished_tasks()
    out = {}
    for point, pid in point_ids.items():
        for setting in settings:
            sid = setting_ids[setting.key]
            out[(point, setting, pid, sid)] = [i for i in range(study.samples) if (pid, sid, i) not in done]
    return out


def _needing_fallback(study: Study, store: Store, point_ids: dict[Point, int],
                      setting_ids: dict[str, int]) -> dict[Point, int]:
    """Points where the reference failed on some instance."""
    ref = setting_ids[study.reference.key]
    failed = {r[0] for r in store.rows(
        "SELECT DISTINCT point_id FROM results WHERE setting_id = ? AND status = 'failed' AND instance < ?",
        (ref, study.samples))}
    return {p: pid for p, pid in point_ids.items() if pid in failed}
