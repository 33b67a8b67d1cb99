"""The local executor: a pool of worker processes with a time and memory limit per task.

Each worker takes one :class:`~tnarena.arena.worker.Chunk` at a time and
reports a row per instance over a pipe. The parent watches the clock: a task
over its time limit gets its worker killed (SIGKILL), is recorded as failed,
and the rest of its chunk goes back to the queue for a fresh worker. A worker
that dies on its own (the kernel's out-of-memory killer, a crash in native
code) is handled the same way. The memory limit is an address-space limit
(RLIMIT_AS) set inside each worker, so an allocation over it raises
MemoryError there and is recorded as a failure.
"""

from __future__ import annotations

import multiprocessing as mp
import os
import signal
import time
from collections import deque
from collections.abc import Callable
from dataclasses import dataclass, replace
from multiprocessing.connection import Connection, wait
from typing import Any

from tnarena.arena.worker import Chunk, TaskRunner, failed_row
from tnarena.catalog import Catalog

#: Called with (chunk, instance, row) for every finished task, in the parent.
ResultHandler = Callable[[Chunk, int, dict[str, Any]], None]

_INHERITED_CATALOG: Catalog | None = None  # handed to forked workers


@dataclass
class _Worker:
    process: Any
    conn: Connection
    chunk: Chunk | None = None
    remaining: deque | None = None
    task_started: float | None = None
    units_started: int = 1  # units the worker is working on at once (a batch)


class LocalPool:
    """Run chunks on ``workers`` processes.

    time_limit : seconds per unit of work (one plan, or one decode);
    memory_limit : MiB of address space a worker may add (None: unlimited).
    """

    def __init__(self, catalog: Catalog, workers: int = 1, *, time_limit: float = 600.0,
                 memory_limit: float | None = None) -> None:
        self.catalog = catalog
        self.workers = max(1, int(workers))
        self.time_limit = time_limit
        self.memory_limit = memory_limit
        methods = mp.get_all_start_methods()
        self._context = mp.get_context("fork" if "fork" in methods else "spawn")
        #: Optional ``skip(chunk) -> reason | None``, asked before a chunk starts (see runner.GiveUp).
        self.skip: Callable[[Chunk], str | None] | None = None

    def run(self, chunks: list[Chunk], on_result: ResultHandler) -> None:
        """Run every chunk; ``on_result`` sees every task exactly once."""
        global _INHERITED_CATALOG
        _INHERITED_CATALOG = self.catalog
        queue = deque(chunks)
        pool: list[_Worker] = []
        finished = False
        try:
            while queue or any(w.chunk is not None for w in pool):
                while queue and all(w.chunk is not None for w in pool) and len(pool) < self.workers:
                    pool.append(self._start_worker())
                for w in pool:
                    while w.chunk is None and queue:
                        chunk = queue.popleft()
                        if not skipped(self.skip, chunk, on_result):
                            self._assign(w, chunk)
                self._wait(pool, queue, on_result)
            finished = True
        finally:  # on an interruption the workers are killed at once; what finished is stored
            for w in pool:
                self._stop(w, kill=not finished)

    # ---- one worker --------------------------------------------------------------
    def _start_worker(self) -> _Worker:
        parent, child = self._context.Pipe()
        process = self._context.Process(target=_worker_main, args=(child, self.memory_limit), daemon=True)
        process.start()
        child.close()
        return _Worker(process, parent)

    def _assign(self, w: _Worker, chunk: Chunk) -> None:
        w.chunk, w.remaining, w.task_started = chunk, deque(chunk.instances), time.monotonic()
        w.conn.send(chunk)

    def _wait(self, pool: list[_Worker], queue: deque, on_result: ResultHandler) -> None:
        busy = [w for w in pool if w.chunk is not None]
        ready = wait([w.conn for w in busy], timeout=0.2)
        for w in busy:
            if w.conn in ready:
                try:
                    kind, instance, row = w.conn.recv()
                except (EOFError, OSError):
                    self._lost(w, pool, queue, on_result, self._death_reason(w))
                    continue
                if kind == "start":
                    w.task_started, w.units_started = time.monotonic(), row or 1
                else:
                    on_result(w.chunk, instance, row)
                    w.remaining.popleft()
                    w.task_started = time.monotonic()
                    if not w.remaining:
                        w.chunk = w.remaining = None
            elif time.monotonic() - w.task_started > self.time_limit * w.units_started:
                self._lost(w, pool, queue, on_result, f"time limit exceeded ({self.time_limit:g} s)")

    def _lost(self, w: _Worker, pool: list[_Worker], queue: deque, on_result: ResultHandler, reason: str) -> None:
        """The worker is killed or dead: fail its current task, requeue the rest of its chunk."""
        self._stop(w, kill=True)
        pool.remove(w)
        current, rest = w.remaining[0], tuple(list(w.remaining)[1:])
        row = failed_row(reason)
        row["worker"] = w.process.pid
        on_result(w.chunk, current, row)
        if rest:
            queue.appendleft(replace(w.chunk, instances=rest))

    def _death_reason(self, w: _Worker) -> str:
        w.process.join(timeout=1.0)
        code = w.process.exitcode
        if code is not None and code < 0:
            hint = " (killed: out of memory?)" if -code == 9 else ""
            return f"worker process died from signal {-code}{hint}"
        return f"worker process exited with status {code}"

    def _stop(self, w: _Worker, kill: bool = False) -> None:
        if w.process.is_alive():
            if kill:
                w.process.kill()
            else:
                try:
                    w.conn.send(None)
                except (BrokenPipeError, OSError):
                    w.process.kill()
        w.process.join(timeout=5.0)
        if w.process.is_alive():
            w.process.kill()
            w.process.join()
        w.conn.close()


