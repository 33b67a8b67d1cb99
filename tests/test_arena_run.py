"""The arena: identical seeded instances, determinism, resume after SIGKILL, failure isolation.

Sources: numpy's SeedSequence documentation (independent streams keyed by a
list of integers); SQLite's documentation (a committed WAL transaction
survives the writer being killed); the rest is common practice for
reproducible Monte Carlo studies (shared/REFERENCES.md, "common practice").
"""

import hashlib
import json
import os
import signal
import sqlite3
import subprocess
import sys
import time

import numpy as np
import pytest

import flaky_plugin
from tnarena.arena.runner import run_study
from tnarena.arena.store import Store
from tnarena.arena.study import parse_study
from tnarena.arena.summary import summarise, task_metrics
from tnarena.catalog import load_catalog
from tnarena.noise import make_noise, sample_errors

SMALL = {
    "title": "small", "seed": 11, "samples": 5,
    "codes": [{"family": "surface", "lattices": ["square", "hexagonal"], "sizes": [3, 4]}],
    "noise": [{"model": "bit_flip", "rates": [0.1]}, {"model": "depolarizing", "rates": [0.12]}],
    "strategies": [{"name": "sweep", "grid": {"chi": [2, 32]}}, {"name": "columns", "params": {"chi": 4}},
                   {"name": "exact", "params": {"max_repeats": 8, "search_time": 0}}],
    # search_time 0: the tree search ends by max_repeats, never by the clock, so two
    # databases planned apart get the same trees (see the exact plugin's seed test)
    "reference": {"strategy": "exact", "params": {"max_repeats": 8, "search_time": 0}},
}


def run(catalog, data, db, workers=1, **kw):
    store = Store(str(db))
    outcome = run_study(parse_study(data, catalog), store, catalog, workers=workers, progress=None, **kw)
    return store, outcome


def results(db) -> list[tuple]:
    with sqlite3.connect(str(db)) as con:
        return con.execute(
            "SELECT p.key, s.key, r.instance, r.status, r.syndrome, r.log_probs, r.decision, r.true_class "
            "FROM results r JOIN points p ON p.id = r.point_id JOIN settings s ON s.id = r.setting_id "
            "ORDER BY p.key, s.key, r.instance").fetchall()


@pytest.fixture(scope="module")
def small_db(catalog, tmp_path_factory):
    db = tmp_path_factory.mktemp("arena") / "small.db"
    run(catalog, SMALL, db, workers=1)
    return db


def test_every_setting_sees_the_same_seeded_errors(catalog, small_db):
    """Each instance's error is drawn from SeedSequence([seed, sha256 words of the point key, instance]).

    Recomputed here from numpy's SeedSequence directly; every setting at a
    point must have stored the syndrome of exactly that error.
    """
    rows = results(small_db)
    assert len(rows) == 8 * 4 * 5 and all(r[3] == "ok" for r in rows)
    for point_key, _, instance, _, syndrome, *_ in rows:
        point = json.loads(point_key)
        words = [int.from_bytes(hashlib.sha256(point_key.encode()).digest()[i:i + 4], "little") for i in (0, 4, 8, 12)]
        code = catalog.build_code(point["family"], point["lattice"], point["size"])
        table = make_noise(point["model"], code.n, point["rate"])
        error = sample_errors(table, np.random.default_rng(np.random.SeedSequence([11, *words, instance])))
        assert syndrome == np.packbits(code.syndrome(error)).tobytes().hex()


def test_one_and_two_workers_store_identical_results(catalog, small_db, tmp_path):
    """Bit for bit: same plans, same arrays, same chunks (so the same batches for batched strategies)."""
    run(catalog, SMALL, tmp_path / "two.db", workers=2)
    assert results(tmp_path / "two.db") == results(small_db)


def test_other_chunk_sizes_change_values_only_within_rounding(catalog, small_db, tmp_path):
    """Chunks are a strategy's batches; a batched sweep keeps one bond count per batch, so values may
    move in the last bits (never past the cutoff), while decisions and exact values do not."""
    run(catalog, SMALL, tmp_path / "two.db", workers=2, chunk_size=2)
    for a, b in zip(results(tmp_path / "two.db"), results(small_db)):
        assert a[:5] == b[:5] and a[6:] == b[6:]
        for x, y in zip(json.loads(a[5]), json.loads(b[5])):
            assert x == y or abs(x - y) <= 1e-12 * max(1.0, abs(y))


def test_exact_reference_gives_zero_error_and_sweep_converges(catalog, small_db):
    """Sweep at chi 32 on these small patches is exact to rounding (as in the sweep plugin's tests, 1e-10)."""
    rows = {(r.point, r.setting): r for r in summarise(task_metrics(Store(str(small_db))))}
    for (point, setting), r in rows.items():
        assert r.reference == "exact(max_repeats=8,search_time=0)" and not r.approximate_reference
        if setting.startswith("exact"):
            assert r.mean_abs_error == 0.0 and r.agreement == 1.0
        if setting == "sweep(chi=32)":
            assert r.max_abs_error < 1e-10 and r.agreement == 1.0


