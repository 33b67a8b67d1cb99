"""The ``tnarena choose`` command: the automatic choice of a strategy setting and its evidence."""

from __future__ import annotations

import argparse
import json

from tnarena.errors import TnarenaError

EPILOG = """\
Exact contraction is chosen where its largest intermediate and its mean decode
time fit the budget. Otherwise sweep and columns (or the --strategy names) run
at chi = 2, 4, 8, ... on seeded calibration instances, in the directions the
structure-only cost model ranks cheapest, and the fastest setting whose mean
|error in ln P| and decision agreement meet the target is chosen (timings within
25% count as ties, settled by the smaller chi). The table of every candidate is
printed and stored in the --db file, keyed by the network structure, noise,
target, budget and seed: asking again answers from the store.

examples:
  tnarena choose --size 5 --noise bit_flip --rate 0.08
  tnarena choose --lattice kagome --size 9 --noise bit_flip --rate 0.08 --budget-mib 0.001
  tnarena choose --lattice delaunay --size 9 --target-error 1e-4 --budget-ms 200 --db runs/choices.db
"""


def add_commands(sub: argparse._SubParsersAction) -> None:
    from tnarena.cli import _instance_options

    p = sub.add_parser("choose", help="choose a strategy setting for a code automatically and show the evidence",
                       formatter_class=argparse.RawDescriptionHelpFormatter, epilog=EPILOG)
    _instance_options(p)
    g = p.add_argument_group("choice")
    g.add_argument("--target-error", type=float, default=1e-3,
                   help="largest mean |error in ln P| against the reference (default: 1e-3)")
    g.add_argument("--target-agreement", type=float, default=0.99,
                   help="smallest fraction of decisions equal to the reference's (default: 0.99)")
    g.add_argument("--budget-ms", type=float, default=1000.0, help="mean time per decode, ms (default: 1000)")
    g.add_argument("--budget-mib", type=float, default=1024.0,
                   help="largest intermediate tensor, MiB of float64 (default: 1024)")
    g.add_argument("--calibration", type=int, default=6, metavar="N",
                   help="seeded calibration instances (default: 6)")
    g.add_argument("--chi-cap", type=int, default=64, help="largest chi tried (default: 64)")
    g.add_argument("--strategy", action="append", default=None, metavar="NAME",
                   help="strategy to consider, repeatable (default: exact, sweep, columns)")
    g.add_argument("--db", default="choices.db", help="SQLite file the choices are kept in (default: choices.db)")
    g.add_argument("--no-store", action="store_true", help="neither read nor write the --db file")
    g.add_argument("--json", action="store_true", help="print the choice and its evidence as one JSON object")
    p.set_defaults(run=_run_choose)


def _run_choose(args: argparse.Namespace) -> int:
    import sys

    from tnarena.catalog import load_catalog
    from tnarena.chooser import Budget, ChoiceStore, Target, choose, report
    from tnarena.cli import _spec

    target = Target(args.target_error, args.target_agreement)
    if not args.budget_mib > 0 or not args.budget_ms > 0:
        raise TnarenaError("--budget-ms and --budget-mib must be positive numbers.")
    budget = Budget(args.budget_mib * 2**20, args.budget_ms / 1e3)
    catalog = load_catalog()
    spec = _spec(args)
    code = spec.build_code(catalog)
    table = spec.build_noise(catalog, code.n)
    store = None if args.no_store else ChoiceStore(args.db)
    quiet = args.json

    def progress(candidate) -> None:
        if not quiet:
            print(f"  tried {candidate.label}: {candidate.status}", file=sys.stderr, flush=True)

    try:
        choice = choose(code, table, catalog, target, budget, args.seed, calibration=args.calibration,
                        chi_cap=args.chi_cap, strategies=args.strategy, store=store, progress=progress)
    finally:
        if store is not None:
            store.close()
    if args.json:
        print(json.dumps({**choice.to_dict(), "from_store": choice.from_store}, indent=1))
    else:
        print(report(choice))
        if store is not None and not choice.from_store:
            print(f"\nstored in {args.db} (key {choice.key[:12]})")
    return 0
