"""Maximum-likelihood decoding: class log-probabilities, decision, outcome.

:class:`Decoder` ties a code, a noise table and one strategy setting
together. It builds the network structure once, plans once, and for each
syndrome finds a pure error by GF(2) linear algebra, evaluates
ln P(E_s L G) for every logical class L that can be non-zero, and picks the
largest.
"""

from __future__ import annotations

import itertools
import math
import time
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from tnarena.codes.core import PauliCode
from tnarena.errors import PluginError, TnarenaError
from tnarena.network.builder import NetworkBuilder, _LinearSolver
from tnarena.pauli import symplectic_products
from tnarena.strategy import Strategy

_K1_LABELS = {(0, 0): "I", (1, 0): "X", (1, 1): "Y", (0, 1): "Z"}


def class_label(cls: tuple[int, ...]) -> str:
    """'I', 'X', 'Y', 'Z' for k = 1; a product such as 'X0 Z1' (or 'I') otherwise."""
    if len(cls) == 2:
        return _K1_LABELS[cls]
    parts = [_K1_LABELS[(cls[2 * i], cls[2 * i + 1])] + str(i) for i in range(len(cls) // 2)]
    parts = [p for p in parts if not p.startswith("I")]
    return " ".join(parts) or "I"


def logical_classes(k: int) -> list[tuple[int, ...]]:
    """All 4^k classes as (a_1, b_1, ..., a_k, b_k), identity first (I, X, Y, Z for k = 1)."""
    if k == 1:
        return [(0, 0), (1, 0), (1, 1), (0, 1)]
    return [tuple(c) for c in itertools.product((0, 1), repeat=2 * k)]


def relative_class(code: PauliCode, error: np.ndarray, pure: np.ndarray) -> tuple[int, ...]:
    """Logical class (a_1, b_1, ...) of ``error`` relative to ``pure`` (both shape (2n,)).

    a_i is the symplectic product with ``logicals[i, 1]`` and b_i with ``logicals[i, 0]``,
    the order of :func:`logical_classes`.
    """
    row = relative_classes(code, np.reshape(error, (1, -1)), np.reshape(pure, (1, -1)))[0]
    return tuple(int(b) for b in row)


def relative_classes(code: PauliCode, errors: np.ndarray, pures: np.ndarray) -> np.ndarray:
    """Row i: the class of ``errors[i]`` relative to ``pures[i]`` (both shape (B, 2n)); shape (B, 2k)."""
    diff = np.asarray(errors, dtype=np.uint8) ^ np.asarray(pures, dtype=np.uint8)
    rows = code.logicals[:, ::-1].reshape(-1, 2 * code.n)
    return symplectic_products(diff, rows)


@dataclass
class ClassResult:
    """One logical class: its label, ln P (natural log; -inf when impossible) and stats."""

    cls: tuple[int, ...]
    label: str
    log_prob: float
    stats: dict[str, float] = field(default_factory=dict)
    seconds: float = 0.0


@dataclass
class DecodeResult:
    """The outcome of decoding one syndrome (and, for a sampled error, whether it failed)."""

    syndrome: np.ndarray
    classes: list[ClassResult]
    decision: tuple[int, ...]
    true_class: tuple[int, ...] | None = None
    plan_seconds: float = 0.0

    @property
    def failed(self) -> bool | None:
        return None if self.true_class is None else self.decision != self.true_class

    def posterior(self) -> dict[str, float]:
        """P(class | syndrome) for every class, normalised over the classes."""
        logs = np.array([c.log_prob for c in self.classes])
        top = logs.max()
        weights = np.exp(logs - top)
        weights /= weights.sum()
        return {c.label: float(w) for c, w in zip(self.classes, weights)}


class SyndromeSolver:
    """Pure errors from syndromes: one GF(2) elimination of the stabilizer matrix, reused."""

    def __init__(self, code: PauliCode) -> None:
        self.code = code
        self._solver = _LinearSolver(code.syndrome_matrix)  # the syndrome is linear in E = [x | z]

    def pure_error(self, syndrome: np.ndarray) -> np.ndarray:
        """An error (shape (2n,)) with the given syndrome (shape (s,), 0/1)."""
        s = np.asarray(syndrome).reshape(-1)
        expected = self.code.stabilizers.shape[0]
        if s.size != expected:
            raise TnarenaError(
                f"the syndrome has {s.size} bits but the code has {expected} stabilizer generators."
            )
        return self.pure_errors(s[None, :])[0]

    def pure_errors(self, syndromes: np.ndarray) -> np.ndarray:
        """Row i: an error with syndrome ``syndromes[i]``; shape (B, s) of 0/1 -> (B, 2n)."""
        s = np.asarray(syndromes)
        expected = self.code.stabilizers.shape[0]
        if s.ndim != 2 or s.shape[1] != expected:
            raise TnarenaError(
                f"the syndromes have shape {s.shape}; the code needs (B, {expected}): one row of "
                "bits per syndrome, one bit per stabilizer generator."
            )
        if not np.isin(s, (0, 1)).all():
            raise TnarenaError("a syndrome holds only 0 and 1.")
        errors, solvable = self._solver.solve_many(s.astype(np.uint8))
        if not solvable.all():
            raise TnarenaError(
                "no Pauli error has this syndrome (the stabilizer generators are dependent "
                "and the syndrome breaks a relation between them); check the syndrome"
                + ("." if s.shape[0] == 1 else f" in row {int(np.argmin(solvable))}.")
            )
        return errors


class Decoder:
    """ML decoder for one code, noise table and strategy setting.

    Parameters
    ----------
    code : PauliCode
    noise : ndarray, shape (n, 4)
    strategy : Strategy
    params : dict, optional
        Strategy parameters (validated; missing ones take their defaults).
    plan : optional
        A plan this strategy made earlier for the same structure and params
        (e.g. in another process); planned here when None.
    """

    def __init__(self, code: PauliCode, noise: np.ndarray, strategy: Strategy, params: dict | None = None,
                 *, plan: Any = None) -> None:
        self.code = code
        self.strategy = strategy
        self.params = strategy.resolve(params)
        self.builder = NetworkBuilder(code, noise)
        self.syndromes = SyndromeSolver(code)
        start = time.perf_counter()
        self.plan = plan if plan is not None else _call(strategy, "plan", self.builder.structure, self.params)
        self.plan_seconds = time.perf_counter() - start

    def pure_error(self, syndrome: np.ndarray) -> np.ndarray:
        """An error (shape (2n,)) with the given syndrome (shape (s,), 0/1)."""
        return self.syndromes.pure_error(syndrome)

    def true_class(self, error: np.ndarray, pure: np.ndarray) -> tuple[int, ...]:
        """Logical class of ``error`` relative to the pure error of its syndrome."""
        return relative_class(self.code, error, pure)

    def decode_syndrome(self, syndrome: np.ndarray) -> DecodeResult:
        pure = self.pure_error(syndrome)
        return self._decode(np.asarray(syndrome).reshape(-1), pure, None)

    def decode_error(self, error: np.ndarray) -> DecodeResult:
        """Decode the syndrome of a known error and record whether the decision is wrong."""
        error = self.code.error_vector(error)
        syndrome = self.code.syndrome(error)
        pure = self.pure_error(syndrome)
        return self._decode(syndrome, pure, self.true_class(error, pure))

    def decode_errors(self, errors: np.ndarray) -> list[DecodeResult]:
        """Decode many known errors (shape (B, 2n)) in one batched contraction of all their classes.

        Syndromes, pure errors, true classes and networks are computed for the whole
        batch at once; the possible classes of every error go to the strategy's
        ``contract_batch`` as one :class:`~tnarena.network.NetworkBatch` (a loop for
        strategies without one). Each class's ``seconds`` is the batch's contraction
        time divided by the number of networks contracted (amortised).
        """
        code, count = self.code, len(errors)
        if count == 0:
            return []
        errors = np.asarray(errors, dtype=np.uint8).reshape(count, -1)
        syndromes = code.syndromes(errors)
        pures = self.syndromes.pure_errors(syndromes)
        true_classes = relative_classes(code, errors, pures)
        classes = logical_classes(code.k)
        # class-major: element c * B + b is error b in class c, the impossible ones left out
        bases = np.concatenate([pures ^ code.logical_operator(cls) for cls in classes])
        networks, possible = self.builder.network_batch(bases, None)
        start = time.perf_counter()
        estimates = _call(self.strategy, "contract_batch", self.plan, networks) if len(networks) else []
        each = (time.perf_counter() - start) / max(len(networks), 1)
        if len(estimates) != len(networks):
            raise PluginError(
                f"strategy {self.strategy.name!r} returned {len(estimates)} estimates from contract_batch() "
                f"for {len(networks)} networks; it must return one per network, in order."
            )
        found = np.flatnonzero(possible)
        log_probs = np.full(possible.size, -math.inf)
        log_probs[found] = np.array([est.log_value for est in estimates], dtype=float) + networks.log_scales
        stats: list[dict | None] = [None] * possible.size
        for at, est in zip(found, estimates):
            stats[at] = est.stats
        labels = [class_label(cls) for cls in classes]
        results = []
        for b in range(count):
            out = []
            for c, cls in enumerate(classes):
                got = stats[c * count + b]
                out.append(ClassResult(cls, labels[c], float(log_probs[c * count + b]),
                                       {} if got is None else dict(got), 0.0 if got is None else each))
            best = max(out, key=lambda r: r.log_prob)
            results.append(DecodeResult(syndromes[b], out, best.cls, tuple(int(v) for v in true_classes[b]),
                                        self.plan_seconds))
        return results

    def class_log_probs(self, pure: np.ndarray) -> list[ClassResult]:
        results = []
        for cls in logical_classes(self.code.k):
            network = self.builder.network(pure, cls)
            start = time.perf_counter()
            if network.is_zero:
                log_prob, stats = -math.inf, {}
            else:
                estimate = _call(self.strategy, "contract", self.plan, network)
                log_prob, stats = estimate.log_value + network.log_scale, dict(estimate.stats)
            results.append(ClassResult(cls, class_label(cls), log_prob, stats, time.perf_counter() - start))
        return results

    def _decode(self, syndrome, pure, true_cls) -> DecodeResult:
        classes = self.class_log_probs(pure)
        best = max(classes, key=lambda c: c.log_prob)
        return DecodeResult(syndrome, classes, best.cls, true_cls, self.plan_seconds)


def _call(strategy: Strategy, method: str, *args: Any) -> Any:
    """Call a strategy method; user errors pass through, anything else names the strategy."""
    try:
        return getattr(strategy, method)(*args)
    except TnarenaError:
        raise
    except Exception as exc:
        raise PluginError(
            f"strategy {strategy.name!r} raised {type(exc).__name__} in {method}(): {exc}"
        ) from exc
