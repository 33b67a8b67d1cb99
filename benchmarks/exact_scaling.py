"""How far exact maximum-likelihood decoding goes on the planar surface code.

For the square-lattice planar code (n = d^2 + (d-1)^2) under bit-flip and
depolarizing noise, grows d = 3, 5, 7, ... until the exact strategy refuses
the plan (largest intermediate over its memory budget) or one syndrome takes
longer than --max-seconds. Each size runs in a fresh worker process, killed
when a syndrome runs past twice that; a size whose flop count is hopeless even
at 50 Gflop/s is skipped without contracting. For each size it prints the build and plan times, the tree's width and flop count, and
the contraction time per syndrome and per logical class (medians over
--repeats seeded syndromes, after one warm-up syndrome that is shown apart).
A second part plans one size with several search budgets side by side.

Figures only: nothing here asserts a time. Run from the repository root:

    .venv/bin/python benchmarks/exact_scaling.py [--help]
"""

from __future__ import annotations

import argparse
import math
import multiprocessing
import os
import platform
import re
import statistics
import subprocess
import sys
import time
from dataclasses import asdict, dataclass, field

import numpy as np

from tnarena.catalog import load_catalog
from tnarena.decode import Decoder
from tnarena.errors import TnarenaError
from tnarena.network.builder import NetworkBuilder
from tnarena.noise import make_noise, sample_errors

RATE = 0.1
NOISE_MODELS = ("bit_flip", "depolarizing")
#: A size is skipped, not run, when even at OPTIMISTIC_RATE flops per second
#: (above the best rate seen on the 2-core test machine, about 42e9) its flop
#: count predicts a syndrome SKIP_FACTOR times longer than --max-seconds.
#: Flop rates of different trees differ by 100x or more, so this only catches
#: hopeless sizes; a worker that overruns is killed instead (see measure).
OPTIMISTIC_RATE = 5e10
SKIP_FACTOR = 3.0


@dataclass
class Row:
    """Measurements for one (noise model, d, strategy setting)."""

    noise: str
    d: int
    n: int
    label: str = ""
    status: str = "ok"  # ok | refused | slow | skipped | error
    note: str = ""
    build_s: float = math.nan
    plan_s: float = math.nan
    width: float = math.nan
    flops: float = math.nan
    classes: int = 0  # non-zero logical classes per syndrome
    first_s: float = math.nan  # total decode time of the warm-up syndrome
    contract_s: list[float] = field(default_factory=list)  # per timed syndrome, all classes
    class_s: list[float] = field(default_factory=list)  # per contracted class
    total_s: list[float] = field(default_factory=list)  # decode_error wall time per syndrome
    log_probs: list[list[float]] = field(default_factory=list)  # ln P per class, per syndrome
    load: float = math.nan  # 1-minute load average when the row was finished

    @property
    def contract_med(self) -> float:
        return statistics.median(self.contract_s) if self.contract_s else math.nan

    @property
    def class_med(self) -> float:
        return statistics.median(self.class_s) if self.class_s else math.nan

    @property
    def total_med(self) -> float:
        return statistics.median(self.total_s) if self.total_s else math.nan

    @property
    def flop_rate(self) -> float:
        """Achieved flops per second in contraction (median syndrome)."""
        if not self.contract_s or self.classes == 0 or self.contract_med <= 0:
            return math.nan
        return self.flops * self.classes / self.contract_med


def progress(msg: str) -> None:
    print(f"  .. {msg}", file=sys.stderr, flush=True)


