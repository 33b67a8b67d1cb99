"""The sweep's time per syndrome against the number of qubits at fixed chi, over larger sizes.

Square-lattice planar code, bit flip p = 0.1 and depolarizing p = 0.15, seeded syndromes, all
classes that can be non-zero contracted in order with one plan (as the decoder does), BLAS on one
thread, CPU time of this process. Prints one row per (noise, chi) with the fitted exponent a of
t ~ n^a over all sizes and over the last two.

Usage: python benchmarks/sweep_scaling.py [--sizes 15 25 35 45] [--chis 4 8 16] [--syndromes 3]
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from approximate_shootout import networks_for
from tnarena.catalog import load_catalog
from tnarena.noise import make_noise


def main() -> None:
    p = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--sizes", type=int, nargs="+", default=[15, 25, 35, 45])
    p.add_argument("--chis", type=int, nargs="+", default=[4, 8, 16])
    p.add_argument("--syndromes", type=int, default=3)
    p.add_argument("--noises", nargs="+", default=["bit_flip", "depolarizing"], choices=["bit_flip", "depolarizing"])
    args = p.parse_args()
    catalog = load_catalog()
    sweep = catalog.strategy("sweep")
    rates = {"bit_flip": 0.1, "depolarizing": 0.15}
    for noise in args.noises:
        ns, times = [], {chi: [] for chi in args.chis}
        for d in args.sizes:  # the networks of a size are built once for every chi
            code = catalog.build_code("surface", "square", d)
            table = make_noise(noise, code.n, rates[noise])
            structure, groups = networks_for(code, table, args.syndromes, 7)
            ns.append(code.n)
            for chi in args.chis:
                plan = sweep.plan(structure, sweep.resolve({"chi": chi}))
                sweep.contract(plan, groups[0][0])  # warm up; contract holds BLAS to one thread itself
                start = time.process_time()
                for networks in groups:
                    for network in networks:
                        sweep.contract(plan, network)
                times[chi].append((time.process_time() - start) / len(groups))
        for chi in args.chis:
            t = times[chi]
            a = np.polyfit(np.log(ns), np.log(t), 1)[0]
            last = np.log(t[-1] / t[-2]) / np.log(ns[-1] / ns[-2]) if len(ns) > 1 else float("nan")
            cells = ", ".join(f"n = {n}: {1e3 * x:.0f} ms" for n, x in zip(ns, t))
            print(f"{noise:<13} chi {chi:<3} {cells}; exponent {a:.2f} (all sizes), {last:.2f} (last two)", flush=True)


if __name__ == "__main__":
    main()
