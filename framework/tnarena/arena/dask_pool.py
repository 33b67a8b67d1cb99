"""The Dask executor: chunks run as tasks on a dask.distributed cluster.

Same contract as :class:`~tnarena.arena.pool.LocalPool`: each
:class:`~tnarena.arena.worker.Chunk` becomes one task (:func:`run_chunk`),
which builds a :class:`~tnarena.arena.worker.TaskRunner` once per worker
process (the catalog comes from :func:`~tnarena.catalog.load_catalog` there)
and returns a row per unit. Results come back to the parent, the one process
that writes the database, which calls ``on_result`` for every unit exactly once.

Limits, and how they differ from the local pool:

- **Time.** A chunk may run ``time_limit * len(units) + slack`` seconds, counted
  from its submission (the parent keeps at most one chunk per worker thread in
  flight, so a chunk starts as soon as it is submitted, unless other clients
  keep the cluster busy). Past that the task is cancelled and, if its worker
  has a nanny, the worker process is ended (``os._exit``) and the nanny starts a
  fresh one, as the local pool kills its worker. Dask cannot stop one running
  task: a worker without a nanny goes on computing the abandoned task until it
  returns (its result is thrown away), with one thread fewer for the study
  meanwhile. The chunk's units are then run again one per task; a single unit
  past ``time_limit + slack`` is recorded failed: "time limit exceeded (X s)".
  Ending a worker ends every task it runs: with several threads per worker the
  others are lost too and Dask reschedules them.
- **Lost workers.** A task whose future errors (its worker died, Dask gave up
  rescheduling it: KilledWorker) is split the same way; a single unit that
  fails so is recorded failed with Dask's reason.
- **Memory.** On a cluster started for the run each worker process gets an
  address-space limit of ``memory_limit`` MiB above its size (as in the local
  pool: an allocation past it raises MemoryError, recorded as a failure), and
  the cluster's own per-worker limit is set ``WORKER_BASE_MIB`` above that as a
  backstop (the nanny restarts a worker at 95 % of it). On a remote cluster the
  workers' own ``--memory-limit`` applies and the study's is not enforced.
"""

from __future__ import annotations

import contextlib
import functools
import importlib
import logging
import os
import time
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field, replace
from types import ModuleType
from typing import Any

from tnarena.arena.pool import ResultHandler, _limit_memory, skipped
from tnarena.arena.worker import Chunk, TaskRunner, failed_row
from tnarena.catalog import Catalog
from tnarena.errors import TnarenaError

#: Seconds added to every task's deadline (scheduling, transfers, a worker's first imports).
DEADLINE_SLACK = 5.0
#: MiB above the study's memory limit at which a local cluster's nanny restarts a worker.
WORKER_BASE_MIB = 512
#: Seconds to wait for a remote cluster's first worker.
WORKER_WAIT = 60.0
#: Seconds between checks of the deadlines while nothing finishes.
POLL = 0.25

#: (plugin name, importable module name) pairs a worker adds to its catalog.
PluginSpec = tuple[tuple[str, str], ...]

# ---- inside a worker process -----------------------------------------------------
_RUNNERS: dict[PluginSpec, TaskRunner] = {}  # one per plugin list, for the worker process's life
_LIMITS: dict[str, Any] = {}  # the memory limit set here and the BLAS thread limit


def run_chunk(chunk: Chunk, plugins: PluginSpec = (), memory_limit: float | None = None) -> list[tuple[int, dict]]:
    """Run every unit of ``chunk`` in this worker process: [(unit, row), ...], failures included.

    plugins : extra plugins to load, by module name (the modules must be importable here);
    memory_limit : MiB of address space this process may add (None: leave the process as it is).
    """
    _limit_process(memory_limit)
    runner = _RUNNERS.get(plugins)
    if runner is None:
        from tnarena.catalog import load_catalog

        extra = [(name, importlib.import_module(module)) for name, module in plugins]
        runner = _RUNNERS[plugins] = TaskRunner(load_catalog(extra_plugins=extra))
    missing = _missing_strategy(runner.catalog, chunk)
    if missing:
        return [(unit, failed_row(missing)) for unit in chunk.instances]
    if runner.can_batch(chunk):
        return runner.run_batch(chunk)
    return [(unit, runner.run(chunk, unit)) for unit in chunk.instances]