def measure(noise: str, d: int, params: dict, args, label: str = "") -> Row:
    """Measure one size in a fresh worker process, killed if a syndrome overruns.

    The worker reports the row after planning and after every syndrome; if no
    report comes for ``2 * args.max_seconds`` (or the plan takes far longer
    than its budget) the worker is killed and the row so far is returned as
    'slow'. A fresh process per size also keeps sizes from sharing memory state.
    """
    job = {"noise": noise, "d": d, "params": params, "repeats": args.repeats, "seed": args.seed,
           "max_seconds": args.max_seconds, "label": label}
    ctx = multiprocessing.get_context("spawn")
    receiver, sender = ctx.Pipe(duplex=False)
    worker = ctx.Process(target=_worker, args=(sender, job), daemon=True)
    worker.start()
    sender.close()
    row = Row(noise, d, d * d + (d - 1) ** 2, label, status="error", note="the worker sent nothing")
    planned = False
    wait = 60.0 + 10.0 * float(params.get("search_time") or 0.0)  # building and planning
    while True:
        if not receiver.poll(wait):
            worker.kill()
            row.status = "slow"
            row.note = (
                f"killed: syndrome {len(row.log_probs)} still running after {wait:g} s"
                if planned else f"killed: building and planning took over {wait:g} s"
            )
            break
        try:
            message = receiver.recv()
        except EOFError:
            row.status, row.note = "error", f"the worker exited with code {worker.exitcode}"
            break
        if message is None:
            break
        row = Row(**message)
        row.load = os.getloadavg()[0]
        planned = True
        wait = 2.0 * args.max_seconds
    worker.join(5.0)
    receiver.close()
    return row


def _worker(conn, job: dict) -> None:
    try:
        for row in _measure_here(**job):
            conn.send(asdict(row))
        conn.send(None)
    finally:
        conn.close()


def _measure_here(noise: str, d: int, params: dict, repeats: int, seed: int, max_seconds: float, label: str):
    """Build, plan and decode ``1 + repeats`` seeded syndromes; yields the row as it fills."""
    cat = load_catalog(strict=True)
    code = cat.build_code("surface", "square", d)
    row = Row(noise, d, code.n, label)
    table = make_noise(noise, code.n, RATE)
    tag = f"{noise} d={d}{' ' + label if label else ''}"
    how = "greedy" if params.get("method") == "greedy" else f"search_time {params.get('search_time')} s"
    progress(f"{tag}: planning ({how})")
    start = time.perf_counter()
    try:
        dec = Decoder(code, table, cat.strategy("exact"), params)
    except TnarenaError as exc:
        elapsed = time.perf_counter() - start
        t0 = time.perf_counter()
        NetworkBuilder(code, table)  # the Decoder built one too: time it again to split build from plan
        row.build_s = time.perf_counter() - t0
        row.plan_s = elapsed - row.build_s
        row.status = "refused"
        found = re.search(r"\(2\^([0-9.]+)\)", str(exc))
        row.width = float(found.group(1)) if found else math.nan
        row.note = "plan over max_intermediate"
        yield row
        return
    row.plan_s = dec.plan_seconds
    row.build_s = time.perf_counter() - start - dec.plan_seconds
    row.width, row.flops = dec.plan.width, dec.plan.flops
    predicted = row.flops * 4 / OPTIMISTIC_RATE  # at most 4 classes for k = 1
    if predicted > SKIP_FACTOR * max_seconds:
        row.status = "skipped"
        row.note = f"over {predicted:.3g} s/syndrome even at {OPTIMISTIC_RATE / 1e9:g} Gflop/s"
        yield row
        return
    yield row
    rng = np.random.default_rng([seed, d, NOISE_MODELS.index(noise)])
    for i in range(1 + repeats):
        error = sample_errors(table, rng)
        t0 = time.perf_counter()
        try:
            res = dec.decode_error(error)
        except TnarenaError as exc:  # PluginError is not a TnarenaError; let it surface
            row.status, row.note = "error", str(exc)
            yield row
            return
        total = time.perf_counter() - t0
        done = [c for c in res.classes if c.stats]  # classes that were contracted
        row.classes = len(done)
        row.log_probs.append([c.log_prob for c in res.classes])
        if i == 0:
            row.first_s = total
        else:
            row.total_s.append(total)
            row.contract_s.append(sum(c.seconds for c in done))
            row.class_s.extend(c.seconds for c in done)
        if total > 2:
            progress(f"{tag}: syndrome {i}/{repeats} took {total:.2f} s")
        if total > max_seconds:
            row.status = "slow"
            row.note = f"a syndrome took {total:.3g} s > --max-seconds {max_seconds:g}"
            if i == 0:  # the warm-up is the only measurement: report it
                row.total_s.append(total)
                row.contract_s.append(sum(c.seconds for c in done))
                row.class_s.extend(c.seconds for c in done)
            yield row
            return
        yield row


def fmt(x: float, spec: str) -> str:
    """``format(x, spec)``, or a dash as wide as the field when x is missing (NaN)."""
    if isinstance(x, float) and math.isnan(x):
        return "-".rjust(int(re.match(r"\d*", spec).group() or 0))
    return format(x, spec)


