"""Thresholds: Wilson rates, crossings, the scaling fit and its bootstrap, chi convergence, plots.

Truths (p_c, nu, A, B, C) are set here, and the data drawn from them; crossing
values are worked out by hand in the docstrings.
"""

import math

import numpy as np
import pytest
from scipy.stats import binomtest
from tnarena.errors import TnarenaError
from tnarena.thresholds import (
    chi_convergence,
    chi_table,
    estimate_threshold,
    failure_rates,
    fit_scaling,
    pairwise_crossings,
)
from tnarena.thresholds.scaling import standard_errors

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
# Truth of the synthetic scaling data (set by the tests, not by the code under test).
P_C, NU, A, B, C = 0.105, 1.4, 0.25, 1.2, 0.5
SIZES = np.array([5, 9, 13, 17])
RATES = np.linspace(0.095, 0.115, 9)


def scaling_truth(sizes, rates):
    """f = A + B x + C x^2, x = (p - p_c) d^(1/nu) (a standard method), clipped to [0, 1]; shape (S, R)."""
    x = (np.asarray(rates)[None, :] - P_C) * np.asarray(sizes, dtype=float)[:, None] ** (1 / NU)
    return np.clip(A + B * x + C * x * x, 0, 1)


# ---- failure rates --------------------------------------------------------------------------------
def test_wilson_bounds_match_scipy():
    """Wilson score interval against scipy.stats.binomtest(k, n).proportion_ci(method='wilson') (outside reference)."""
    failures = np.array([[0, 3, 20], [1, 137, 999]])
    trials = np.array([[20, 20, 20], [1000, 1000, 1000]])
    points = failure_rates([3, 5], [0.05, 0.1, 0.2], failures, trials)
    assert len(points) == 6
    for q in points:
        ci = binomtest(q.failures, q.trials).proportion_ci(confidence_level=0.95, method="wilson")
        assert q.failure_rate == q.failures / q.trials
        assert q.low == pytest.approx(ci.low, abs=1e-12)
        assert q.high == pytest.approx(ci.high, abs=1e-12)


def test_failure_rates_sort_sizes_and_rates_with_their_counts():
    """Unsorted axes are sorted and the counts move with them (by hand: size 3 at rate 0.1 has 2 of 10)."""
    points = failure_rates([5, 3], [0.2, 0.1], [[8, 4], [6, 2]], 10)
    assert [(q.size, q.rate, q.failures) for q in points] == [(3, 0.1, 2), (3, 0.2, 6), (5, 0.1, 4), (5, 0.2, 8)]


def test_zero_failures_get_a_finite_standard_error():
    """The fit's weights: binomial standard error sqrt(f(1-f)/n), floored at 1/n (k = 0 gives 1/n, not 0)."""
    se = standard_errors(np.array([0, 5]), np.array([100, 100]))
    assert se[0] == pytest.approx(0.01)
    assert se[1] == pytest.approx(math.sqrt(0.05 * 0.95 / 100))


# ---- bad input ------------------------------------------------------------------------------------
def test_fit_with_one_size_says_to_add_sizes():
    with pytest.raises(TnarenaError, match="at least 2 sizes, got 1"):
        fit_scaling([5], RATES, np.zeros((1, 9), int), 100)


def test_fit_with_two_rates_says_to_add_rates():
    with pytest.raises(TnarenaError, match="at least 3 rates, got 2"):
        fit_scaling(SIZES, [0.1, 0.11], np.zeros((4, 2), int), 100)


def test_mismatched_shapes_name_both_shapes():
    with pytest.raises(TnarenaError, match=r"failures has shape \(9, 4\) but sizes and rates ask for \(4, 9\)"):
        failure_rates(SIZES, RATES, np.zeros((9, 4), int), 100)


def test_zero_trials_names_the_point():
    trials = np.full((4, 9), 100)
    trials[2, 3] = 0
    with pytest.raises(TnarenaError, match=r"trials is 0 at size 13, rate 0.1025"):
        failure_rates(SIZES, RATES, np.zeros((4, 9), int), trials)


def test_more_failures_than_trials_is_refused():
    with pytest.raises(TnarenaError, match="failures = 11 of 10 trials"):
        failure_rates([3], [0.1], [[11]], [[10]])


# ---- crossings ------------------------------------------------------------------------------------
def test_crossings_on_hand_made_curves():
    """By hand: size 5 fails at 0.20, 0.30, 0.40 and size 9 at 0.10, 0.28, 0.46 (rates 0.08, 0.10, 0.12):
    the difference -0.02 -> +0.06 turns positive between 0.10 and 0.12, at 0.10 + 0.02 * 0.02 / 0.08 = 0.105.
    Size 13 (0.05, 0.10, 0.20) stays below size 9: no crossing (common practice: REFERENCES 12)."""
    failures = np.array([[20, 30, 40], [10, 28, 46], [5, 10, 20]])
    found = pairwise_crossings([5, 9, 13], [0.08, 0.10, 0.12], failures, 100)
    assert [(c.smaller, c.larger) for c in found] == [(5, 9), (9, 13)]
    assert found[0].rate == pytest.approx(0.105, abs=1e-12)
    assert found[1].rate is None


