"""How much of a syndrome's class contractions the sweep takes over from the ones before, by direction.

Square-lattice planar code, depolarizing noise p = 0.15, seeded syndromes; the four classes of each
syndrome contracted one after another with one plan, in the decoder's order (0,0), (1,0), (1,1),
(0,1). Runs each direction with the plan remembering the last contraction only (``MEMOS = 1``, the
behaviour before) and the last MEMOS (the default, 3), side by side in one process. Prints, per
(direction, memos): CPU ms per syndrome, the share of steps taken over, and the largest difference
in ln between the two settings (0: resuming is bit for bit the same as contracting from scratch).

Usage: python benchmarks/class_reuse.py [--size 25] [--chi 36] [--syndromes 10] [--directions 0 90]
"""

from __future__ import annotations

import argparse
import time

import numpy as np

import tnarena_sweep_line
from approximate_shootout import networks_for
from tnarena.catalog import load_catalog
from tnarena.noise import make_noise


def run(sweep, structure, groups, params: dict) -> tuple[float, float, list[float]]:
    """(median CPU seconds per syndrome, share of steps taken over, the ln of every class)."""
    plan = sweep.plan(structure, sweep.resolve(params))
    steps = sum(len(side) for sides in plan.steps for side in sides)
    times, reused, values = [], [], []
    for nets in groups:
        start = time.process_time()
        estimates = [sweep.contract(plan, n) for n in nets]
        times.append(time.process_time() - start)
        reused += [e.stats["reused_steps"] / steps for e in estimates]
        values += [e.log_value for e in estimates]
    return float(np.median(times)), float(np.mean(reused)), values


def main() -> None:
    p = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--size", type=int, default=25)
    p.add_argument("--chi", type=int, default=36)
    p.add_argument("--syndromes", type=int, default=10)
    p.add_argument("--directions", type=float, nargs="+", default=[0.0, 90.0])
    p.add_argument("--seed", type=int, default=2026)
    args = p.parse_args()
    catalog = load_catalog()
    sweep = catalog.strategy("sweep")
    code = catalog.build_code("surface", "square", args.size)
    table = make_noise("depolarizing", code.n, 0.15)
    structure, groups = networks_for(code, table, args.syndromes, args.seed)
    default = tnarena_sweep_line.MEMOS
    print(f"square d = {args.size}, depolarizing p = 0.15, chi {args.chi}, "
          f"{args.syndromes} syndromes (seed {args.seed})")
    print(f"{'direction':>9} {'memos':>5} {'CPU ms':>8} {'taken over':>10} {'max |d ln|':>10}")
    try:
        for direction in args.directions:
            rows = {}
            for memos in (1, default):
                tnarena_sweep_line.MEMOS = memos
                rows[memos] = run(sweep, structure, groups, {"chi": args.chi, "direction": direction})
            gap = float(np.max(np.abs(np.subtract(rows[1][2], rows[default][2]))))
            for memos, (seconds, share, _) in rows.items():
                print(f"{direction:9.0f} {memos:5d} {1e3 * seconds:8.0f} {share:10.1%} {gap:10.1e}")
            print(f"{'':9} ratio {rows[1][0] / rows[default][0]:7.2f}x")
    finally:
        tnarena_sweep_line.MEMOS = default


if __name__ == "__main__":
    main()
