"""Run a study: prepare its points, work out what is missing from the store, run it.

Two phases. First every compared setting and the reference at every point;
then the fallback reference at the points where the reference failed (its
plan refused, a time or memory limit). Tasks already in the store are never
run again, so running a study twice resumes it.
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
from tnarena.arena.worker import Chunk, build_code_and_noise
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
    make = executor or LocalPool
    pool = make(catalog, workers, time_limit=study.time_limit, memory_limit=study.memory_limit)

    first = study.settings + ([study.reference] if study.reference not in study.settings else [])
    phases = [lambda: _chunks(study, store, point_ids, setting_ids, first, chunk_size)]
    if study.fallback is not None and study.fallback not in first:
        phases.append(lambda: _chunks(study, store, _needing_fallback(study, store, point_ids, setting_ids),
                                      setting_ids, [study.fallback], chunk_size))
    total_failed = total_run = 0
    run_id = store.start_run(workers, 0)
    try:
        for phase in phases:
            chunks = phase()
            if not chunks:
                continue
            bar = Progress(sum(len(c.instances) for c in chunks), stream=progress)

            def on_result(chunk: Chunk, instance: int, row: dict) -> None:
                store.add_result(chunk.point_id, chunk.setting_id, instance, run_id, row)
                bar.advance(failed=row["status"] != "ok")

            pool.run(chunks, on_result)
            bar.close()
            total_run += bar.done
            total_failed += bar.failed
    finally:
        store.finish_run(run_id)
    return RunOutcome(run_id, total_run, total_failed, time.monotonic() - start)


def prepare_points(study: Study, store: Store, catalog: Catalog, progress: TextIO | None) -> dict[Point, int]:
    """Build each point's code and noise once (catching impossible ones early); record them."""
    ids = {}
    codes: dict[str, object] = {}
    for i, point in enumerate(study.points):
        if progress is not None:
            print(f"\rpreparing point {i + 1}/{len(study.points)}: {point.label}", end="", file=progress,
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
    if progress is not None and study.points:
        print(file=progress)
    return ids


def _setting_rows(study: Study, catalog: Catalog) -> list[dict]:
    return [{"key": s.key, "label": s.label, "strategy": s.strategy, "params": json.dumps(dict(s.params)),
             "exact": int(catalog.strategy(s.strategy).exact), "compared": int(s in study.settings),
             "reference": int(s == study.reference), "fallback": int(s == study.fallback)}
            for s in study.all_settings]


def _chunks(study: Study, store: Store, point_ids: dict[Point, int], setting_ids: dict[str, int],
            settings: list[Setting], chunk_size: int) -> list[Chunk]:
    done = store.finished_tasks()
    chunks = []
    for point, pid in point_ids.items():
        for setting in settings:
            sid = setting_ids[setting.key]
            todo = [i for i in range(study.samples) if (pid, sid, i) not in done]
            for at in range(0, len(todo), chunk_size):
                chunks.append(Chunk(point, setting, pid, sid, tuple(todo[at:at + chunk_size]), study.seed,
                                    study.trace_memory))
    return chunks


def _needing_fallback(study: Study, store: Store, point_ids: dict[Point, int],
                      setting_ids: dict[str, int]) -> dict[Point, int]:
    """Points where the reference failed on some instance."""
    ref = setting_ids[study.reference.key]
    failed = {r[0] for r in store.rows(
        "SELECT DISTINCT point_id FROM results WHERE setting_id = ? AND status = 'failed' AND instance < ?",
        (ref, study.samples))}
    return {p: pid for p, pid in point_ids.items() if pid in failed}
