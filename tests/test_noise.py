"""Noise models: closed-form tables, sampling frequencies, and refusals."""

import numpy as np
import pytest

from tnarena import noise
from tnarena.errors import TnarenaError


def test_depolarizing_row_is_textbook():
    """Depolarizing channel: X, Y, Z each with p/3 (textbook definition, common practice)."""
    t = noise.depolarizing(3, 0.3)
    assert np.allclose(t, [[0.7, 0.1, 0.1, 0.1]] * 3)


def test_biased_has_requested_eta():
    """Bias eta = p_Z / (p_X + p_Y) with p_X = p_Y and total rate p (definition in the issue)."""
    t = noise.biased(1, 0.12, eta=10.0)[0]
    assert t[1:].sum() == pytest.approx(0.12)
    assert t[3] / (t[1] + t[2]) == pytest.approx(10.0)
    assert t[1] == pytest.approx(t[2])
    assert np.allclose(noise.biased(1, 0.3, eta=0.5), noise.depolarizing(1, 0.3))


def test_independent_xz_is_a_product_channel():
    """Independent flips: P(Y) = p_x p_z and P(I) = (1-p_x)(1-p_z) (probability of independent events)."""
    t = noise.independent_xz(1, 0.1, z_rate=0.2)[0]
    assert np.allclose(t, [0.9 * 0.8, 0.1 * 0.8, 0.1 * 0.2, 0.9 * 0.2])


def test_inhomogeneous_is_seeded_and_centred():
    a = noise.inhomogeneous(2000, 0.1, seed=4, spread=0.5)
    b = noise.inhomogeneous(2000, 0.1, seed=4, spread=0.5)
    c = noise.inhomogeneous(2000, 0.1, seed=5, spread=0.5)
    assert np.array_equal(a, b) and not np.array_equal(a, c)
    rates = 1 - a[:, 0]
    assert rates.min() >= 0.05 - 1e-12 and rates.max() <= 0.15 + 1e-12
    assert rates.mean() == pytest.approx(0.1, abs=0.003)  # uniform mean, 5 sigma of 2000 draws


def test_sampling_frequencies_match_the_table():
    """Empirical frequencies within 5 binomial standard deviations (law of large numbers)."""
    t = np.array([[0.6, 0.2, 0.15, 0.05]] * 4)
    errs = noise.sample_errors(t, np.random.default_rng(0), shots=20000)
    x, z = errs[:, :4], errs[:, 4:]
    freq = [((x == 0) & (z == 0)).mean(), ((x == 1) & (z == 0)).mean(), (x & z).mean(), ((x == 0) & (z == 1)).mean()]
    sigma = np.sqrt(t[0] * (1 - t[0]) / 80000)
    assert np.all(np.abs(np.array(freq) - t[0]) < 5 * sigma)


def test_sampling_is_reproducible():
    t = noise.depolarizing(10, 0.2)
    a = noise.sample_errors(t, np.random.default_rng(3), shots=5)
    b = noise.sample_errors(t, np.random.default_rng(3), shots=5)
    assert np.array_equal(a, b)


@pytest.mark.parametrize(
    "table, message",
    [
        ([[0.5, 0.5, 0.1, 0.0]], "sum to 1.1"),
        ([[1.2, -0.2, 0.0, 0.0]], "outside [0, 1]"),
        ([[np.nan, 0.5, 0.5, 0.0]], "NaN"),
        ([[1.0, 0.0, 0.0]], "expected (n, 4)"),
    ],
)
def test_bad_tables_are_refused(table, message):
    with pytest.raises(TnarenaError, match=message.replace("(", r"\(").replace(")", r"\)").replace("[", r"\[").replace("]", r"\]")):
        noise.validate_table(table)


@pytest.mark.parametrize("rate", [-0.1, 1.5, float("nan")])
def test_bad_rates_are_refused(rate):
    with pytest.raises(TnarenaError, match="outside \\[0, 1\\]"):
        noise.depolarizing(3, rate)


def test_unknown_model_and_option_are_named():
    with pytest.raises(TnarenaError, match="noise model 'gaussian' is unknown; known models: bit_flip"):
        noise.make_noise("gaussian", 3, 0.1)
    with pytest.raises(TnarenaError, match="has no option 'beta'; its options are: eta"):
        noise.make_noise("biased", 3, 0.1, beta=2)