HEADER = (
    f"{'d':>3} {'n':>5} {'build s':>7} {'plan s':>7} {'width':>5} {'flops':>9} {'cls':>3} "
    f"{'1st s':>8} {'contract s/syn':>14} {'s/class':>9} {'total s/syn':>11} {'Gflop/s':>7} {'reps':>4} {'load':>4}  status"
)


def row_line(row: Row, first: str | None = None) -> str:
    lead = f"{row.d:>3} {row.n:>5}" if first is None else f"{first:>9}"
    return (
        f"{lead} {fmt(row.build_s, '7.3f')} {fmt(row.plan_s, '7.2f')} {fmt(row.width, '5.1f')} "
        f"{fmt(row.flops, '9.3g')} {row.classes or '-':>3} {fmt(row.first_s, '8.4f')} "
        f"{fmt(row.contract_med, '14.4f')} {fmt(row.class_med, '9.4f')} {fmt(row.total_med, '11.4f')} "
        f"{fmt(row.flop_rate / 1e9, '7.3g')} {len(row.total_s):>4} {fmt(row.load, '4.1f')}  {row.status}"
        + (f" ({row.note})" if row.note else "")
    )


def scaling(noise: str, args, base: dict) -> list[Row]:
    print(f"\n== {noise}, p = {RATE}: exact strategy {base} ==")
    print(HEADER)
    rows = []
    for d in range(3, args.max_d + 1, 2):
        row = measure(noise, d, base, args)
        rows.append(row)
        print(row_line(row), flush=True)
        if row.status != "ok":
            break
    fast = [r for r in rows if r.status == "ok" and r.total_med < 1.0]
    ok = [r.d for r in rows if r.status == "ok"]
    best = max(fast, key=lambda r: r.d) if fast else None
    print(
        "largest d decoded exactly in < 1 s per syndrome (median total, after planning): "
        + (f"{best.d} (n = {best.n})" if best else "none")
        + f"; largest d run to completion: {max(ok) if ok else 'none'}"
    )
    return rows


def budgets(case: str, args, base: dict) -> None:
    noise, _, size = case.partition(":")
    if noise not in NOISE_MODELS or not size.isdigit():
        raise SystemExit(f"--budget-case {case!r}: write NOISE:D with NOISE in {NOISE_MODELS}, e.g. depolarizing:9")
    d = int(size)
    print(f"\n== search budget, {noise} d = {d} (same syndromes for every row) ==")
    print(f"{'setting':>9}" + HEADER[9:])
    settings = [(f"{t:g} s", {**base, "search_time": t}) for t in args.budget_times]
    settings.append(("greedy", {**base, "method": "greedy"}))
    done = []
    for label, params in settings:
        row = measure(noise, d, params, args, label)
        print(row_line(row, label), flush=True)
        done.append(row)
    print(f"largest |difference| in ln P between these trees, same syndromes: {_spread(done)}")


def _spread(rows: list[Row]) -> str:
    """How far the class log-probabilities of differently planned trees disagree."""
    runs = [r.log_probs for r in rows if r.log_probs]
    if len(runs) < 2:
        return "- (fewer than two settings decoded)"
    count = min(len(r) for r in runs)
    worst = 0.0
    for i in range(count):
        ref = np.array(runs[0][i])
        for other in runs[1:]:
            val = np.array(other[i])
            finite = np.isfinite(ref) & np.isfinite(val)
            if (np.isfinite(ref) != np.isfinite(val)).any():
                return "a class is impossible under one tree and possible under another"
            worst = max(worst, float(np.abs(ref[finite] - val[finite]).max(initial=0.0)))
    return f"{worst:.3g} over {count} syndromes"


