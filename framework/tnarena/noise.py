"""Per-qubit Pauli noise: an (n, 4) table of probabilities in the order I, X, Y, Z.

Every named model is a function ``(n, rate, *, seed, **options) -> table``;
:data:`NOISE_MODELS` lists them. :func:`validate_table` refuses bad tables
and :func:`sample_errors` draws symplectic errors with numpy's Generator.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from tnarena.errors import TnarenaError

#: Probabilities summing to 1 within this tolerance are accepted.
SUM_TOLERANCE = 1e-9


def validate_table(table: Any, n: int | None = None) -> np.ndarray:
    """Check and return a noise table as a float array of shape (n, 4).

    Refuses NaN or infinite entries, entries outside [0, 1], rows that do not
    sum to 1 (within 1e-9) and a qubit count that differs from ``n``.
    """
    arr = np.array(table, dtype=float)
    if arr.ndim != 2 or arr.shape[1] != 4:
        raise TnarenaError(
            f"a noise table has shape {arr.shape}; expected (n, 4) with columns I, X, Y, Z."
        )
    if n is not None and arr.shape[0] != n:
        raise TnarenaError(f"the noise table has {arr.shape[0]} rows but the code has {n} qubits.")
    if not np.isfinite(arr).all():
        q = int(np.argwhere(~np.isfinite(arr))[0, 0])
        raise TnarenaError(f"the noise table row for qubit {q} holds NaN or infinity; give numbers.")
    if (arr < 0).any() or (arr > 1).any():
        q, c = np.argwhere((arr < 0) | (arr > 1))[0]
        raise TnarenaError(
            f"noise probability {arr[q, c]:g} for qubit {q}, Pauli {'IXYZ'[c]}, is outside [0, 1]."
        )
    sums = arr.sum(axis=1)
    bad = np.flatnonzero(np.abs(sums - 1.0) > SUM_TOLERANCE)
    if bad.size:
        q = int(bad[0])
        raise TnarenaError(
            f"the noise probabilities of qubit {q} sum to {sums[q]:.12g}; each row must sum to 1."
        )
    return arr


def _check_rate(rate: float, what: str = "rate") -> float:
    try:
        value = float(rate)
    except (TypeError, ValueError):
        raise TnarenaError(f"the {what} {rate!r} is not a number; give a value in [0, 1].") from None
    if not (0.0 <= value <= 1.0) or math.isnan(value):
        raise TnarenaError(f"the {what} {value:g} is outside [0, 1]; give a probability.")
    return value


def _rows(n: int, row: list[float]) -> np.ndarray:
    return validate_table(np.tile(np.asarray(row, dtype=float), (n, 1)))


def bit_flip(n: int, rate: float, *, seed: int = 0) -> np.ndarray:
    """X with probability ``rate`` on every qubit."""
    p = _check_rate(rate)
    return _rows(n, [1 - p, p, 0.0, 0.0])


def phase_flip(n: int, rate: float, *, seed: int = 0) -> np.ndarray:
    """Z with probability ``rate`` on every qubit."""
    p = _check_rate(rate)
    return _rows(n, [1 - p, 0.0, 0.0, p])


def depolarizing(n: int, rate: float, *, seed: int = 0) -> np.ndarray:
    """X, Y, Z each with probability ``rate / 3``."""
    p = _check_rate(rate)
    return _rows(n, [1 - p, p / 3, p / 3, p / 3])


def biased(n: int, rate: float, *, seed: int = 0, eta: float = 10.0) -> np.ndarray:
    """Z-biased Pauli noise: total rate ``rate``, bias eta = p_Z / (p_X + p_Y), p_X = p_Y.

    eta = 0.5 is depolarizing; eta = inf is pure dephasing.
    """
    p = _check_rate(rate)
    eta = float(eta)
    if not eta >= 0 or math.isnan(eta):
        raise TnarenaError(f"the bias eta = {eta:g} must be >= 0 (inf allowed).")
    if math.isinf(eta):
        return _rows(n, [1 - p, 0.0, 0.0, p])
    pz = p * eta / (1 + eta)
    px = py = p / (2 * (1 + eta))
    return _rows(n, [1 - p, px, py, pz])


def independent_xz(n: int, rate: float, *, seed: int = 0, z_rate: float | None = None) -> np.ndarray:
    """Independent X flips (probability ``rate``) and Z flips (``z_rate``, default ``rate``)."""
    px = _check_rate(rate)
    pz = px if z_rate is None else _check_rate(z_rate, "z_rate")
    return _rows(n, [(1 - px) * (1 - pz), px * (1 - pz), px * pz, (1 - px) * pz])


def inhomogeneous(
    n: int, rate: float, *, seed: int = 0, spread: float = 0.5, channel: str = "depolarizing"
) -> np.ndarray:
    """Per-qubit rates drawn uniformly from [rate (1 - spread), rate (1 + spread)].

    The mean rate is ``rate``; ``channel`` (any other named model taking only a
    rate) sets the Pauli mix on each qubit. Rates are drawn from
    ``numpy.random.default_rng(seed)``.
    """
    p = _check_rate(rate)
    spread = float(spread)
    if not 0.0 <= spread <= 1.0:
        raise TnarenaError(f"the spread {spread:g} must lie in [0, 1].")
    if channel == "inhomogeneous" or channel not in NOISE_MODELS:
        known = ", ".join(k for k in NOISE_MODELS if k not in ("inhomogeneous", "table"))
        raise TnarenaError(f"the inhomogeneous channel {channel!r} is unknown; use one of: {known}.")
    rates = np.random.default_rng(seed).uniform(p * (1 - spread), p * (1 + spread), size=n)
    if (rates > 1).any():
        raise TnarenaError(
            f"rate {p:g} with spread {spread:g} draws rates above 1; lower the rate or the spread."
        )
    build = NOISE_MODELS[channel].build
    return validate_table(np.vstack([build(1, r) for r in rates]))


def user_table(n: int, rate: float = 0.0, *, seed: int = 0, table: Any = None) -> np.ndarray:
    """A table the user supplies (``table``: array-like (n, 4)); ``rate`` is ignored."""
    if table is None:
        raise TnarenaError("the 'table' noise model needs a table: an (n, 4) array of I, X, Y, Z.")
    return validate_table(table, n)


@dataclass(frozen=True)
class NoiseModel:
    """A named noise model: ``build(n, rate, seed=..., **options) -> (n, 4) table``."""

    name: str
    summary: str
    build: Callable[..., np.ndarray]
    options: dict[str, Any] = field(default_factory=dict)


NOISE_MODELS: dict[str, NoiseModel] = {
    m.name: m
    for m in (
        NoiseModel("bit_flip", "X with probability p", bit_flip),
        NoiseModel("phase_flip", "Z with probability p", phase_flip),
        NoiseModel("depolarizing", "X, Y, Z each with probability p/3", depolarizing),
        NoiseModel("biased", "Z-biased: p_Z/(p_X+p_Y) = eta", biased, {"eta": 10.0}),
        NoiseModel(
            "independent_xz", "independent X (p) and Z (z_rate) flips", independent_xz, {"z_rate": None}
        ),
        NoiseModel(
            "inhomogeneous",
            "per-qubit rates uniform in p(1 +- spread)",
            inhomogeneous,
            {"spread": 0.5, "channel": "depolarizing"},
        ),
        NoiseModel("table", "a per-qubit (n, 4) table the user supplies", user_table, {"table": None}),
    )
}


def make_noise(name: str, n: int, rate: float, *, seed: int = 0, **options: Any) -> np.ndarray:
    """Table of the named model; unknown names and options are refused clearly."""
    if name not in NOISE_MODELS:
        raise TnarenaError(f"noise model {name!r} is unknown; known models: {', '.join(NOISE_MODELS)}.")
    model = NOISE_MODELS[name]
    unknown = sorted(set(options) - set(model.options))
    if unknown:
        allowed = ", ".join(model.options) or "none"
        raise TnarenaError(
            f"noise model {name!r} has no option {unknown[0]!r}; its options are: {allowed}."
        )
    return model.build(n, rate, seed=seed, **options)


def sample_errors(table: np.ndarray, rng: np.random.Generator, shots: int | None = None) -> np.ndarray:
    """Draw Pauli errors from a noise table.

    table : (n, 4); rng : numpy Generator. Returns symplectic errors of shape
    (2n,) when ``shots`` is None, else (shots, 2n), uint8.
    """
    table = validate_table(table)
    n = table.shape[0]
    count = 1 if shots is None else int(shots)
    cdf = np.cumsum(table, axis=1)[:, :3]
    u = rng.random((count, n))
    col = (u[:, :, None] >= cdf[None, :, :]).sum(axis=2)
    x = ((col == 1) | (col == 2)).astype(np.uint8)
    z = ((col == 2) | (col == 3)).astype(np.uint8)
    out = np.concatenate([x, z], axis=1)
    return out[0] if shots is None else out
