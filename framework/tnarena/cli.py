"""The ``tnarena`` command line.

Every user mistake exits with status 2 and one line ``tnarena: error: ...``;
a broken plugin exits with status 3 and names the plugin.
"""

from __future__ import annotations

import argparse
import json
import math
import sys
import time
from collections.abc import Sequence
from typing import Any

import numpy as np

from tnarena import __version__
from tnarena.catalog import Catalog, load_catalog
from tnarena.errors import PluginError, TnarenaError
from tnarena.instance import InstanceSpec

EPILOG = """\
examples:
  tnarena list                          what lattices, codes, noise models and strategies exist
  tnarena list strategies               strategies with their parameters, defaults and ranges
  tnarena plugins                       which plugins loaded, from which distribution, and failures
  tnarena decode --lattice hexagonal --size 4 --noise bit_flip --rate 0.08 --seed 7
  tnarena decode --size 5 --noise biased --noise-option eta=10 --param search_time=0.5 --json
  tnarena decode --code-file mycode.json --noise depolarizing --rate 0.05
  tnarena write-code --code surface --lattice kagome --size 3 -o kagome3.json
  tnarena new-plugin my_sweep --dir plugins   write a strategy plugin to start from
  tnarena demo                          decode a few seeded instances with the defaults
  tnarena run studies/demo.toml         run (or resume) a head-to-head study; summary table at the end
  tnarena compare --size 7 --setting sweep:chi=8 --setting exact    quick head-to-head, no study file
  tnarena threshold studies/square_bit_flip.db    threshold estimates with bootstrap intervals
  tnarena choose --lattice kagome --size 9 --noise bit_flip --rate 0.08   pick a strategy, show why

A decode draws one error from the noise model (seeded), computes ln P of every
logical class of its syndrome with the chosen strategy, and picks the largest
(the maximum-likelihood decision).
"""


