"""What runs inside a worker process: decode one instance with one setting, measure it.

A :class:`Chunk` is work on one (point, setting): either making its plan
(once per study: the pickled plan goes to the store and to every worker, so
every instance is contracted with the same plan, whatever the number of
workers), or decoding a run of instances with that plan. The worker builds
the code, noise table and decoder once per chunk's point and setting, keeps
them for later chunks, and reports one row per unit (columns of
:data:`tnarena.arena.store.RESULT_COLUMNS`).
"""

from __future__ import annotations

import json
import math
import os
import pickle
import time
import tracemalloc
from collections import OrderedDict
from contextlib import nullcontext
from dataclasses import dataclass
from typing import Any

import numpy as np

from tnarena.arena.profiler import Sampler
from tnarena.arena.seeds import instance_rng, integer_seed
from tnarena.arena.study import AUTO_OPTIONS, Point, Setting
from tnarena.baselines import baseline
from tnarena.catalog import Catalog
from tnarena.decode import Decoder, class_label
from tnarena.errors import PluginError, TnarenaError

#: Bytes per element of the strategies' arrays (float64), to turn element counts into bytes.
BYTES_PER_ELEMENT = 8
#: Decoders (each holding a plan) a worker keeps for reuse.
DECODER_CACHE = 8


#: The one unit of a plan chunk (decode chunks hold instance numbers >= 0).
PLAN_UNIT = -1


@dataclass(frozen=True)
class Chunk:
    """Work on one (point, setting). Ids are the database's.

    kind 'plan' : make the plan once (units: (PLAN_UNIT,)); its row carries the pickled plan.
    kind 'decode' : decode these instances with ``plan`` (pickled; None: plan in the worker).
    """

    point: Point
    setting: Setting
    point_id: int
    setting_id: int
    instances: tuple[int, ...]
    seed: int
    trace_memory: int
    kind: str = "decode"
    plan: bytes | None = None
    choice: str | None = None  # automatic settings: the chosen setting (JSON of Choice.to_dict())
    profile: bool = False  # sample where the decode's time goes (tnarena.arena.profiler)


def build_code_and_noise(catalog: Catalog, seed: int, point: Point):
    """The point's code (random lattices seeded by the code) and validated noise table."""
    from tnarena.noise import validate_table

    code = catalog.build_code(point.family, point.lattice, point.size, seed=integer_seed(seed, point.code_key))
    model = catalog.noise_model(point.model)
    try:
        table = model.build(code.n, point.rate, seed=integer_seed(seed, point.key), **dict(point.options))
    except TypeError as exc:
        raise TnarenaError(f"noise model {point.model!r} refused its options: {exc}.") from None
    return code, validate_table(table, code.n)


def sample_instance_error(seed: int, point: Point, instance: int, table: np.ndarray) -> np.ndarray:
    """The error of one instance, shape (2n,): the same for every setting and worker."""
    from tnarena.noise import sample_errors

    return sample_errors(table, instance_rng(seed, point.key, instance))