def test_refused_reference_falls_back_to_the_largest_chi_and_says_so(catalog, tmp_path):
    data = dict(SMALL, samples=2, noise=[{"model": "bit_flip", "rates": [0.1]}],
                codes=[{"family": "surface", "lattices": ["square"], "sizes": [3]}],
                strategies=[{"name": "sweep", "grid": {"chi": [2, 16]}}],
                reference={"strategy": "exact", "params": {"max_intermediate": 2}})
    store, _ = run(catalog, data, tmp_path / "fallback.db")
    metrics = task_metrics(store)
    exact_rows = [m for m in metrics if m["strategy"] == "exact"]
    assert exact_rows and all(m["status"] == "failed" and "plan refused" in m["reason"] for m in exact_rows)
    for row in summarise(metrics):
        assert row.reference == "sweep(chi=16)" and row.approximate_reference


def test_resume_after_sigkill_loses_nothing_and_recomputes_nothing(tmp_path):
    """SIGKILL the whole study part-way (parent and workers), run it again, check every task once."""
    study = tmp_path / "long.toml"
    study.write_text(
        'title = "long"\nseed = 5\nsamples = 60\n'
        '[[codes]]\nfamily = "surface"\nlattices = ["square"]\nsizes = [7]\n'
        '[[noise]]\nmodel = "bit_flip"\nrates = [0.08, 0.12]\n'
        '[[strategies]]\nname = "sweep"\ngrid = { chi = [4, 8, 12] }\n'
        '[reference]\nstrategy = "sweep"\nparams = { chi = 12 }\n')
    db = tmp_path / "long.db"
    total = 60 * 2 * 3
    argv = [sys.executable, "-m", "tnarena.cli", "run", str(study), "--db", str(db), "--workers", "2", "--quiet"]
    proc = subprocess.Popen(argv, start_new_session=True, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    stored = 0
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline and proc.poll() is None:
        time.sleep(0.05)
        try:
            with sqlite3.connect(str(db), timeout=5) as con:
                stored = con.execute("SELECT COUNT(*) FROM results").fetchone()[0]
        except sqlite3.OperationalError:
            continue  # not created yet
        if stored >= 40:
            break
    assert proc.poll() is None, "the study ended before it could be killed; make it longer"
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait()
    with sqlite3.connect(str(db)) as con:
        before = dict(((p, s, i), (run, fin)) for p, s, i, run, fin in con.execute(
            "SELECT point_id, setting_id, instance, run_id, finished FROM results"))
    assert 40 <= len(before) < total
    again = subprocess.run(argv, capture_output=True, text=True, timeout=300)
    assert again.returncode == 0, again.stderr
    assert "already holds" in again.stderr
    with sqlite3.connect(str(db)) as con:
        rows = con.execute("SELECT point_id, setting_id, instance, run_id, finished FROM results").fetchall()
        runs = con.execute("SELECT id FROM runs ORDER BY id").fetchall()
    keys = [(p, s, i) for p, s, i, _, _ in rows]
    assert len(keys) == len(set(keys)) == total
    after = {(p, s, i): (run, fin) for p, s, i, run, fin in rows}
    assert all(after[k] == v for k, v in before.items())  # finished tasks untouched
    assert {after[k][0] for k in after if k not in before} == {runs[-1][0]}


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="the memory limit is an RLIMIT_AS, Linux only")
def test_raising_hanging_and_memory_hungry_tasks_are_recorded_and_the_study_goes_on(tmp_path):
    catalog = load_catalog(extra_plugins=[("flaky_test", flaky_plugin)])
    data = {"title": "flaky", "seed": 3, "samples": 10, "time_limit": 3, "memory_limit": 512,
            "codes": [{"family": "surface", "lattices": ["square"], "sizes": [3]}],
            "noise": [{"model": "bit_flip", "rates": [0.15]}],
            "strategies": [{"name": "flaky"}, {"name": "sweep", "params": {"chi": 4}}],
            "reference": {"strategy": "sweep", "params": {"chi": 4}}}
    store, outcome = run(catalog, data, tmp_path / "flaky.db", workers=2)
    metrics = task_metrics(store)
    flaky = [m for m in metrics if m["strategy"] == "flaky"]
    assert len(flaky) == 10 and len(metrics) == 20
    assert [m["reason"] for m in metrics if m["strategy"] == "sweep" and m["status"] != "ok"] == []
    reasons = [m["reason"] or "" for m in flaky]
    assert any(r == "strategy 'flaky' raised RuntimeError in contract(): flaky strategy refuses this network"
               for r in reasons)
    assert any(r == "time limit exceeded (3 s)" for r in reasons)
    assert any(r.startswith("memory limit exceeded (Unable to allocate 2.00 GiB") for r in reasons)
    assert outcome.tasks_failed == sum(m["status"] == "failed" for m in flaky) >= 3