def main(argv: Sequence[str] | None = None) -> int:
    parser = _parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return 0
    try:
        return args.run(args)
    except TnarenaError as exc:
        print(f"tnarena: error: {exc}", file=sys.stderr)
        return 2
    except PluginError as exc:
        print(f"tnarena: plugin error: {exc}", file=sys.stderr)
        return 3
    except BrokenPipeError:  # output piped into head and the like
        sys.stderr.close()
        return 0


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="tnarena",
        description="Maximum-likelihood decoding of 2D Pauli codes by tensor-network contraction, "
        "with contraction strategies as plugins.",
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"tnarena {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser("list", help="list lattices, code families, noise models and strategies")
    p.add_argument("what", nargs="?", choices=("lattices", "codes", "noise", "strategies"),
                   help="one section only (default: all)")
    p.set_defaults(run=_run_list)

    p = sub.add_parser("plugins", help="show which plugins loaded (distribution, version) and which failed")
    p.set_defaults(run=_run_plugins)

    p = sub.add_parser("decode", help="decode one seeded sampled instance and print the class table",
                       formatter_class=argparse.RawDescriptionHelpFormatter,
                       epilog="Parameters of a strategy: tnarena list strategies.")
    _instance_options(p)
    p.add_argument("--strategy", default="exact", help="contraction strategy (default: exact)")
    p.add_argument("--param", action="append", default=[], metavar="KEY=VALUE",
                   help="strategy parameter, repeatable (e.g. --param search_time=0.5)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    p.set_defaults(run=_run_decode)

    p = sub.add_parser("write-code", help="write a code to a JSON document (format in README)")
    _instance_options(p, noise=False)
    p.add_argument("-o", "--output", required=True, help="file to write")
    p.set_defaults(run=_run_write_code)

    p = sub.add_parser("new-plugin", help="write a new strategy plugin folder (pyproject, module, test)",
                       formatter_class=argparse.RawDescriptionHelpFormatter,
                       epilog="Then: pip install -e DIR/NAME, and `tnarena plugins` lists it.")
    p.add_argument("name", help="strategy and entry-point name, a lowercase identifier")
    p.add_argument("--dir", default=".", help="folder to create it in (default: here)")
    p.set_defaults(run=_run_new_plugin)

    p = sub.add_parser("demo", help="decode a few seeded instances on built-in defaults")
    p.set_defaults(run=_run_demo)

    from tnarena import cli_arena, cli_choose

    cli_arena.add_commands(sub)
    cli_choose.add_commands(sub)
    return parser


def _instance_options(p: argparse.ArgumentParser, *, noise: bool = True) -> None:
    g = p.add_argument_group("code")
    g.add_argument("--code", default="surface", help="code family (default: surface)")
    g.add_argument("--lattice", default=None,
                   help="lattice family (default: square for the surface code; none for color_666)")
    g.add_argument("--size", type=int, default=5, help="linear size of the patch (default: 5)")
    g.add_argument("--code-file", default=None, help="read the code from a JSON document instead")
    g.add_argument("--seed", type=int, default=0, help="seed of the lattice, noise and error (default: 0)")
    if noise:
        g = p.add_argument_group("noise")
        g.add_argument("--noise", default="depolarizing", help="noise model (default: depolarizing)")
        g.add_argument("--rate", type=float, default=0.1, help="error rate p (default: 0.1)")
        g.add_argument("--noise-option", action="append", default=[], metavar="KEY=VALUE",
                       help="noise model option, repeatable (e.g. --noise-option eta=10)")
        g.add_argument("--noise-table", default=None, metavar="PATH",
                       help="per-qubit probabilities: a CSV or whitespace file, n rows of P(I) P(X) P(Y) P(Z) "
                            "(selects the 'table' model)")


def _spec(args: argparse.Namespace) -> InstanceSpec:
    lattice = args.lattice
    if lattice is None and args.code == "surface":
        lattice = "square"
    noise_options = _pairs(getattr(args, "noise_option", []), "--noise-option")
    noise_name = getattr(args, "noise", "depolarizing")
    if getattr(args, "noise_table", None):
        noise_name, noise_options = "table", {"table": _read_table(args.noise_table)}
    return InstanceSpec(
        code=args.code,
        lattice=lattice,
        size=args.size,
        noise=noise_name,
        rate=getattr(args, "rate", 0.1),
        seed=args.seed,
        noise_options=noise_options,
        code_file=args.code_file,
    )


def _read_table(path: str) -> list[list[float]]:
    """Rows of four probabilities from a CSV or whitespace-separated text file."""
    try:
        text = open(path, encoding="utf-8").read()
    except OSError as exc:
        raise TnarenaError(f"cannot read the noise table {path!r}: {exc.strerror}.") from None
    rows = []
    for number, line in enumerate(text.splitlines(), start=1):
        line = line.split("#")[0].strip()
        if not line:
            continue
        try:
            rows.append([float(v) for v in line.replace(",", " ").split()])
        except ValueError:
            raise TnarenaError(f"line {number} of the noise table {path!r} is not four numbers.") from None
        if len(rows[-1]) != 4:
            raise TnarenaError(
                f"line {number} of the noise table {path!r} has {len(rows[-1])} numbers; give P(I) P(X) P(Y) P(Z)."
            )
    return rows


def _pairs(items: list[str], flag: str) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for item in items:
        key, sep, value = item.partition("=")
        if not sep or not key:
            raise TnarenaError(f"{flag} {item!r} is not KEY=VALUE; write e.g. {flag} eta=10.")
        out[key.strip()] = _number_or_text(value.strip())
    return out


def _number_or_text(text: str) -> Any:
    for kind in (int, float):
        try:
            return kind(text)
        except ValueError:
            pass
    return text


# ---- commands -----------------------------------------------------------------
def _run_list(args: argparse.Namespace) -> int:
    catalog = load_catalog()
    sections = [args.what] if args.what else ["lattices", "codes", "noise", "strategies"]
    for section in sections:
        if section == "strategies":
            print("strategies:")
            for name, strat in sorted(catalog.strategies.items()):
                kind = "exact" if strat.exact else "approximate"
                print(f"  {name:<22} {strat.summary}  [{kind}; plugin {catalog.strategy_origin[name]}]")
                for p in strat.parameters:
                    print(f"      {p.name:<17} = {p.default!r:<14} {p.describe_range()}: {p.summary}")
        else:
            title, table = {
                "lattices": ("lattices", catalog.lattices),
                "codes": ("code families", catalog.code_families),
                "noise": ("noise models", catalog.noise_models),
            }[section]
            print(f"{title}:")
            for name, entry in sorted(table.items()):
                tag = " (random; seeded)" if entry.random else ""
                print(f"  {name:<22} {entry.summary}{tag}")
        print()
    _report_failures(catalog)
    return 0


def _run_plugins(args: argparse.Namespace) -> int:
    catalog = load_catalog()
    print(f"{'plugin':<16} {'distribution':<24} {'version':<10} status")
    for rec in catalog.plugins:
        status = "loaded: " + ", ".join(rec.provides) if rec.ok else f"FAILED: {rec.reason}"
        print(f"{rec.name:<16} {rec.distribution:<24} {rec.version:<10} {status}")
    if not catalog.plugins:
        print("(no plugins found in the 'tnarena.plugins' entry-point group)")
    return 0 if all(r.ok for r in catalog.plugins) else 1


def _report_failures(catalog: Catalog) -> None:
    for rec in catalog.plugins:
        if not rec.ok:
            print(f"tnarena: warning: plugin {rec.name!r} failed to load: {rec.reason}", file=sys.stderr)


def _run_decode(args: argparse.Namespace) -> int:
    catalog = load_catalog()
    _report_failures(catalog)
    outcome = decode_instance(catalog, _spec(args), args.strategy, _pairs(args.param, "--param"))
    if args.json:
        print(json.dumps(outcome, indent=2))
    else:
        print(format_outcome(outcome))
    return 0


def _run_write_code(args: argparse.Namespace) -> int:
    from tnarena.codes.json_format import write_code_json

    catalog = load_catalog()
    code = _spec(args).build_code(catalog)
    write_code_json(code, args.output)
    print(f"wrote {code.summary()} to {args.output}")
    return 0


def _run_new_plugin(args: argparse.Namespace) -> int:
    from tnarena.scaffold import scaffold_strategy

    root = scaffold_strategy(args.name, args.dir)
    print(f"wrote {root}/: pyproject.toml (entry point '{args.name}'), tnarena_{args.name}/__init__.py, tests/")
    print(f"next: {sys.executable} -m pip install -e {root}  &&  tnarena plugins")
    return 0


def _run_demo(args: argparse.Namespace) -> int:
    catalog = load_catalog()
    _report_failures(catalog)
    print("tnarena demo: exact maximum-likelihood decoding of seeded sampled errors.\n")
    cases = [
        InstanceSpec("surface", "square", 5, "depolarizing", 0.12, seed=1),
        InstanceSpec("surface", "hexagonal", 4, "bit_flip", 0.08, seed=2),
        InstanceSpec("color_666", None, 5, "biased", 0.1, seed=3, noise_options={"eta": 10.0}),
    ]
    for spec in cases:
        print(format_outcome(decode_instance(catalog, spec, "exact", {})))
        print()
    print("More: tnarena --help; tnarena list; tnarena decode --help")
    return 0


def decode_instance(catalog: Catalog, spec: InstanceSpec, strategy: str, params: dict) -> dict[str, Any]:
    """Decode one seeded instance; a plain dict (JSON-ready) describing everything."""
    from tnarena.decode import Decoder
    from tnarena.pauli import support

    strat = catalog.strategy(strategy)
    code = spec.build_code(catalog)
    table = spec.build_noise(catalog, code.n)
    error = spec.sample_error(table)
    decoder = Decoder(code, table, strat, params)
    start = time.perf_counter()
    result = decoder.decode_error(error)
    seconds = time.perf_counter() - start
    post = result.posterior()
    return {
        "code": code.name,
        "n": code.n,
        "k": code.k,
        "distances": dict(code.distances),
        "noise": spec.noise,
        "rate": spec.rate,
        "noise_options": {k: v for k, v in spec.noise_options.items() if k != "table"},
        "seed": spec.seed,
        "strategy": strat.name,
        "params": decoder.params,
        "error_weight": int(support(error).size),
        "syndrome_weight": int(np.asarray(result.syndrome).sum()),
        "network": {"nodes": decoder.builder.structure.num_nodes, "bonds": decoder.builder.structure.num_bonds,
                    "pieces": len(decoder.builder.structure.components())},
        "classes": [
            {"class": c.label, "log_prob": None if math.isinf(c.log_prob) else c.log_prob,
             "posterior": post[c.label], "seconds": c.seconds, "stats": c.stats}
            for c in result.classes
        ],
        "decision": _label(result.decision),
        "true_class": _label(result.true_class),
        "failed": bool(result.failed),
        "plan_seconds": decoder.plan_seconds,
        "decode_seconds": seconds,
    }


def _label(cls: tuple[int, ...] | None) -> str | None:
    from tnarena.decode import class_label

    return None if cls is None else class_label(cls)


def format_outcome(out: dict[str, Any]) -> str:
    """A readable table of one decoded instance."""
    dist = ", ".join(f"d_{k} = {v}" for k, v in sorted(out["distances"].items()))
    opts = "".join(f", {k}={v}" for k, v in out["noise_options"].items())
    net = out["network"]
    lines = [
        f"code      {out['code']}  (n = {out['n']}, k = {out['k']}{', ' + dist if dist else ''})",
        f"noise     {out['noise']}, p = {out['rate']:g}{opts}; seed {out['seed']}",
        f"error     weight {out['error_weight']}, syndrome weight {out['syndrome_weight']}",
        f"network   {net['nodes']} nodes, {net['bonds']} bonds, {net['pieces']} piece(s); "
        f"strategy {out['strategy']} planned in {out['plan_seconds']:.2f} s",
        "",
        f"  {'class':<8}{'ln P(class)':>16}{'P(class | syndrome)':>22}{'time [ms]':>12}",
    ]
    for c in out["classes"]:
        logp = "impossible" if c["log_prob"] is None else f"{c['log_prob']:.6f}"
        mark = "  <- decision" if c["class"] == out["decision"] else ""
        lines.append(f"  {c['class']:<8}{logp:>16}{c['posterior']:>22.6f}{1e3 * c['seconds']:>12.2f}{mark}")
    verdict = "FAILED (logical error)" if out["failed"] else "success"
    lines += ["", f"decision  {out['decision']}; the sampled error was in class {out['true_class']}: {verdict}"]
    return "\n".join(lines)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
