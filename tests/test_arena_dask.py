"""The Dask executor stores what the local pool stores, and records failures the same way.

Sources: numpy's SeedSequence documentation (each instance's draws depend
only on (study seed, point, instance), not on which process runs it);
dask.distributed's documentation (LocalCluster, Client.submit, a nanny starts
a fresh worker when its worker process dies). That a study's stored results do not depend on
the executor, given one plan per (point, setting) and one BLAS thread per
worker, is common practice for reproducible Monte Carlo studies
(shared/REFERENCES.md, "common practice").
"""

import sqlite3
import sys

import distributed
import flaky_plugin
import pytest
from test_arena_run import results  # the stored columns compared bit for bit
from tnarena.arena.dask_pool import DaskPool, dask_factory
from tnarena.arena.pool import LocalPool
from tnarena.arena.runner import run_study
from tnarena.arena.store import Store
from tnarena.arena.study import parse_study
from tnarena.arena.summary import task_metrics
from tnarena.catalog import load_catalog

#: The tree search bounded by trials alone: its default wall-clock budget (2 s) makes the tree,
#: and so the last bits of ln P, depend on how busy the machine is when each study plans.
EXACT = {"max_repeats": 8, "search_time": 0}

SMALL = {
    "title": "small", "seed": 11, "samples": 3,
    "codes": [{"family": "surface", "lattices": ["square", "hexagonal"], "sizes": [3, 4]}],
    "noise": [{"model": "bit_flip", "rates": [0.1]}, {"model": "depolarizing", "rates": [0.12]}],
    "strategies": [{"name": "sweep", "grid": {"chi": [2, 32]}}, {"name": "exact", "params": EXACT}],
    "reference": {"strategy": "exact", "params": EXACT},
}


def run(catalog, data, db, executor, workers, **kw):
    store = Store(str(db))
    outcome = run_study(parse_study(data, catalog), store, catalog, workers=workers, executor=executor,
                        progress=None, **kw)
    return store, outcome


def test_local_pool_and_a_two_worker_dask_cluster_store_identical_results(catalog, tmp_path):
    """8 points x 3 settings x 3 instances, bit for bit: same seeded errors, same plans, one BLAS thread.

    Each study makes its own plans, so they must not depend on time (EXACT) or on the process.
    """
    run(catalog, SMALL, tmp_path / "local.db", LocalPool, workers=1, chunk_size=2)  # same chunks: same batches
    _, outcome = run(catalog, SMALL, tmp_path / "dask.db", DaskPool, workers=2, chunk_size=2)
    local, dask = results(tmp_path / "local.db"), results(tmp_path / "dask.db")
    assert len(local) == 8 * 3 * 3 and all(r[3] == "ok" for r in local)
    assert dask == local
    assert outcome.tasks_run == len(local) and outcome.tasks_failed == 0
    with sqlite3.connect(str(tmp_path / "dask.db")) as con:  # the tasks really ran in two processes
        assert con.execute("SELECT COUNT(DISTINCT worker) FROM results").fetchone()[0] == 2


def test_a_scheduler_address_runs_the_study_on_that_cluster(catalog, tmp_path):
    """DaskPool with an address uses the running cluster (here a LocalCluster started by the test)."""
    data = dict(SMALL, codes=[{"family": "surface", "lattices": ["square"], "sizes": [3]}],
                noise=[{"model": "bit_flip", "rates": [0.1]}])
    run(catalog, data, tmp_path / "local.db", LocalPool, workers=1)
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, dashboard_address=None) as cluster:
        run(catalog, data, tmp_path / "remote.db", dask_factory(cluster.scheduler_address), workers=1)
        assert len(cluster.workers) == 1  # the pool neither closed this cluster nor added to it
    assert results(tmp_path / "remote.db") == results(tmp_path / "local.db")


FLAKY = {"title": "flaky", "seed": 3, "samples": 7, "time_limit": 3, "memory_limit": 512,
         "codes": [{"family": "surface", "lattices": ["square"], "sizes": [3]}],
         "noise": [{"model": "bit_flip", "rates": [0.15]}],
         "strategies": [{"name": "flaky"}, {"name": "sweep", "params": {"chi": 4}}],
         "reference": {"strategy": "sweep", "params": {"chi": 4}}}


def outcomes(store) -> list[tuple]:
    return sorted((m["setting"], m["instance"], m["status"], m["reason"]) for m in task_metrics(store))


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="the memory limit is an RLIMIT_AS, Linux only")
def test_raising_hanging_and_memory_hungry_tasks_are_recorded_as_the_local_pool_records_them(tmp_path):
    """The flaky test plugin (imported by name in the workers: tests/ is on their sys.path) on 2 workers.

    A raise is recorded with the strategy's reason; a task past its limit is
    cancelled, its worker ended (the nanny starts another) and the other unit
    of its chunk run again alone; an allocation over the memory limit is a
    MemoryError in the worker. Every task ends as it does on the local pool.
    """
    catalog = load_catalog(extra_plugins=[("flaky_test", flaky_plugin)])
    local, _ = run(catalog, FLAKY, tmp_path / "local.db", LocalPool, workers=2)
    executor = dask_factory(None, plugins=[("flaky_test", flaky_plugin)], slack=3.0)
    store, outcome = run(catalog, FLAKY, tmp_path / "flaky.db", executor, workers=2, chunk_size=2)
    got = outcomes(store)
    assert got == outcomes(local) and len(got) == 14
    assert [r for s, _, status, r in got if s.startswith("sweep") and status != "ok"] == []
    reasons = [r or "" for s, _, _, r in got if s.startswith("flaky")]
    assert "strategy 'flaky' raised RuntimeError in contract(): flaky strategy refuses this network" in reasons
    assert "time limit exceeded (3 s)" in reasons
    assert any(r.startswith("memory limit exceeded (Unable to allocate 2.00 GiB") for r in reasons)
    assert outcome.tasks_failed == sum(r != "" for r in reasons) >= 3


def test_a_strategy_the_workers_lack_is_recorded_failed_with_the_fix(tmp_path):
    """The parent knows 'flaky' but the workers were not told to load it: every task says so."""
    catalog = load_catalog(extra_plugins=[("flaky_test", flaky_plugin)])
    data = {"title": "missing", "seed": 3, "samples": 2,
            "codes": [{"family": "surface", "lattices": ["square"], "sizes": [3]}],
            "noise": [{"model": "bit_flip", "rates": [0.1]}],
            "strategies": [{"name": "flaky"}], "reference": {"strategy": "exact"}}
    store, _ = run(catalog, data, tmp_path / "missing.db", DaskPool, workers=1)
    flaky = [m for m in task_metrics(store) if m["strategy"] == "flaky"]
    assert len(flaky) == 2 and all(m["status"] == "failed" for m in flaky)
    assert all(m["reason"].startswith("strategy 'flaky' is not installed on Dask worker host") for m in flaky)
