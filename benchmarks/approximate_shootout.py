"""Approximate strategies head to head on identical syndromes: time and accuracy against chi.

Square-lattice planar code at sizes 9, 15, 25; bit flip p = 0.1 and depolarizing p = 0.15;
the same seeded syndromes for every strategy. The reference is the exact strategy where
its plan fits the memory budget, otherwise the sweep at chi = --ref-chi (96; flagged in the table),
well above the largest chi compared so that its own error does not flatter the sweep.

    .venv/bin/python benchmarks/approximate_shootout.py            # full run (long)
    .venv/bin/python benchmarks/approximate_shootout.py --sizes 9 --syndromes 5

The sweep also runs tapered at each ratio of --sweep-tapers below 1: far_chi = round(ratio x chi)
on all but the last --near-layers layers before its two lines meet (chi on those).

Every strategy runs at each singular-value cutoff of --cutoffs (relative to a bond's largest
singular value in the sweep, columns and quimb_boundary; quimb_compressed reads it in its own
mode, a relative sum of squares). Prints, per (size, noise): for each strategy, chi and cutoff,
the median contraction time per syndrome (all classes that can be non-zero), the mean |error in
ln P| per class with a 90% bootstrap interval over the syndromes, the mean error of each
syndrome's most likely class and that of the others by their class relative to it (X: they
differ by X-bar, and so on); then the target check: for every baseline setting (chi, cutoff),
the time of the cheapest sweep setting of any chi and cutoff that reaches its accuracy (and, for
information, the same on the most likely class alone), with the sampling noise of that
comparison (a paired bootstrap of the ratio of mean errors, for that sweep setting and the one
just cheaper), and the sweep's time against the number of qubits at fixed chi (fitted exponent).
"""

from __future__ import annotations

import argparse
import sys
import time

import numpy as np

from tnarena.catalog import load_catalog
from tnarena.decode import class_label
from tnarena.errors import TnarenaError
from tnarena.network import NetworkBuilder
from tnarena.noise import make_noise, sample_errors

BASELINES = ("quimb_boundary", "quimb_compressed")
APPROXIMATE = ("sweep", "columns") + BASELINES


def networks_for(code, table, syndromes: int, seed: int):
    """The non-zero class networks of ``syndromes`` seeded sampled errors, grouped by syndrome; each
    network's ``metadata['class']`` is its logical class."""
    from tnarena.decode import SyndromeSolver, logical_classes

    builder = NetworkBuilder(code, table)
    solver = SyndromeSolver(code)
    groups = []
    for s in range(syndromes):
        error = sample_errors(table, np.random.default_rng(np.random.SeedSequence([seed, s])))
        e_s = solver.pure_error(code.syndrome(error))
        nets = []
        for c in logical_classes(code.k):
            net = builder.network(e_s, c)
            if not net.is_zero:
                net.metadata["class"] = c
                nets.append(net)
        groups.append(nets)
    return builder.structure, groups


def run_setting(strategy, params, structure, groups):
    """(plan seconds, median wall seconds per syndrome, log values per class, median CPU seconds of
    this process per syndrome), or an error string."""
    start = time.perf_counter()
    try:
        plan = strategy.plan(structure, strategy.resolve(params))
    except TnarenaError as exc:
        return str(exc)
    plan_s = time.perf_counter() - start
    times, cpu, values = [], [], []
    for nets in groups:
        start, start_cpu = time.perf_counter(), time.process_time()
        vals = [strategy.contract(plan, n).log_value + n.log_scale for n in nets]
        times.append(time.perf_counter() - start)
        cpu.append(time.process_time() - start_cpu)
        values.append(vals)
    return plan_s, float(np.median(times)), values, float(np.median(cpu))


#: Bootstrap resamples of the syndromes for the interval of a mean error, and its seed.
BOOTSTRAP, BOOTSTRAP_SEED = 2000, 12345


