"""Where the time goes: the sampling profiler's bins, and a profiled study.

Checks are against work whose nature the test fixes: a loop of SVDs through
numpy.linalg, a loop of matrix products written with ``@``, and a pure-Python
loop must each land mostly in their own bin (common practice for checking a
profiler: profile known workloads).
"""

import numpy as np

from tnarena.arena.profiler import Sampler, classify
from tnarena.arena.runner import run_study
from tnarena.arena.store import Store
from tnarena.arena.study import parse_study
from tnarena.arena.summary import format_summary, summarise, task_metrics


def run_for(seconds, work):
    import time

    end = time.perf_counter() + seconds
    with Sampler() as sampler:
        while time.perf_counter() < end:
            work()
    return sampler.fractions(), sum(sampler.counts.values())


def test_svds_land_in_decompositions():
    a = np.random.default_rng(0).normal(size=(120, 120))
    fractions, samples = run_for(0.6, lambda: np.linalg.svd(a))
    assert samples > 50 and fractions["decompositions"] > 0.8


def test_matrix_products_land_in_products():
    a = np.random.default_rng(0).normal(size=(200, 200))
    fractions, samples = run_for(0.6, lambda: a @ a)
    assert samples > 50 and fractions["products"] > 0.8


def test_python_loops_land_in_python():
    fractions, samples = run_for(0.6, lambda: sum(i * i for i in range(2000)))
    assert samples > 50 and fractions["python"] > 0.9


def test_classify_without_a_frame_is_python():
    assert classify(None) == "python"


def test_a_profiled_study_stores_and_prints_the_split(catalog, tmp_path):
    data = {"title": "profiled", "seed": 2, "samples": 3, "profile": True,
            "codes": [{"family": "surface", "lattices": ["square"], "sizes": [7]}],
            "noise": [{"model": "depolarizing", "rates": [0.12]}],
            "strategies": [{"name": "sweep", "params": {"chi": 8}}],
            "reference": {"strategy": "sweep", "params": {"chi": 8}}}
    store = Store(str(tmp_path / "p.db"))
    run_study(parse_study(data, catalog), store, catalog, workers=1, progress=None)
    (row,) = summarise(task_metrics(store))
    assert set(row.time_split) == {"products", "decompositions", "python"} and sum(row.time_split.values()) > 10
    assert "contraction time:" in format_summary([row]) and "% products" in format_summary([row])