class TaskRunner:
    """Runs chunks in one process, caching codes and decoders (plans) between them."""

    def __init__(self, catalog: Catalog) -> None:
        self.catalog = catalog
        self._codes: dict[tuple[int, str], Any] = {}
        self._decoders: OrderedDict[tuple[int, str, str], Decoder | TnarenaError] = OrderedDict()
        self._choices: dict[tuple[int, str, str], str] = {}  # automatic settings: the chosen one, JSON

    def run(self, chunk: Chunk, unit: int) -> dict[str, Any]:
        """Plan, or decode one instance; a result row (failures included, never raises)."""
        try:
            decoder, plan_seconds = self._decoder(chunk)
        except TnarenaError as exc:
            return failed_row(f"plan refused: {exc}")
        except MemoryError:
            return failed_row("memory limit exceeded while planning")
        except Exception as exc:  # noqa: BLE001 - a broken strategy must not stop the study
            return failed_row(f"{type(exc).__name__} while planning: {exc}")
        if chunk.kind == "plan":
            plan = getattr(decoder, "plan", None)
            return {"status": "ok", "plan": None if plan is None else _pickled(plan), "plan_seconds": plan_seconds,
                    "choice": self._choices.get(self._key(chunk)), "worker": os.getpid()}
        try:
            return self._decode(chunk, decoder, unit, plan_seconds)
        except Exception as exc:  # noqa: BLE001
            return failed_row(failure_reason(exc))

    def can_batch(self, chunk: Chunk) -> bool:
        """Whether this decode chunk goes through the strategy's batched contraction."""
        if chunk.kind != "decode" or chunk.setting.kind == "baseline" or chunk.profile:
            return False  # (profiles are taken one decode at a time; a batch of one goes the batched way)
        try:
            decoder, _ = self._decoder(chunk)
        except Exception:  # noqa: BLE001 - run() reports it unit by unit
            return False
        return isinstance(decoder, Decoder) and decoder.strategy.batched

    def run_batch(self, chunk: Chunk) -> list[tuple[int, dict[str, Any]]]:
        """Decode every instance of the chunk in one batched contraction; a row per instance."""
        decoder, plan_seconds = self._decoder(chunk)
        _, table = self._code(chunk)
        errors = np.stack([sample_instance_error(chunk.seed, chunk.point, i, table) for i in chunk.instances])
        try:
            start = time.perf_counter()
            results = decoder.decode_errors(errors)
            each = (time.perf_counter() - start) / len(errors)
        except Exception as exc:  # noqa: BLE001 - the batch failed: say why for each instance
            return [(i, failed_row(failure_reason(exc))) for i in chunk.instances]
        rows = []
        for k, (instance, result) in enumerate(zip(chunk.instances, results)):
            row = self._row(result, each, plan_seconds if k == 0 else 0.0, None)
            row["batch"] = len(errors)
            if instance < chunk.trace_memory:
                row["traced_peak_bytes"] = traced_peak(decoder, result)
            rows.append((instance, row))
        return rows

    def _decoder(self, chunk: Chunk) -> tuple[Decoder, float]:
        """The cached decoder and the time spent planning here (0 when the plan came with the chunk)."""
        key = self._key(chunk)
        if key in self._decoders:
            self._decoders.move_to_end(key)
            cached = self._decoders[key]
            if isinstance(cached, TnarenaError):
                raise cached
            return cached, 0.0
        code, table = self._code(chunk)
        if chunk.setting.kind == "baseline":  # built in each worker (no plan to share)
            start = time.perf_counter()
            decoder = baseline(chunk.setting.strategy).build(code, table)
            self._remember(key, decoder)
            return decoder, time.perf_counter() - start
        given = None if chunk.plan is None else pickle.loads(chunk.plan)
        name, params, spent = chunk.setting.strategy, dict(chunk.setting.params), 0.0
        if chunk.setting.kind == "auto":
            self._choices[key], spent = self._choice(chunk, code, table)
            chosen = json.loads(self._choices[key])
            name, params = chosen["strategy"], chosen["params"]
        try:
            decoder = Decoder(code, table, self.catalog.strategy(name), params, plan=given)
        except TnarenaError as exc:
            self._remember(key, exc)
            raise
        self._remember(key, decoder)
        return decoder, spent + (0.0 if given is not None else decoder.plan_seconds)

    def _choice(self, chunk: Chunk, code, table) -> tuple[str, float]:
        """The chooser's setting for this point as JSON (calibrated here unless the chunk brings it)."""
        if chunk.choice is not None:
            return chunk.choice, 0.0
        from tnarena.chooser import Budget, Target, choose

        opts = {k: v[1] for k, v in AUTO_OPTIONS.items()} | dict(chunk.setting.params)
        start = time.perf_counter()
        choice = choose(code, table, self.catalog, Target(opts["target_error"], opts["target_agreement"]),
                        Budget(opts["budget_mib"] * 2**20, opts["budget_ms"] / 1e3),
                        seed=integer_seed(chunk.seed, chunk.point.key + "/auto"),
                        calibration=opts["calibration"], chi_cap=opts["chi_cap"])
        return json.dumps(choice.to_dict()), time.perf_counter() - start

    @staticmethod
    def _key(chunk: Chunk) -> tuple[int, str, str]:
        return chunk.seed, chunk.point.key, chunk.setting.key

    def _remember(self, key, value) -> None:
        self._decoders[key] = value
        while len(self._decoders) > DECODER_CACHE:
            self._decoders.popitem(last=False)

    def _code(self, chunk: Chunk):
        key = (chunk.seed, chunk.point.key)
        if key not in self._codes:
            self._codes = {key: build_code_and_noise(self.catalog, chunk.seed, chunk.point)}
        return self._codes[key]

    def _decode(self, chunk: Chunk, decoder: Decoder, instance: int, plan_seconds: float) -> dict[str, Any]:
        _, table = self._code(chunk)
        error = sample_instance_error(chunk.seed, chunk.point, instance, table)
        sampler = Sampler() if chunk.profile else nullcontext()
        start = time.perf_counter()
        with sampler:
            result = decoder.decode_error(error)
        decode_seconds = time.perf_counter() - start
        profile = json.dumps(sampler.counts) if chunk.profile else None
        if chunk.setting.kind == "baseline":
            return {"status": "ok", "syndrome": syndrome_hex(result.syndrome), "decision": class_label(result.decision),
                    "true_class": class_label(result.true_class), "logical_failure": int(bool(result.failed)),
                    "contract_seconds": decode_seconds, "decode_seconds": decode_seconds,
                    "plan_seconds": plan_seconds, "profile": profile, "worker": os.getpid()}
        row = self._row(result, decode_seconds, plan_seconds, profile)
        if instance < chunk.trace_memory:
            row["traced_peak_bytes"] = traced_peak(decoder, result)
        return row

    @staticmethod
    def _row(result, decode_seconds: float, plan_seconds: float, profile: str | None) -> dict[str, Any]:
        stats = [c.stats for c in result.classes]
        return {
            "status": "ok",
            "syndrome": syndrome_hex(result.syndrome),
            "classes": [c.label for c in result.classes],
            "log_probs": [None if math.isinf(c.log_prob) else c.log_prob for c in result.classes],
            "decision": class_label(result.decision),
            "true_class": class_label(result.true_class),
            "logical_failure": int(bool(result.failed)),
            "contract_seconds": sum(c.seconds for c in result.classes),
            "decode_seconds": decode_seconds,
            "plan_seconds": plan_seconds,
            "flops": _total(stats, "flops"),
            "intermediate_bytes": _largest(stats, "largest_intermediate", BYTES_PER_ELEMENT),
            "discarded_weight": _largest(stats, "discarded_weight"),
            "profile": profile,
            "worker": os.getpid(),
        }


