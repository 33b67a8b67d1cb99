"""Throughput: decodes per second one at a time and batched, the achieved flop rate, scaling in n.

Prints three tables, every ratio measured side by side in this run:

1. square-lattice planar code, bit flip p = 0.1, size 9 (default): sweep (chi 8) and exact,
   decodes per second one at a time (Decoder.decode_error) and batched
   (Decoder.decode_errors, batches of 64 and 256), and the batched/one ratio, by wall and by
   CPU time; then the contraction alone (networks per CPU second, contract against
   contract_batch on the same networks, handed over as a list and as the NetworkBatch that
   decode_errors passes, building them not counted), and the CPU time per decode in a batch of
   256 split into contract_batch and the framework's work around it;
2. the batched sweep's flop rate (its own flop count over its time) against numpy's
   matrix-product rate measured here on one thread, at the matrix sizes the sweep uses;
3. time per decode against the number of qubits at fixed chi for sizes 5..25, with the
   fitted exponent a of t ~ n^a.

Usage: python benchmarks/throughput.py [--size 9] [--chi 8] [--decodes 256] [--sizes 5 9 13 17 21 25]
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from threadpoolctl import threadpool_limits

from tnarena.catalog import load_catalog
from tnarena.decode import Decoder, logical_classes
from tnarena.network import NetworkBatch
from tnarena.noise import make_noise, sample_errors


CPU_RATES: dict[tuple[str, int | None], float] = {}  # (strategy, batch) -> decodes per CPU second


def rate(decoder: Decoder, errors: np.ndarray, batch: int | None) -> tuple[float, float]:
    """(decodes per second, total flops reported) over ``errors``; batch None: one at a time.
    Decodes per CPU second (this process) go to CPU_RATES: the machine may be shared."""
    flops = 0.0
    start, cpu = time.perf_counter(), time.process_time()
    if batch is None:
        results = [decoder.decode_error(e) for e in errors]
    else:
        results = [r for at in range(0, len(errors), batch) for r in decoder.decode_errors(errors[at:at + batch])]
    seconds = time.perf_counter() - start
    CPU_RATES[(decoder.strategy.name, batch)] = len(errors) / (time.process_time() - cpu)
    for r in results:
        flops += sum(c.stats.get("flops", 0.0) for c in r.classes)
    return len(errors) / seconds, flops / seconds


def contraction_rates(decoder: Decoder, errors: np.ndarray, batch: int) -> tuple[float, float, float]:
    """Networks contracted per CPU second on the networks of every possible class of ``errors``: one at
    a time (contract), batched on lists of networks (contract_batch gathers their arrays) and batched
    on slices of one NetworkBatch (the stacks decode_errors hands over); building them not counted."""
    builder, classes = decoder.builder, logical_classes(decoder.code.k)
    pures = decoder.syndromes.pure_errors(decoder.code.syndromes(errors))
    stacked = NetworkBatch.concatenate([builder.network_batch(pures, cls)[0] for cls in classes])
    networks = [net for cls in classes for pure in pures if not (net := builder.network(pure, cls)).is_zero]
    strategy, plan = decoder.strategy, decoder.plan
    cpu = time.process_time()
    for network in networks:
        strategy.contract(plan, network)
    one = len(networks) / (time.process_time() - cpu)
    rates = [one]
    for group in (networks, stacked):
        cpu = time.process_time()
        for at in range(0, len(group), batch):
            strategy.contract_batch(plan, group[at:at + batch])
        rates.append(len(group) / (time.process_time() - cpu))
    return tuple(rates)


def batch_split(decoder: Decoder, errors: np.ndarray) -> tuple[float, float]:
    """CPU ms per decode of decode_errors(errors) and of its contract_batch alone (same NetworkBatch)."""
    cpu = time.process_time()
    decoder.decode_errors(errors)
    total = time.process_time() - cpu
    pures = decoder.syndromes.pure_errors(decoder.code.syndromes(errors))
    bases = np.concatenate([pures ^ decoder.code.logical_operator(c) for c in logical_classes(decoder.code.k)])
    networks, _ = decoder.builder.network_batch(bases)
    cpu = time.process_time()
    decoder.strategy.contract_batch(decoder.plan, networks)
    contraction = time.process_time() - cpu
    return 1e3 * total / len(errors), 1e3 * contraction / len(errors)


def matmul_rate(n: int, repeats: int = 200) -> float:
    """Multiply-adds per second of numpy's n x n matrix product on this thread."""
    a = np.random.default_rng(0).normal(size=(n, n))
    a @ a
    start = time.perf_counter()
    for _ in range(repeats):
        a @ a
    return repeats * n**3 / (time.perf_counter() - start)


