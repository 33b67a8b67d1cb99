"""Thresholds from a study database: failure counts per (code, noise, setting), fits, tables, plots.

Each *curve family* is one code family on one lattice under one noise model
(with its options) decoded by one setting; its points are the (size, rate)
pairs of the study. Families with a full grid (every size at every rate, at
least 2 sizes and 3 rates) get a finite-size-scaling estimate with bootstrap
intervals (:mod:`tnarena.thresholds`). The report adds the failure rates of
every setting side by side (so an optimal decoder can be read against
matching on the same instances), p_c against chi, and for each lattice run
under both bit flip and phase flip the entropy sum H2(p_bit) + H2(p_phase)
against the zero-rate hashing bound 1 (Nishimori and Nemoto 2002, a conjecture).
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from tnarena.arena.store import Store
from tnarena.errors import TnarenaError
from tnarena.stats import wilson_interval


@dataclass
class CurveFamily:
    """Failure counts of one (family, lattice, model, options, setting) on its (size, rate) grid.

    failures, trials : shape (S, R); trials 0 where a (size, rate) point was not run.
    """

    family: str
    lattice: str | None
    model: str
    options: str
    setting: str
    strategy: str
    params: dict
    sizes: list[int]
    rates: list[float]
    failures: np.ndarray
    trials: np.ndarray

    @property
    def code_label(self) -> str:
        opts = json.loads(self.options)
        extra = "".join(f", {k}={v}" for k, v in opts.items())
        return f"{self.family} on {self.lattice or 'its own layout'}, {self.model}{extra}"

    @property
    def slug(self) -> str:
        raw = f"{self.family}-{self.lattice or 'own'}-{self.model}-{self.setting}"
        return "".join(c if c.isalnum() or c in "-_." else "_" for c in raw)

    @property
    def complete(self) -> bool:
        return bool((self.trials > 0).all()) and len(self.sizes) >= 2 and len(self.rates) >= 3


def curve_families(store: Store) -> list[CurveFamily]:
    """Counts of decoded (status ok) tasks, grouped into curve families, in a stable order."""
    rows = store.rows(
        "SELECT p.family, p.lattice, p.model, p.options, p.size, p.rate, s.label AS setting, s.strategy, s.params, "
        "SUM(r.logical_failure) AS failures, COUNT(*) AS trials FROM results r "
        "JOIN points p ON p.id = r.point_id JOIN settings s ON s.id = r.setting_id WHERE r.status = 'ok' "
        "GROUP BY p.id, s.id ORDER BY p.family, p.lattice, p.model, p.options, s.id, p.size, p.rate")
    grouped: dict[tuple, list] = {}
    for r in rows:
        key = (r["family"], r["lattice"], r["model"], r["options"], r["setting"], r["strategy"], r["params"])
        grouped.setdefault(key, []).append(r)
    out = []
    for (family, lattice, model, options, setting, strategy, params), rs in grouped.items():
        sizes = sorted({r["size"] for r in rs})
        rates = sorted({r["rate"] for r in rs})
        failures = np.zeros((len(sizes), len(rates)), dtype=int)
        trials = np.zeros_like(failures)
        for r in rs:
            i, j = sizes.index(r["size"]), rates.index(r["rate"])
            failures[i, j], trials[i, j] = r["failures"], r["trials"]
        out.append(CurveFamily(family, lattice, model, options, setting, strategy, json.loads(params), sizes,
                               rates, failures, trials))
    return out


def binary_entropy(p: float) -> float:
    """H2(p) = -p log2 p - (1-p) log2 (1-p), in bits; 0 at p = 0 and 1."""
    if p <= 0.0 or p >= 1.0:
        return 0.0
    return -p * math.log2(p) - (1 - p) * math.log2(1 - p)


def write_threshold_report(store: Store, out_dir: str | Path, *, resamples: int = 200, seed: int = 0) -> Path:
    """Write thresholds.md and one PNG per estimated curve family to ``out_dir``; return the .md path."""
    from tnarena.thresholds import chi_convergence, chi_table, estimate_threshold
    from tnarena.thresholds.plots import plot_chi_convergence, plot_threshold

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    families = curve_families(store)
    if not families:
        raise TnarenaError(f"the database {store.path!r} holds no decoded task yet; run the study first.")
    title = store.meta().get("title", "study")
    lines = [f"# Thresholds: {title}", "", f"Study seed {store.meta().get('seed', '?')}; {resamples} bootstrap "
             "redraws per estimate; intervals are 95% (percentile bootstrap for p_c and nu, Wilson for rates).",
             "", "## Estimates", "",
             "| code and noise | setting | sizes | p_c | 95% interval | nu | 95% interval | chi2/dof | crossings |",
             "|:--|:--|:--|--:|:--|--:|:--|--:|:--|"]
    estimates, plots, notes = {}, {}, []
    for fam in families:
        if not fam.complete:
            notes.append(f"- {fam.code_label}, {fam.setting}: no estimate (needs every size at every rate, "
                         f">= 2 sizes and >= 3 rates; has sizes {fam.sizes}, rates {fam.rates}).")
            continue
        est = estimate_threshold(fam.sizes, fam.rates, fam.failures, fam.trials, resamples=resamples, seed=seed)
        estimates[id(fam)] = est
        png = plot_threshold(est, out / f"threshold-{fam.slug}.png", title=f"{fam.code_label}; {fam.setting}")
        crossings = ", ".join(f"{c.smaller}/{c.larger}: {'-' if c.rate is None else f'{c.rate:.4f}'}"
                              for c in est.crossings)
        fit = est.fit
        lines.append(f"| {fam.code_label} | {fam.setting} | {', '.join(map(str, fam.sizes))} | {fit.p_c:.4f} | "
                     f"[{est.p_c_interval[0]:.4f}, {est.p_c_interval[1]:.4f}] | {fit.nu:.2f} | "
                     f"[{est.nu_interval[0]:.2f}, {est.nu_interval[1]:.2f}] | {fit.chi2_dof:.2f} | {crossings} |")
        plots[id(fam)] = png.name
    lines += [""] + notes + [""]
    for fam in families:
        if id(fam) in estimates:
            lines += [f"![{fam.code_label}; {fam.setting}]({plots[id(fam)]})", "",
                      f"*{fam.code_label}, {fam.setting}: failure rate against p per size (Wilson 95% bars) with "
                      f"the scaling fit and the p_c bootstrap band; right, the data collapse.*", ""]
    lines += _chi_section(families, estimates, out, chi_convergence, chi_table, plot_chi_convergence)
    lines += _rates_section(families)
    lines += _entropy_section(families, estimates)
    path = out / "thresholds.md"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _chi_section(families, estimates, out, chi_convergence, chi_table, plot_chi_convergence) -> list[str]:
    """p_c against chi for settings of one strategy that differ only in chi."""
    groups: dict[tuple, list[CurveFamily]] = {}
    for fam in families:
        if id(fam) in estimates and "chi" in fam.params:
            rest = json.dumps({k: v for k, v in fam.params.items() if k != "chi"}, sort_keys=True)
            groups.setdefault((fam.family, fam.lattice, fam.model, fam.options, fam.strategy, rest), []).append(fam)
    lines = []
    for fams in groups.values():
        if len(fams) < 2:
            continue
        ests = [estimates[id(f)] for f in fams]
        steps = chi_convergence([f.params["chi"] for f in fams], [e.fit.p_c for e in ests],
                                [e.p_c_interval for e in ests])
        png = plot_chi_convergence(steps, out / f"chi-{fams[0].slug}.png",
                                   title=f"{fams[0].code_label}; {fams[0].strategy}")
        verdict = "converged in chi" if steps[-1].converged else "NOT converged in chi: raise chi"
        lines += [f"## p_c against chi: {fams[0].code_label}, {fams[0].strategy} ({verdict})", "",
                  chi_table(steps), "", f"![p_c against chi]({png.name})", ""]
    return lines


def _rates_section(families: list[CurveFamily]) -> list[str]:
    """Failure rate of every setting at every point, side by side on the same instances."""
    by_code: dict[tuple, list[CurveFamily]] = {}
    for fam in families:
        by_code.setdefault((fam.family, fam.lattice, fam.model, fam.options), []).append(fam)
    lines = ["## Logical failure rates, every setting on the same instances", ""]
    for fams in by_code.values():
        lines += [f"### {fams[0].code_label}", "",
                  "| size | p | " + " | ".join(f.setting for f in fams) + " |",
                  "|--:|--:|" + "--:|" * len(fams)]
        points = sorted({(d, p) for f in fams for d in f.sizes for p in f.rates})
        for d, p in points:
            cells = []
            for f in fams:
                if d in f.sizes and p in f.rates and f.trials[f.sizes.index(d), f.rates.index(p)] > 0:
                    k, n = int(f.failures[f.sizes.index(d), f.rates.index(p)]), int(f.trials[f.sizes.index(d),
                                                                                            f.rates.index(p)])
                    lo, hi = wilson_interval(k, n)
                    cells.append(f"{k / n:.4f} [{lo:.4f}, {hi:.4f}] ({k}/{n})")
                else:
                    cells.append("-")
            lines.append(f"| {d} | {p:g} | " + " | ".join(cells) + " |")
        lines.append("")
    return lines


def _entropy_section(families: list[CurveFamily], estimates: dict) -> list[str]:
    """H2(p_bit) + H2(p_phase) per lattice and setting, against the zero-rate hashing bound 1."""
    found: dict[tuple, dict[str, object]] = {}
    for fam in families:
        if id(fam) in estimates and fam.model in ("bit_flip", "phase_flip"):
            found.setdefault((fam.family, fam.lattice, fam.setting), {})[fam.model] = estimates[id(fam)]
    rows = []
    for (family, lattice, setting), pair in found.items():
        if len(pair) < 2:
            continue
        bit, phase = pair["bit_flip"], pair["phase_flip"]
        total = binary_entropy(bit.fit.p_c) + binary_entropy(phase.fit.p_c)
        n = min(len(bit.p_c_samples), len(phase.p_c_samples))
        sums = [binary_entropy(a) + binary_entropy(b) for a, b in zip(bit.p_c_samples[:n], phase.p_c_samples[:n])]
        lo, hi = np.percentile(sums, [2.5, 97.5])
        rows.append(f"| {family} on {lattice} | {setting} | {bit.fit.p_c:.4f} | {phase.fit.p_c:.4f} | "
                    f"{total:.3f} | [{lo:.3f}, {hi:.3f}] | {total - 1:+.3f} |")
    if not rows:
        return []
    return ["## Bit flip and phase flip: entropy sum against the zero-rate hashing bound", "",
            "A lattice's phase-flip threshold is its dual's bit-flip threshold. The zero-rate hashing bound "
            "(Nishimori and Nemoto 2002; conjectured, not proven, to be met) says H2(p_bit) + H2(p_phase) = 1.",
            "", "| code | setting | p_bit | p_phase | H2 sum | 95% interval | sum - 1 |",
            "|:--|:--|--:|--:|--:|:--|--:|"] + rows + [""]
