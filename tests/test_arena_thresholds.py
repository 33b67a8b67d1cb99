"""Thresholds from arena runs: failure rates fall with size below threshold and rise above it.

Sources: REFERENCES 12 (below threshold the failure rate of a good decoder
falls with d, above it rises; common practice), REFERENCES 6 (square-lattice
bit-flip optimal threshold 0.1093, from memory: 0.05 is well below it and 0.2
well above), REFERENCES 5 (zero-rate hashing bound; the square lattice is
self-dual). Counts are recomputed from the database with SQL in the tests.
"""

import sqlite3

import numpy as np
import pytest

from tnarena.arena.runner import run_study
from tnarena.arena.store import Store
from tnarena.arena.study import parse_study
from tnarena.arena.threshold_report import binary_entropy, curve_families, write_threshold_report
from tnarena.thresholds import estimate_threshold

EXACT = {"name": "exact", "params": {"max_repeats": 8}}


def study(samples, rates, models=("bit_flip",)):
    return {"title": "threshold test", "seed": 99, "samples": samples,
            "codes": [{"family": "surface", "lattices": ["square"], "sizes": [3, 5]}],
            "noise": [{"model": m, "rates": rates} for m in models],
            "strategies": [EXACT], "reference": {"strategy": "exact", "params": {"max_repeats": 8}}}


@pytest.fixture(scope="module")
def two_rates_db(catalog, tmp_path_factory):
    """p = 0.03 (2500 instances per size: few failures, so many draws) and p = 0.2 (300), one database."""
    db = tmp_path_factory.mktemp("thr") / "two.db"
    for samples, rate in ((2500, 0.03), (300, 0.2)):
        run_study(parse_study(study(samples, [rate]), catalog), Store(str(db)), catalog, workers=2, progress=None)
    return db


def one_sided_z(k_small: int, n_small: int, k_large: int, n_large: int) -> float:
    """Two-proportion z statistic of (rate at the smaller size - rate at the larger size), unpooled."""
    a, b = k_small / n_small, k_large / n_large
    return (a - b) / np.sqrt(a * (1 - a) / n_small + b * (1 - b) / n_large)


def test_failure_rate_falls_with_size_below_threshold_and_rises_above(two_rates_db):
    """One-sided two-proportion z-tests at 99% (z > 2.33), a textbook test (common practice)."""
    (fam,) = curve_families(Store(str(two_rates_db)))
    assert fam.sizes == [3, 5] and fam.rates == [0.03, 0.2]
    (k3_low, k3_high), (k5_low, k5_high) = fam.failures
    (n3_low, n3_high), (n5_low, n5_high) = fam.trials
    assert (n3_low, n5_low, n3_high, n5_high) == (2500, 2500, 300, 300)
    below = one_sided_z(k3_low, n3_low, k5_low, n5_low)
    above = one_sided_z(k5_high, n5_high, k3_high, n3_high)
    assert below > 2.33, f"p = 0.03: d = 5 must fail less than d = 3 ({k5_low} vs {k3_low} of 2500)"
    assert above > 2.33, f"p = 0.2: d = 5 must fail more than d = 3 ({k5_high} vs {k3_high} of 300)"


def test_counts_equal_the_database(two_rates_db):
    with sqlite3.connect(str(two_rates_db)) as con:
        rows = con.execute("SELECT p.size, p.rate, SUM(r.logical_failure), COUNT(*) FROM results r JOIN points p "
                           "ON p.id = r.point_id WHERE r.status = 'ok' GROUP BY p.id").fetchall()
    (fam,) = curve_families(Store(str(two_rates_db)))
    for size, rate, failures, trials in rows:
        i, j = fam.sizes.index(size), fam.rates.index(rate)
        assert (fam.failures[i, j], fam.trials[i, j]) == (failures, trials)


def test_threshold_report_matches_a_direct_estimate_and_sums_entropies(catalog, tmp_path):
    db = tmp_path / "three.db"
    data = study(60, [0.06, 0.11, 0.16], models=("bit_flip", "phase_flip"))
    store = Store(str(db))
    run_study(parse_study(data, catalog), store, catalog, workers=2, progress=None)
    path = write_threshold_report(store, tmp_path / "out", resamples=20, seed=1)
    text = path.read_text()
    with sqlite3.connect(str(db)) as con:
        rows = con.execute("SELECT p.size, p.rate, SUM(r.logical_failure), COUNT(*) FROM results r JOIN points p "
                           "ON p.id = r.point_id WHERE p.model = 'bit_flip' GROUP BY p.id "
                           "ORDER BY p.size, p.rate").fetchall()
    failures = np.array([r[2] for r in rows]).reshape(2, 3)
    direct = estimate_threshold([3, 5], [0.06, 0.11, 0.16], failures, 60, resamples=20, seed=1)
    assert f"| {direct.fit.p_c:.4f} | [{direct.p_c_interval[0]:.4f}, {direct.p_c_interval[1]:.4f}] |" in text
    assert "entropy sum against the zero-rate hashing bound" in text
    assert sorted(p.name for p in path.parent.glob("*.png")) == [
        "threshold-surface-square-bit_flip-exact_max_repeats_8_.png",
        "threshold-surface-square-phase_flip-exact_max_repeats_8_.png"]


def test_binary_entropy_against_closed_form():
    """H2(1/2) = 1 bit; H2(p) = H2(1 - p); H2(0.11) ~ 0.4999 (REFERENCES 5: self-dual point p ~ 0.110)."""
    assert binary_entropy(0.5) == pytest.approx(1.0)
    assert binary_entropy(0.2) == pytest.approx(binary_entropy(0.8))
    assert binary_entropy(0.11) == pytest.approx(0.5, abs=2e-3)
    assert binary_entropy(0.0) == binary_entropy(1.0) == 0.0