def error_summary(values, reference, classes) -> tuple[float, float, float, float, dict[str, float], np.ndarray]:
    """(mean |d ln P| over all classes, 5% and 95% bootstrap quantiles of that mean, mean |d ln P| of
    the reference's most likely class per syndrome, mean |d ln P| by class relative to that one:
    label of (c xor c_top) -> mean, the sum of |d ln P| per syndrome (shape (syndromes,))).
    ``classes``: per syndrome, the logical class of each value.

    The interval resamples whole syndromes with replacement (percentile bootstrap, common practice):
    a syndrome's classes are not independent draws. The mean over classes is dominated by a few
    unlikely classes, whose relative error the truncation amplifies, so the interval is wide where
    they are few; the most likely class is the one a decoder's decision rests on.
    """
    per = [np.abs(np.asarray(vs) - np.asarray(rs)) for vs, rs in zip(values, reference)]
    sums = np.array([p.sum() for p in per])
    counts = np.array([p.size for p in per])
    draws = _bootstrap_draws(len(per))
    means = sums[draws].sum(axis=1) / counts[draws].sum(axis=1)
    top, relative = [], {}
    for p, rs, cs in zip(per, reference, classes):
        first = int(np.argmax(rs))
        top.append(p[first])
        best = np.asarray(cs[first])
        for e, c in zip(p, cs):
            if any(c != best):
                relative.setdefault(class_label(tuple(int(x) for x in np.asarray(c) ^ best)), []).append(e)
    by_class = {label: float(np.mean(es)) for label, es in sorted(relative.items())}
    return (float(sums.sum() / counts.sum()), float(np.quantile(means, 0.05)), float(np.quantile(means, 0.95)),
            float(np.mean(top)), by_class, sums)


def _bootstrap_draws(syndromes: int) -> np.ndarray:
    """The syndrome indices of every bootstrap resample, shape (BOOTSTRAP, syndromes); the same for
    every setting, so that two settings' resampled means are paired."""
    return np.random.default_rng(BOOTSTRAP_SEED).integers(0, syndromes, size=(BOOTSTRAP, syndromes))


