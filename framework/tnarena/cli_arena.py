"""The arena's commands: ``run``, ``summary``, ``report``, ``export`` and ``compare``."""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from tnarena.errors import TnarenaError

RUN_EPILOG = """\
A study file (TOML, format in README) names codes, lattices, sizes, noise models,
rates and strategies with parameter grids. Every setting decodes exactly the same
seeded instances. Results go to an SQLite database, one transaction per task:
run the same command again after an interruption and it resumes.

examples:
  tnarena run studies/demo.toml                       results in studies/demo.db
  tnarena run my.toml --db runs/my.db --workers 2 --report runs/my-report
  tnarena summary runs/my.db                          the table again, from the database
"""

COMPARE_EPILOG = """\
A quick head-to-head without a study file: one code, one noise point, several
settings written STRATEGY[:KEY=VALUE,...]; the reference is exact (sweep at
the largest chi given where exact is refused).

examples:
  tnarena compare --size 7 --noise bit_flip --rate 0.1 --setting sweep:chi=4 --setting sweep:chi=8
  tnarena compare --lattice kagome --size 5 --samples 20 --setting columns:chi=8 --setting exact
"""


THRESHOLD_EPILOG = """\
For every code family, lattice, noise model and setting whose study ran every
size at every rate (>= 2 sizes, >= 3 rates): a fit of f = A + B x + C x^2 with
x = (p - p_c) d^(1/nu), bootstrap intervals for p_c and nu, pairwise crossings,
plots; p_c against chi where settings differ only in chi; failure rates of all
settings side by side; and H2(p_bit) + H2(p_phase) where a lattice ran both.

example:
  tnarena threshold studies/square_bit_flip.db --out studies/square_bit_flip-thresholds
"""


def add_commands(sub: argparse._SubParsersAction) -> None:
    raw = argparse.RawDescriptionHelpFormatter
    p = sub.add_parser("run", help="run (or resume) a study file and print its summary table",
                       formatter_class=raw, epilog=RUN_EPILOG)
    p.add_argument("study", help="study file (TOML)")
    p.add_argument("--db", default=None, help="database file (default: the study file with .db)")
    _pool_options(p)
    p.add_argument("--report", default=None, metavar="DIR", help="also write the report (Markdown, PNG) to DIR")
    p.set_defaults(run=_run_study)

    p = sub.add_parser("summary", help="print the summary table of a study database")
    p.add_argument("db", help="database file")
    p.set_defaults(run=_run_summary)

    p = sub.add_parser("report", help="write a Markdown report with PNG plots from a study database")
    p.add_argument("db", help="database file")
    p.add_argument("--out", default=None, metavar="DIR", help="folder (default: the database name + '-report')")
    p.set_defaults(run=_run_report)

    p = sub.add_parser("threshold", help="threshold estimates (scaling fit, bootstrap) from a study database",
                       formatter_class=raw, epilog=THRESHOLD_EPILOG)
    p.add_argument("db", help="database file")
    p.add_argument("--out", default=None, metavar="DIR", help="folder (default: the database name + '-thresholds')")
    p.add_argument("--resamples", type=int, default=200, help="bootstrap redraws per estimate (default: 200)")
    p.add_argument("--seed", type=int, default=0, help="seed of the bootstrap (default: 0)")
    p.set_defaults(run=_run_threshold)

    p = sub.add_parser("export", help="write every task's metrics to CSV")
    p.add_argument("db", help="database file")
    p.add_argument("--csv", required=True, metavar="FILE", help="CSV file to write")
    p.set_defaults(run=_run_export)

    p = sub.add_parser("compare", help="head-to-head of a few settings on one code and noise point",
                       formatter_class=raw, epilog=COMPARE_EPILOG)
    p.add_argument("--code", default="surface", help="code family (default: surface)")
    p.add_argument("--lattice", default=None, help="lattice family (default: square for the surface code)")
    p.add_argument("--size", type=int, default=5, help="linear size (default: 5)")
    p.add_argument("--noise", default="bit_flip", help="noise model (default: bit_flip)")
    p.add_argument("--rate", type=float, default=0.1, help="error rate (default: 0.1)")
    p.add_argument("--noise-option", action="append", default=[], metavar="KEY=VALUE", help="noise model option")
    p.add_argument("--samples", type=int, default=10, help="instances (default: 10)")
    p.add_argument("--seed", type=int, default=0, help="study seed (default: 0)")
    p.add_argument("--setting", action="append", required=True, metavar="STRATEGY[:K=V,...]",
                   help="a strategy setting, repeatable")
    p.add_argument("--db", default=":memory:", help="keep the results in this database (default: none)")
    _pool_options(p)
    p.set_defaults(run=_run_compare)


def _pool_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--workers", type=int, default=None,
                   help=f"worker processes (default: the number of cores, {os.cpu_count()} here)")
    p.add_argument("--dask", metavar="ADDRESS|local", default=None,
                   help="run on Dask: a scheduler address (tcp://host:8786), or 'local' for a local cluster "
                        "of --workers processes (docs/cluster.md)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")