def skipped(skip: Callable[[Chunk], str | None] | None, chunk: Chunk, on_result: ResultHandler) -> bool:
    """Record every unit of ``chunk`` as failed, without running it, when ``skip`` gives a reason."""
    reason = skip(chunk) if skip is not None else None
    if reason is None:
        return False
    for unit in chunk.instances:
        on_result(chunk, unit, failed_row(reason))
    return True


def _worker_main(conn: Connection, memory_limit: float | None) -> None:
    """Body of a worker process: one BLAS thread, the memory limit, then chunks until None."""
    from threadpoolctl import threadpool_limits

    from tnarena.catalog import load_catalog

    signal.signal(signal.SIGINT, signal.SIG_IGN)  # Ctrl-C is the parent's to handle
    _limit_memory(memory_limit)
    blas = threadpool_limits(limits=1, user_api="blas")  # noqa: F841 - kept for the process's life
    catalog = _INHERITED_CATALOG if _INHERITED_CATALOG is not None else load_catalog()
    runner = TaskRunner(catalog)
    while True:
        chunk = conn.recv()
        if chunk is None:
            return
        if runner.can_batch(chunk):  # one batched contraction; the time limit scales with its size
            conn.send(("start", chunk.instances[0], len(chunk.instances)))
            for instance, row in runner.run_batch(chunk):
                conn.send(("result", instance, row))
            continue
        for instance in chunk.instances:
            conn.send(("start", instance, 1))
            conn.send(("result", instance, runner.run(chunk, instance)))


def _limit_memory(memory_limit: float | None) -> None:
    """Cap this process's address space at its present size plus ``memory_limit`` MiB."""
    if memory_limit is None:
        return
    try:
        import resource
    except ImportError:  # not on this platform: the limit is not enforced
        return
    present = _address_space_bytes()
    limit = present + int(memory_limit * 2**20)
    _, hard = resource.getrlimit(resource.RLIMIT_AS)
    if hard != resource.RLIM_INFINITY:
        limit = min(limit, hard)
    resource.setrlimit(resource.RLIMIT_AS, (limit, hard))


def _address_space_bytes() -> int:
    try:
        with open(f"/proc/{os.getpid()}/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("VmSize:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    return 0