def paired_error_ratio(sums_a: np.ndarray, sums_b: np.ndarray) -> tuple[float, float, float, float]:
    """(ratio of the mean errors a / b, its 5% and 95% bootstrap quantiles, fraction of resamples in
    which a's mean error is at most b's). ``sums_a``, ``sums_b``: sum of |d ln P| per syndrome on the
    same syndromes (shape (syndromes,)); both settings see the same classes, so the sums' ratio is
    the ratio of means. Resampling the syndromes jointly (paired percentile bootstrap, common
    practice) cancels the hard syndromes that both contractions find hard."""
    draws = _bootstrap_draws(len(sums_a))
    a, b = sums_a[draws].sum(axis=1), sums_b[draws].sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = a / b
    return (float(sums_a.sum() / sums_b.sum()), float(np.quantile(ratio, 0.05)), float(np.quantile(ratio, 0.95)),
            float(np.mean(a <= b)))


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--sizes", type=int, nargs="+", default=[9, 15, 25])
    ap.add_argument("--chis", type=int, nargs="+", default=[4, 8, 16, 32])
    ap.add_argument("--sweep-chis", type=int, nargs="+", default=[4, 6, 8, 12, 16, 24, 32, 48],
                    help="chi values for the sweep (default: a finer grid than --chis, so the cheapest sweep setting "
                         "at least as accurate as each baseline setting is found)")
    ap.add_argument("--cutoffs", type=float, nargs="+", default=[1e-13, 1e-12],
                    help="singular-value cutoffs, relative to the largest, that every strategy runs at (default "
                         "1e-13 1e-12; each setting is one chi and one cutoff)")
    ap.add_argument("--sweep-tapers", type=float, nargs="+", default=[1.0],
                    help="far_chi / chi ratios the sweep runs at (far_chi = round(ratio x chi) on all but the last "
                         "--near-layers layers before the lines meet; 1: chi on every layer; default 1)")
    ap.add_argument("--near-layers", type=int, default=6,
                    help="the sweep's near_layers where far_chi < chi (default 6)")
    ap.add_argument("--ref-chi", type=int, default=96, help="chi of the sweep reference where exact is refused")
    ap.add_argument("--noises", nargs="+", default=["bit_flip", "depolarizing"], choices=["bit_flip", "depolarizing"])
    ap.add_argument("--syndromes", type=int, default=20, help="seeded syndromes per setting (default 20)")
    ap.add_argument("--seed", type=int, default=2026)
    ap.add_argument("--strategies", nargs="+", default=list(APPROXIMATE))
    args = ap.parse_args(argv)
    catalog = load_catalog()
    names = [s for s in args.strategies if s in catalog.strategies]
    missing = sorted(set(args.strategies) - set(names))
    if missing:
        print(f"(not installed, left out: {', '.join(missing)})")
    scaling: dict[tuple[str, int, float, int], list[tuple[int, float, float]]] = {}
    for size in args.sizes:
        code = catalog.build_code("surface", "square", size)
        for noise, rate in (("bit_flip", 0.1), ("depolarizing", 0.15)):
            if noise not in args.noises:
                continue
            table = make_noise(noise, code.n, rate)
            structure, groups = networks_for(code, table, args.syndromes, args.seed)
            print(f"\n== d = {size} (n = {code.n}), {noise} p = {rate}, {args.syndromes} syndromes", flush=True)
            ref = run_setting(catalog.strategy("exact"), {"search_time": 2.0}, structure, groups)
            ref_label = "exact"
            if isinstance(ref, str):
                print(f"   exact refused ({ref.split(';')[0]}); reference = sweep chi={args.ref_chi}")
                ref = run_setting(catalog.strategy("sweep"), {"chi": args.ref_chi}, structure, groups)
                ref_label = f"sweep chi={args.ref_chi}"
            else:
                print(f"   exact: plan {ref[0]:.2f} s, {1e3 * ref[1]:.1f} ms per syndrome")
            reference = ref[2]
            print(f"   {'strategy':<18}{'chi':>5}{'far':>5}{'cutoff':>8}{'plan [s]':>10}{'ms/syndrome':>14}"
                  f"{'cpu ms':>10}"
                  f"{'mean |d ln P|':>16}{'90% interval':>22}{'top class':>12}   by class relative to the top one"
                  f"   vs {ref_label}")
            classes = [[n.metadata["class"] for n in nets] for nets in groups]
            results = {}
            for name in names:
                for cutoff in args.cutoffs:
                    for chi in args.sweep_chis if name == "sweep" else args.chis:
                        for far in far_chis(chi, args.sweep_tapers) if name == "sweep" else [0]:
                            setting = (chi, cutoff, far)
                            print(f"   ... {name} {_setting(setting)}", file=sys.stderr, flush=True)
                            params = {"chi": chi, "cutoff": cutoff}
                            if far:
                                params.update(far_chi=far, near_layers=args.near_layers)
                            out = run_setting(catalog.strategy(name), params, structure, groups)
                            far_col = str(far) if far else "-"
                            if isinstance(out, str):
                                print(f"   {name:<18}{chi:>5}{far_col:>5}{cutoff:>8g}   refused: {out}")
                                continue
                            err, low, high, top, by_class, sums = error_summary(out[2], reference, classes)
                            results[(name,) + setting] = (out[1], err, out[3], top, sums)
                            relative = ", ".join(f"{label} {e:.1e}" for label, e in by_class.items())
                            print(f"   {name:<18}{chi:>5}{far_col:>5}{cutoff:>8g}{out[0]:>10.2f}{1e3 * out[1]:>14.2f}"
                                  f"{1e3 * out[3]:>10.2f}{err:>16.2e}{f'{low:.1e} .. {high:.1e}':>22}{top:>12.1e}"
                                  f"   {relative}", flush=True)
                            scaling.setdefault((name,) + setting, []).append((code.n, out[1], out[3]))
            _target(results, clock=0, label="wall")
            _target(results, clock=2, label="cpu", quiet=True)
            _target(results, clock=2, label="cpu time at equal error on the most likely class", quiet=True,
                    error=3)
    _scaling(scaling)
    return 0


#: Errors below this are rounding: settings under it count as equally accurate.
ACCURACY_FLOOR = 1e-10