def test_noiseless_scaling_curves_cross_at_the_threshold():
    """All sizes of the scaling form meet at p = p_c (x = 0); p_c = 0.105 is a grid rate here."""
    trials = 10**12
    failures = np.round(scaling_truth(SIZES, RATES) * trials)
    for c in pairwise_crossings(SIZES, RATES, failures, trials):
        assert c.rate == pytest.approx(P_C, abs=1e-9)


# ---- scaling fit and bootstrap --------------------------------------------------------------------
def test_fit_recovers_the_truth_from_noiseless_data():
    """Counts rounded from 10^12 trials: the fit lands on the truth set above."""
    trials = 10**12
    fit = fit_scaling(SIZES, RATES, np.round(scaling_truth(SIZES, RATES) * trials), trials, p_c0=0.1)
    assert fit.converged
    assert fit.p_c == pytest.approx(P_C, abs=1e-7)
    assert fit.nu == pytest.approx(NU, abs=1e-4)
    assert (fit.A, fit.B, fit.C) == pytest.approx((A, B, C), abs=1e-3)


def test_fit_and_bootstrap_recover_p_c_and_nu_from_binomial_data():
    """20000 binomial trials per point from the truth (seeded): the bootstrap intervals cover p_c = 0.105
    and nu = 1.4, the fit is within three bootstrap widths of p_c, and chi^2/dof is near 1 (31 dof)."""
    trials = 20000
    failures = np.random.default_rng(20240605).binomial(trials, scaling_truth(SIZES, RATES))
    est = estimate_threshold(SIZES, RATES, failures, trials, resamples=200, seed=7)
    lo, hi = est.p_c_interval
    assert lo <= P_C <= hi
    assert abs(est.fit.p_c - P_C) < 3 * (hi - lo)
    assert hi - lo < 0.005
    assert est.nu_interval[0] <= NU <= est.nu_interval[1]
    assert est.fit.dof == 4 * 9 - 5
    assert 0.5 < est.fit.chi2_dof < 2.0
    assert est.p_c_samples.shape == (200,)


def test_bootstrap_is_reproducible_from_its_seed():
    trials = 2000
    failures = np.random.default_rng(3).binomial(trials, scaling_truth(SIZES, RATES))
    first = estimate_threshold(SIZES, RATES, failures, trials, resamples=10, seed=11)
    again = estimate_threshold(SIZES, RATES, failures, trials, resamples=10, seed=11)
    other = estimate_threshold(SIZES, RATES, failures, trials, resamples=10, seed=12)
    np.testing.assert_array_equal(first.p_c_samples, again.p_c_samples)
    assert not np.array_equal(first.p_c_samples, other.p_c_samples)


def test_bootstrap_with_too_few_resamples_is_refused():
    with pytest.raises(TnarenaError, match="resamples = 3 is too few"):
        estimate_threshold(SIZES, RATES, np.zeros((4, 9), int), 100, resamples=3)


# ---- convergence in chi ---------------------------------------------------------------------------
def test_chi_convergence_flags_each_step():
    """By hand: 0.100 -> 0.108 moves by 0.008, outside +-0.002; 0.108 -> 0.1085 moves by 0.0005, inside."""
    steps = chi_convergence([16, 4, 8], [0.1085, 0.100, 0.108],
                            [[0.1065, 0.1105], [0.098, 0.102], [0.106, 0.110]])
    assert [s.chi for s in steps] == [4, 8, 16]
    assert [s.converged for s in steps] == [None, False, True]
    assert steps[1].change == pytest.approx(0.008)
    table = chi_table(steps)
    assert table.splitlines()[-1] == "| 16 | 0.10850 | [0.10650, 0.11050] | +0.00050 | yes |"


def test_chi_convergence_needs_two_chis():
    with pytest.raises(TnarenaError, match="at least 2 distinct chi values"):
        chi_convergence([8], [0.1], [[0.09, 0.11]])


# ---- plots ----------------------------------------------------------------------------------------
def test_plots_write_png_files(tmp_path):
    """PNG signature (RFC 2083, section 3.1) of the threshold figure and the chi figure."""
    from tnarena.thresholds.plots import plot_chi_convergence, plot_threshold

    trials = 2000
    failures = np.random.default_rng(5).binomial(trials, scaling_truth(SIZES, RATES))
    est = estimate_threshold(SIZES, RATES, failures, trials, resamples=10, seed=1)
    steps = chi_convergence([4, 8], [0.104, 0.1045], [[0.102, 0.106], [0.1025, 0.1065]])
    for path in (plot_threshold(est, tmp_path / "thr.png"), plot_chi_convergence(steps, tmp_path / "chi.png")):
        assert path.read_bytes()[:8] == PNG_SIGNATURE