def parse_args(argv=None) -> argparse.Namespace:
    p = argparse.ArgumentParser(
        description=__doc__.split("\n\n")[0].rstrip(".") + ". Prints one table per noise model, then the "
        "search-budget comparison. Progress goes to stderr.",
        formatter_class=argparse.ArgumentDefaultsHelpFormatter,
    )
    p.add_argument("--search-time", type=float, default=2.0,
                   help="tree-search budget (s) of the exact strategy for the scaling tables")
    p.add_argument("--max-d", type=int, default=99,
                   help="largest code distance to try; sizes also stop at the first refused, slow or skipped one")
    p.add_argument("--repeats", type=int, default=5,
                   help="timed syndromes per size (medians over these); one more warm-up syndrome runs first, shown apart")
    p.add_argument("--seed", type=int, default=0, help="seed of the sampled errors (numpy Generator)")
    p.add_argument("--max-seconds", type=float, default=30.0,
                   help="stop growing d once one syndrome takes longer than this")
    p.add_argument("--method", choices=("auto", "kahypar", "greedy"), default="auto",
                   help="tree search of the exact strategy for the scaling tables")
    p.add_argument("--threads", type=int, default=0,
                   help="BLAS/OpenMP threads of the worker processes (sets OPENBLAS_NUM_THREADS, "
                        "OMP_NUM_THREADS, MKL_NUM_THREADS); 0 leaves the environment as it is. "
                        "1 is steadier when other processes share the cores")
    p.add_argument("--noise", choices=NOISE_MODELS, action="append", default=argparse.SUPPRESS,
                   help="noise model(s) of the scaling tables (repeatable; default both)")
    p.add_argument("--budget-case", action="append", default=argparse.SUPPRESS,
                   help="NOISE:D for the search-budget comparison (repeatable; default depolarizing:9 "
                        "and bit_flip:17; 'none' skips it)")
    p.add_argument("--budget-times", type=float, nargs="+", default=[0.5, 2.0, 8.0],
                   help="search budgets (s) compared side by side")
    args = p.parse_args(argv)
    if args.repeats < 1 or args.max_d < 3 or args.threads < 0:
        p.error("--repeats must be >= 1, --max-d >= 3 and --threads >= 0")
    args.noise = getattr(args, "noise", None) or list(NOISE_MODELS)
    args.budget_case = getattr(args, "budget_case", None) or ["depolarizing:9", "bit_flip:17"]
    return args


def _commit() -> str:
    """Short hash of the checked-out commit (read only), plus '+changes' when the tree is dirty."""
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    try:
        head = subprocess.run(["git", "-C", root, "rev-parse", "--short", "HEAD"],
                              capture_output=True, text=True, timeout=10).stdout.strip()
        dirty = subprocess.run(["git", "-C", root, "status", "--porcelain", "--untracked-files=no"],
                               capture_output=True, text=True, timeout=10).stdout.strip()
    except (OSError, subprocess.SubprocessError):
        return "unknown"
    return (head or "unknown") + ("+changes" if dirty else "")


def main(argv=None) -> None:
    args = parse_args(argv)
    import cotengra

    from tnarena_exact_tree import kahypar_available

    load_catalog(strict=True)  # fail here, once, if a plugin is broken
    if args.threads > 0:  # read by the spawned workers when they import numpy
        for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
            os.environ[var] = str(args.threads)
    threads = os.environ.get("OPENBLAS_NUM_THREADS", "default")
    began = time.perf_counter()
    print("exact_scaling: square-lattice planar code, exact ML decoding")
    print(f"command: {' '.join([os.path.basename(sys.executable)] + sys.argv)}; commit {_commit()}")
    print(
        f"python {platform.python_version()}, numpy {np.__version__}, cotengra {cotengra.__version__}, "
        f"kahypar {'yes' if kahypar_available() else 'no'}, {os.cpu_count()} CPUs, BLAS threads {threads}, "
        f"load average at start {os.getloadavg()[0]:.2f}"
    )
    print(
        "columns: build = network structure; plan = tree search; width = log2 largest intermediate; "
        "flops = cotengra contraction cost per class; cls = non-zero classes contracted per syndrome; "
        "1st = warm-up syndrome (total); contract = sum over classes; total = decode_error wall time "
        "(syndrome, pure error, network arrays, contraction); medians over 'reps' syndromes; "
        "load = 1-minute load average after the row (this benchmark alone makes about 1-2 on 2 cores)"
    )
    base = {"search_time": args.search_time, "method": args.method}
    for noise in args.noise:
        scaling(noise, args, base)
    for case in args.budget_case:
        if case != "none":
            budgets(case, args, {"method": "auto"})
    print(f"\nwall time {time.perf_counter() - began:.0f} s; load average at end {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