def _limit_process(memory_limit: float | None) -> None:
    """One BLAS thread (as in the local pool: same arithmetic, same bits) and the memory limit, once."""
    if "blas" not in _LIMITS:
        from threadpoolctl import threadpool_limits

        _LIMITS["blas"] = threadpool_limits(limits=1, user_api="blas")
    if memory_limit is not None and _LIMITS.get("memory") != memory_limit:
        _limit_memory(memory_limit)
        _LIMITS["memory"] = memory_limit


def _missing_strategy(catalog: Catalog, chunk: Chunk) -> str | None:
    if chunk.setting.kind != "strategy" or chunk.setting.strategy in catalog.strategies:
        return None
    import socket

    return (f"strategy {chunk.setting.strategy!r} is not installed on Dask worker host {socket.gethostname()!r}: "
            "install its plugin there (or pass it in DaskPool's plugins).")


# ---- in the parent -----------------------------------------------------------------
@dataclass
class _Flight:
    """A submitted chunk: its future, its deadline (monotonic seconds), the units still unreported."""

    chunk: Chunk
    future: Any
    deadline: float
    waiting: set[int] = field(default_factory=set)


class DaskPool:
    """Run chunks as tasks on a Dask cluster.

    workers : worker processes of the local cluster started when ``address`` is None
        (1 thread each); ignored with an address (the cluster has its own);
    time_limit : seconds per unit (one plan, or one decode);
    memory_limit : MiB a worker may add (None: unlimited); local cluster only, see the module;
    address : a scheduler address (``tcp://host:8786``) or None for a local cluster;
    plugins : extra plugins the workers load: (name, module or importable module name) pairs;
    slack : seconds added to every deadline.
    """

    def __init__(self, catalog: Catalog, workers: int = 1, *, time_limit: float = 600.0,
                 memory_limit: float | None = None, address: str | None = None,
                 plugins: Iterable[tuple[str, str | ModuleType]] = (), slack: float = DEADLINE_SLACK) -> None:
        self.catalog = catalog
        self.workers = max(1, int(workers))
        self.time_limit = time_limit
        self.memory_limit = memory_limit
        self.address = address
        self.plugins: PluginSpec = tuple((name, m if isinstance(m, str) else m.__name__) for name, m in plugins)
        self.slack = slack
        self.skip: Callable[[Chunk], str | None] | None = None  # as LocalPool.skip

    def run(self, chunks: list[Chunk], on_result: ResultHandler) -> None:
        """Run every chunk; ``on_result`` sees every unit exactly once, in the calling process."""
        if not chunks:
            return
        client, cluster = self._connect()
        try:
            _Run(self, client, on_result).drive(chunks)
        finally:  # on an interruption pending tasks are dropped; what finished is stored
            client.close()
            if cluster is not None:
                cluster.close()

    def _connect(self):
        try:
            from distributed import Client, LocalCluster
        except ImportError:
            raise TnarenaError("the Dask executor needs dask.distributed: pip install 'tnarena[dask]'.") from None
        if self.address is not None:
            try:
                client = Client(self.address, timeout=30)
                client.wait_for_workers(1, timeout=WORKER_WAIT)
            except (OSError, TimeoutError) as exc:
                raise TnarenaError(f"cannot use the Dask scheduler at {self.address!r}: {exc}; "
                                   "start it with `dask scheduler` and at least one `dask worker`.") from None
            return client, None
        limit = None if self.memory_limit is None else f"{self.memory_limit + WORKER_BASE_MIB}MiB"
        cluster = LocalCluster(n_workers=self.workers, threads_per_worker=1, processes=True, memory_limit=limit,
                               dashboard_address=None, silence_logs=logging.CRITICAL)
        client = Client(cluster)
        client.wait_for_workers(self.workers)
        return client, cluster

    @property
    def _worker_memory_limit(self) -> float | None:
        """The address-space limit the workers set themselves (local clusters only)."""
        return self.memory_limit if self.address is None else None