def test_matching_baseline_decodes_the_same_instances(catalog, tmp_path):
    """A baseline stores decisions on the same syndromes as the strategies, and no ln P errors."""
    data = dict(SMALL, samples=4, codes=[{"family": "surface", "lattices": ["square"], "sizes": [5]}],
                noise=[{"model": "bit_flip", "rates": [0.08]}], strategies=[{"name": "exact", "params": {"max_repeats": 8}}],
                baselines=[{"name": "matching"}])
    store, _ = run(catalog, data, tmp_path / "matching.db")
    metrics = task_metrics(store)
    exact = {m["instance"]: m for m in metrics if m["strategy"] == "exact"}
    matching = [m for m in metrics if m["setting"] == "matching"]
    assert len(matching) == 4 and all(m["status"] == "ok" and m["abs_errors"] is None for m in matching)
    for m in matching:
        assert m["syndrome"] == exact[m["instance"]]["syndrome"]
        assert m["agrees"] == (m["decision"] == exact[m["instance"]]["decision"])
    (row,) = [r for r in summarise(metrics) if r.setting == "matching"]
    assert row.mean_abs_error is None and row.agreement is not None


def test_a_study_can_name_the_automatic_choice_and_records_it_per_point(catalog, tmp_path):
    """name = "auto": the chooser picks a setting per point; it is stored and shown with the results.

    With a 1 KiB memory budget exact (which needs more at size 9) cannot be the
    choice; the chosen setting is then judged against exact like any other.
    """
    data = dict(SMALL, samples=3, codes=[{"family": "surface", "lattices": ["square"], "sizes": [9]}],
                noise=[{"model": "bit_flip", "rates": [0.08]}],
                strategies=[{"name": "auto", "params": {"budget_mib": 1 / 1024, "calibration": 2}}])
    store, _ = run(catalog, data, tmp_path / "auto.db", workers=2)
    (plan,) = store.rows("SELECT p.choice FROM plans p JOIN settings s ON s.id = p.setting_id WHERE s.strategy = 'auto'")
    chosen = json.loads(plan["choice"])
    assert chosen["strategy"] in ("sweep", "columns") and chosen["candidates"]
    (row,) = [r for r in summarise(task_metrics(store)) if r.strategy == "auto"]
    assert row.chosen.startswith(chosen["strategy"] + ":chi=") and row.failed == 0
    assert row.mean_abs_error is not None and row.reference.startswith("exact")


def test_a_setting_that_keeps_timing_out_is_given_up_at_that_point(tmp_path):
    """After give_up_after time-outs the rest of that (point, setting) is recorded as skipped, not run."""
    catalog = load_catalog(extra_plugins=[("flaky_test", flaky_plugin)])
    data = {"title": "sleepy", "seed": 3, "samples": 6, "time_limit": 1, "give_up_after": 2,
            "codes": [{"family": "surface", "lattices": ["square"], "sizes": [3]}],
            "noise": [{"model": "bit_flip", "rates": [0.15]}],
            "strategies": [{"name": "sleepy"}], "reference": {"strategy": "sweep", "params": {"chi": 4}}}
    store, _ = run(catalog, data, tmp_path / "sleepy.db", workers=1, chunk_size=1)
    reasons = sorted(m["reason"] for m in task_metrics(store) if m["strategy"] == "sleepy")
    assert reasons[:4] == ["skipped: 2 tasks of this setting at this point ran past the time limit (1 s); "
                           "raise time_limit or give_up_after to run it"] * 4
    assert reasons[4:] == ["time limit exceeded (1 s)"] * 2


def test_traced_memory_is_taken_on_a_fresh_plan(catalog):
    """The sweep's plan resumes from its last contraction, so contracting the decided class again
    with it would allocate almost nothing. traced_peak must measure a whole contraction: at least
    half of what tracemalloc (Python's standard library) records here for a plan made anew."""
    import tracemalloc

    from tnarena.arena.worker import traced_peak
    from tnarena.decode import Decoder

    code = catalog.build_code("surface", "square", 7)
    table = make_noise("depolarizing", code.n, 0.12)
    sweep = catalog.strategy("sweep")
    decoder = Decoder(code, table, sweep, {"chi": 16})
    result = decoder.decode_error(sample_errors(table, np.random.default_rng(2)))
    network = decoder.builder.network(decoder.pure_error(result.syndrome), result.decision)
    warm = sweep.contract(decoder.plan, network)  # the plan now holds this very contraction
    assert warm.stats["reused_steps"] > 0
    fresh = sweep.plan(decoder.builder.structure, decoder.params)
    tracemalloc.start()
    try:
        base = tracemalloc.get_traced_memory()[0]
        tracemalloc.reset_peak()
        sweep.contract(fresh, network)
        want = tracemalloc.get_traced_memory()[1] - base
    finally:
        tracemalloc.stop()
    assert traced_peak(decoder, result) >= 0.5 * want