def main() -> None:
    p = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--size", type=int, default=9)
    p.add_argument("--chi", type=int, default=8)
    p.add_argument("--decodes", type=int, default=256)
    p.add_argument("--sizes", type=int, nargs="+", default=[5, 9, 13, 17, 21, 25])
    args = p.parse_args()
    catalog = load_catalog()
    code = catalog.build_code("surface", "square", args.size)
    table = make_noise("bit_flip", code.n, 0.1)
    errors = sample_errors(table, np.random.default_rng(1), shots=args.decodes)
    settings = [("sweep", {"chi": args.chi}), ("exact", {"search_time": 1.0})]
    print(f"square planar code d = {args.size} (n = {code.n}), bit flip p = 0.1, {args.decodes} decodes, one BLAS thread")
    print(f"{'strategy':<22}{'batched?':>9}{'one/s':>10}{'batch 64/s':>12}{'batch 256/s':>13}{'x64':>7}{'x256':>7}")
    flop_rates = {}
    with threadpool_limits(limits=1, user_api="blas"):
        for name, params in settings:
            decoder = Decoder(code, table, catalog.strategy(name), params)
            decoder.decode_errors(errors[:2])  # warm caches
            one, _ = rate(decoder, errors, None)
            b64, _ = rate(decoder, errors, 64)
            b256, flops256 = rate(decoder, errors, 256)
            flop_rates[name] = flops256
            label = f"{name}({','.join(f'{k}={v}' for k, v in params.items())})"
            print(f"{label:<22}{str(decoder.strategy.batched):>9}{one:>10.1f}{b64:>12.1f}{b256:>13.1f}"
                  f"{b64 / one:>7.2f}{b256 / one:>7.2f}")
            c1, c64, c256 = (CPU_RATES[(name, b)] for b in (None, 64, 256))
            print(f"{'  by CPU time':<22}{'':>9}{c1:>10.1f}{c64:>12.1f}{c256:>13.1f}{c64 / c1:>7.2f}{c256 / c1:>7.2f}")
            n1, n_list, n_stacked = contraction_rates(decoder, errors[:64], 2 * 64)
            for what, value in (("list", n_list), ("NetworkBatch", n_stacked)):
                print(f"{'  contraction alone':<22}{'':>9}{n1:>10.1f}{value:>12.1f}{'':>13}{value / n1:>7.2f}"
                      f"   (networks per CPU second, batches of 2 x 64 networks, a {what})")
            total, contraction = batch_split(decoder, errors[:256])
            print(f"  per decode in a batch of 256: {total:.3f} ms CPU, of which contract_batch {contraction:.3f} ms,"
                  f" the framework's work {total - contraction:.3f} ms")
        print()
        print("flop rate of the batched contraction against numpy's matrix product on this thread:")
        for n in (2 * args.chi, 4 * args.chi, 256):
            print(f"  numpy {n} x {n} @ {n} x {n}: {matmul_rate(n) / 1e9:.2f} G multiply-adds/s")
        for name, value in flop_rates.items():
            print(f"  {name} batched (its own flop count / time): {value / 1e9:.3f} G multiply-adds/s")
        print()
        print(f"time per decode against n (sweep chi = {args.chi}, one at a time and batched by 64):")
        ns, single, batched = [], [], []
        for d in args.sizes:
            code_d = catalog.build_code("surface", "square", d)
            table_d = make_noise("bit_flip", code_d.n, 0.1)
            errs = sample_errors(table_d, np.random.default_rng(2), shots=64)
            decoder = Decoder(code_d, table_d, catalog.strategy("sweep"), {"chi": args.chi})
            one, _ = rate(decoder, errs[:16], None)
            many, _ = rate(decoder, errs, 64)
            ns.append(code_d.n)
            single.append(1e3 / one)
            batched.append(1e3 / many)
            print(f"  d = {d:>2}  n = {code_d.n:>5}  {1e3 / one:>9.2f} ms one at a time  {1e3 / many:>9.2f} ms batched")
        for label, times in (("one at a time", single), ("batched", batched)):
            slope = np.polyfit(np.log(ns), np.log(times), 1)[0]
            print(f"  fitted exponent a in t ~ n^a ({label}): {slope:.2f}")


if __name__ == "__main__":
    main()