class _Run:
    """One call of :meth:`DaskPool.run`: a window of tasks in flight, deadlines, results."""

    def __init__(self, pool: DaskPool, client, on_result: ResultHandler) -> None:
        self.pool, self.client, self.on_result = pool, client, on_result
        self.flights: dict[Any, _Flight] = {}  # future -> flight

    def drive(self, chunks: Sequence[Chunk]) -> None:
        from distributed import wait

        queue = list(reversed(chunks))  # popped from the end: submitted in the given order
        while queue or self.flights:
            room = self._slots() - len(self.flights)
            while queue and room > 0:
                chunk = queue.pop()
                if not skipped(self.pool.skip, chunk, self.on_result):
                    self._submit(chunk)
                    room -= 1
            try:
                done, _ = wait(list(self.flights), timeout=POLL, return_when="FIRST_COMPLETED")
            except TimeoutError:  # nothing finished within POLL seconds: check the deadlines
                done = ()
            for future in done:
                self._finished(self.flights.pop(future), queue)
            now = time.monotonic()
            for future, flight in list(self.flights.items()):
                if flight.future.done() or now <= flight.deadline:
                    continue
                self._abandon(self.flights.pop(future))
                limit = f"time limit exceeded ({self.pool.time_limit:g} s)"
                self._retry_or_fail(flight, queue, limit)

    def _slots(self) -> int:
        """Worker threads in the cluster now: chunks in flight at once."""
        return max(1, sum(self.client.nthreads().values()))

    def _submit(self, chunk: Chunk) -> None:
        future = self.client.submit(run_chunk, chunk, self.pool.plugins, self.pool._worker_memory_limit, pure=False)
        deadline = time.monotonic() + self.pool.time_limit * len(chunk.instances) + self.pool.slack
        self.flights[future] = _Flight(chunk, future, deadline, set(chunk.instances))

    def _finished(self, flight: _Flight, queue: list[Chunk]) -> None:
        if flight.future.status != "finished":
            exc = flight.future.exception() if flight.future.status == "error" else None
            reason = f"Dask task failed ({type(exc).__name__}: {exc})" if exc else f"Dask task {flight.future.status}"
            self._retry_or_fail(flight, queue, reason)
            return
        for unit, row in flight.future.result():
            if unit in flight.waiting:
                flight.waiting.discard(unit)
                self.on_result(flight.chunk, unit, row)
        if flight.waiting:  # not expected: run_chunk returns a row per unit
            self._retry_or_fail(flight, queue, "the Dask task returned no row for this unit")

    def _retry_or_fail(self, flight: _Flight, queue: list[Chunk], reason: str) -> None:
        """Units of a lost task: run each again alone if the task held several, else record them failed."""
        units = sorted(flight.waiting)
        if len(flight.chunk.instances) > 1:
            queue.extend(replace(flight.chunk, instances=(u,)) for u in reversed(units))
            return
        for unit in units:
            self.on_result(flight.chunk, unit, failed_row(reason))

    def _abandon(self, flight: _Flight) -> None:
        """Cancel a task past its deadline; end the worker process running it when a nanny will replace it."""
        running_on = [w for w, keys in self.client.processing().items() if flight.future.key in keys]
        flight.future.cancel()
        workers = self.client.scheduler_info().get("workers", {})
        with_nanny = [w for w in running_on if workers.get(w, {}).get("nanny")]
        if with_nanny:
            with contextlib.suppress(Exception):  # the connection dies with the process: expected
                self.client.run(_end_worker_process, workers=with_nanny, on_error="ignore")


def _end_worker_process() -> None:
    """Run on a worker: exit at once (the abandoned task is in another thread); its nanny starts a fresh one."""
    os._exit(70)


def dask_factory(address: str | None = None, **options: Any) -> Callable[..., DaskPool]:
    """An executor factory for :func:`~tnarena.arena.runner.run_study`: ``executor=dask_factory(address)``.

    options : DaskPool keywords (plugins, slack).
    """
    return functools.partial(DaskPool, address=address, **options)