def _run_study(args: argparse.Namespace) -> int:
    from tnarena.arena.study import read_study
    from tnarena.catalog import load_catalog

    catalog = load_catalog()
    study = read_study(args.study, catalog)
    db = args.db or str(Path(args.study).with_suffix(".db"))
    return _execute(study, db, catalog, args, report=args.report)


def _run_compare(args: argparse.Namespace) -> int:
    from tnarena.arena.study import parse_study
    from tnarena.catalog import load_catalog
    from tnarena.cli import _pairs

    catalog = load_catalog()
    lattice = args.lattice or ("square" if args.code == "surface" else None)
    code = {"family": args.code, "sizes": [args.size], **({"lattices": [lattice]} if lattice else {})}
    data = {"title": "tnarena compare", "seed": args.seed, "samples": args.samples, "codes": [code],
            "noise": [{"model": args.noise, "rates": [args.rate],
                       "options": _pairs(args.noise_option, "--noise-option")}],
            "strategies": [_setting_table(text) for text in args.setting]}
    study = parse_study(data, catalog, where="compare")
    return _execute(study, args.db, catalog, args, report=None)


def _setting_table(text: str) -> dict:
    """'sweep:chi=8,direction=auto' -> {'name': 'sweep', 'params': {'chi': 8, 'direction': 'auto'}}."""
    from tnarena.cli import _pairs

    name, _, rest = text.partition(":")
    items = [item for item in rest.split(",") if item.strip()]
    return {"name": name.strip(), "params": _pairs(items, "--setting")}


def _execute(study, db: str, catalog, args: argparse.Namespace, report: str | None) -> int:
    from tnarena.arena.runner import run_study
    from tnarena.arena.store import Store
    from tnarena.arena.summary import format_summary, summarise, task_metrics

    if db != ":memory:" and os.path.dirname(db):
        os.makedirs(os.path.dirname(db), exist_ok=True)
    store = Store(db)
    workers = args.workers or os.cpu_count() or 1
    if workers < 1:
        raise TnarenaError(f"--workers {workers}: give at least 1 worker process.")
    before = len(store.finished_tasks())
    if before:
        print(f"resuming: the database {db!r} already holds {before} finished task(s); they are not run again.",
              file=sys.stderr)
    progress = None if args.quiet else sys.stderr
    executor, where = None, f"{workers} worker(s)"
    if args.dask:
        from tnarena.arena.dask_pool import dask_factory

        executor = dask_factory(None if args.dask == "local" else args.dask)
        where = f"a local Dask cluster of {workers} worker(s)" if args.dask == "local" else f"Dask at {args.dask}"
    try:
        outcome = run_study(study, store, catalog, workers=workers, executor=executor, progress=progress)
    except KeyboardInterrupt:
        print(f"\ninterrupted: finished tasks are stored in {db!r}; run the same command to resume.",
              file=sys.stderr)
        return 130
    print(f"{study.title}: {outcome.tasks_run} task(s) run in {outcome.seconds:.1f} s "
          f"({outcome.tasks_failed} failed) on {where}; database {db}\n")
    print(format_summary(summarise(task_metrics(store))))
    if report:
        from tnarena.arena.report import write_report

        path = write_report(store, report)
        print(f"\nreport: {path}")
    store.close()
    return 0


def _open(db: str):
    from tnarena.arena.store import Store

    if not os.path.exists(db):
        raise TnarenaError(f"there is no study database {db!r}; run a study first (tnarena run STUDY.toml).")
    return Store(db)


def _run_summary(args: argparse.Namespace) -> int:
    from tnarena.arena.summary import format_summary, summarise, task_metrics

    store = _open(args.db)
    print(format_summary(summarise(task_metrics(store))))
    return 0


def _run_report(args: argparse.Namespace) -> int:
    from tnarena.arena.report import write_report

    store = _open(args.db)
    out = args.out or str(Path(args.db).with_suffix("")) + "-report"
    print(f"report: {write_report(store, out)}")
    return 0


def _run_threshold(args: argparse.Namespace) -> int:
    from tnarena.arena.threshold_report import write_threshold_report

    if args.resamples < 10:
        raise TnarenaError(f"--resamples {args.resamples}: give at least 10 bootstrap redraws.")
    store = _open(args.db)
    out = args.out or str(Path(args.db).with_suffix("")) + "-thresholds"
    print(f"thresholds: {write_threshold_report(store, out, resamples=args.resamples, seed=args.seed)}")
    return 0


def _run_export(args: argparse.Namespace) -> int:
    from tnarena.arena.report import export_csv

    store = _open(args.db)
    rows = export_csv(store, args.csv)
    print(f"wrote {rows} task row(s) to {args.csv}")
    return 0