def _target(results, clock: int = 0, label: str = "wall", quiet: bool = False, error: int = 1) -> None:
    """For each baseline setting (chi, cutoff): the cheapest sweep setting (any chi and cutoff) at least
    as accurate, and the speed ratio, by wall time (clock 0) or this process's CPU time (clock 2;
    steadier on a shared machine).

    error 1 compares the mean |d ln P| over all classes (the target's measure); error 3 that of the
    most likely class only (for information: what a decoder's decision rests on)."""
    sweep = sorted((r[clock], setting, r[error]) for (n, *setting), r in results.items() if n == "sweep")
    if not sweep:
        return
    ratios = []
    for (name, *setting_b), r in sorted(results.items()):
        if name not in BASELINES:
            continue
        base = f"{name} {_setting(setting_b)}"
        t_b, err_b = r[clock], r[error]
        goal = max(err_b, ACCURACY_FLOOR)
        hit = next(((t, chi, err) for t, chi, err in sweep if err <= goal), None)
        if hit is None:
            if not quiet:
                print(f"   vs {base} (error {err_b:.1e}): no sweep setting compared is as accurate")
            ratios.append(0.0)
            continue
        ratios.append(t_b / hit[0])
        if not quiet:
            print(f"   vs {base} (error {err_b:.1e}, {1e3 * t_b:.1f} ms): sweep {_setting(hit[1])} "
                  f"(error {hit[2]:.1e}, {1e3 * hit[0]:.1f} ms) is {t_b / hit[0]:.1f}x faster")
            if error == 1:
                cheaper = [s for s in sweep if s[0] < hit[0]]
                for t, setting, _ in [hit] + cheaper[-1:]:
                    ratio, low, high, share = paired_error_ratio(results[("sweep", *setting)][4], r[4])
                    print(f"      sampling noise: mean error of sweep {_setting(setting)} / {base} = {ratio:.2f} "
                          f"(90% paired interval {low:.2f} .. {high:.2f}; the sweep at least as accurate in "
                          f"{100 * share:.0f}% of resamples), {t_b / t:.1f}x faster")
    if not ratios:
        return
    listed = f"ratios {', '.join(f'{x:.1f}x' for x in ratios)}; smallest {min(ratios):.1f}x"
    if error == 1:
        verdict = "met" if min(ratios) >= 5 else "MISSED"
        print(f"   target by {label} time (sweep >= 5x faster at equal accuracy): {listed}: {verdict}")
    else:
        print(f"   (not the target) {label}: {listed}")


def far_chis(chi: int, tapers: list[float]) -> list[int]:
    """The sweep's far_chi values for one chi: round(ratio x chi) for each ratio below 1 (those that leave
    1 <= far_chi < chi), and 0 (far_chi = chi, every layer at chi) if 1 is among the ratios."""
    fars = {max(1, round(r * chi)) for r in tapers if r < 1}
    return ([0] if any(r >= 1 for r in tapers) else []) + sorted(f for f in fars if f < chi)


def _setting(setting) -> str:
    chi, cutoff, far = setting
    return f"chi={chi}" + (f" far_chi={far}" if far else "") + f" cutoff={cutoff:g}"


def _scaling(scaling) -> None:
    print("\n== time per syndrome against qubits at fixed chi (fitted exponent of t ~ n^a, wall and cpu)")
    for (name, chi, cutoff, far), points in sorted(scaling.items()):
        ns = sorted({n for n, _, _ in points})
        if len(ns) < 2:
            continue
        # both noise models are pooled per n by taking the larger time
        wall = {n: max(t for m, t, _ in points if m == n) for n in ns}
        cpu = {n: max(c for m, _, c in points if m == n) for n in ns}
        a = np.polyfit(np.log(ns), np.log([wall[n] for n in ns]), 1)[0]
        b = np.polyfit(np.log(ns), np.log([cpu[n] for n in ns]), 1)[0]
        print(f"   {name:<18} {_setting((chi, cutoff, far)):<28} exponent {a:.2f} wall, {b:.2f} cpu  "
              f"({', '.join(f'n={n}: {1e3 * wall[n]:.1f} / {1e3 * cpu[n]:.1f} ms' for n in ns)})")


if __name__ == "__main__":
    sys.exit(main())