def syndrome_hex(syndrome: np.ndarray) -> str:
    """The syndrome bits (shape (s,), 0/1) packed big-endian into hex, as stored."""
    return np.packbits(np.asarray(syndrome, dtype=np.uint8)).tobytes().hex()


def traced_peak(decoder: Decoder, result) -> float:
    """Peak bytes allocated (tracemalloc) while contracting the decided class once more.

    Run after the timed decode so tracing does not slow the timed contraction. The contraction
    uses a fresh copy of the plan (a pickled round trip, where the plan pickles), so that what a
    plan keeps from its last contractions (the sweep resumes where the arrays agree) does not
    shrink the figure.
    """
    pure = decoder.pure_error(result.syndrome)
    network = decoder.builder.network(pure, result.decision)
    if network.is_zero:
        return 0.0
    blob = _pickled(decoder.plan)
    plan = decoder.plan if blob is None else pickle.loads(blob)
    tracemalloc.start()
    try:
        base = tracemalloc.get_traced_memory()[0]
        tracemalloc.reset_peak()
        decoder.strategy.contract(plan, network)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    return float(max(peak - base, 0))


def _pickled(plan: Any) -> bytes | None:
    """The plan as bytes to ship to other workers; None when it cannot be pickled (each plans itself)."""
    try:
        return pickle.dumps(plan, protocol=pickle.HIGHEST_PROTOCOL)
    except Exception:  # noqa: BLE001 - e.g. a plan holding a lambda or an open handle
        return None


def failure_reason(exc: Exception) -> str:
    """What a failed decode's row says: the memory limit, a strategy's own message, or the exception."""
    if isinstance(exc, MemoryError) or isinstance(exc.__cause__, MemoryError):
        return f"memory limit exceeded ({exc.__cause__ or exc})"
    return str(exc) if isinstance(exc, PluginError) else f"{type(exc).__name__}: {exc}"


def failed_row(reason: str) -> dict[str, Any]:
    return {"status": "failed", "reason": reason, "worker": os.getpid()}


def _total(stats: list[dict], key: str) -> float | None:
    values = [s[key] for s in stats if key in s]
    return float(sum(values)) if values else None


def _largest(stats: list[dict], key: str, scale: float = 1.0) -> float | None:
    values = [s[key] for s in stats if key in s]
    return float(max(values) * scale) if values else None
