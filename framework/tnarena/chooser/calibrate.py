"""The automatic choice: exact where it fits the budget, else the cheapest approximate setting that meets the target.

Order of work (every run on the same seeded calibration instances):

1. Exact strategies (``exact = True``) are planned with a generous memory cap and
   decoded; one that fits the budget (largest intermediate and mean decode time)
   is chosen at once. The first that ran is the reference either way.
2. Each approximate strategy with an int ``chi`` parameter is calibrated along
   tracks: one per direction the cost model keeps (see ``cost.rank_directions``).
   A track runs chi = 2, 4, 8, ... up to ``chi_cap``, comparing each chi with the
   reference, or, where no exact strategy ran, the previous chi with this one.
   It stops at the first chi that meets the target (larger ones cost more), at a
   refusal, or at a chi over the time or memory budget.
3. Of the settings that meet the target and fit the budget, the fastest wins,
   but timings within TIME_TOLERANCE of the fastest count as a tie, settled by
   the smaller chi and then the order tried (cheapest direction first). So the
   same seed gives the same choice unless timings differ by more than that.
   With no setting meeting the target, the most accurate one that fits is
   returned with ``met = False``.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from tnarena.arena.seeds import instance_rng
from tnarena.catalog import Catalog
from tnarena.codes.core import PauliCode
from tnarena.errors import TnarenaError
from tnarena.network import NetworkBuilder
from tnarena.noise import sample_errors, validate_table
from tnarena.strategy import Strategy

from tnarena.chooser.cost import exact_costs, rank_directions
from tnarena.chooser.measure import Run, compare, run_setting
from tnarena.chooser.model import Budget, Candidate, Choice, Target
from tnarena.chooser.persist import ChoiceStore, choice_question

#: Strategies calibrated when none are named (those the catalog lacks are left out).
DEFAULT_STRATEGIES = ("exact", "sweep", "columns")

#: Timings within this fraction of the fastest count as a tie (settled by smaller chi, then order tried).
TIME_TOLERANCE = 0.25

#: Largest intermediate (elements) an exact strategy may plan to serve as the reference (2^26 = 512 MiB).
REFERENCE_MAX_INTERMEDIATE = 2.0**26

#: Exact strategies' search settings, where they declare them (bounded by repeats: reproducible trees).
EXACT_SEARCH = {"max_repeats": 16, "search_time": 10.0}


def calibration_errors(table: np.ndarray, seed: int, fingerprint: str, count: int) -> list[np.ndarray]:
    """The calibration errors, shape (2n,) each: instance i from SeedSequence(seed, structure key, i)."""
    key = json.dumps({"chooser": "calibration", "structure": fingerprint}, sort_keys=True)
    return [sample_errors(table, instance_rng(seed, key, i)) for i in range(count)]


def chi_ladder(cap: int) -> list[int]:
    """2, 4, 8, ... up to cap (cap itself last when it is not a power of two)."""
    if cap < 2:
        raise TnarenaError(f"the chi cap must be at least 2, not {cap!r}.")
    out, chi = [], 2
    while chi < cap:
        out.append(chi)
        chi *= 2
    return out + [cap]


def choose(code: PauliCode, noise_table: np.ndarray, catalog: Catalog, target: Target | None = None,
           budget: Budget | None = None, seed: int = 0, *, calibration: int = 6, chi_cap: int = 64,
           strategies: Sequence[str] | None = None, allow_exact: bool = True, store: ChoiceStore | None = None,
           progress: Callable[[Candidate], None] | None = None) -> Choice:
    """Choose a strategy setting for one code and noise table; see the module docstring.

    Parameters
    ----------
    code : PauliCode
    noise_table : ndarray, shape (n, 4)
    catalog : Catalog (strategies are looked up by name)
    target, budget : Target, Budget (defaults: 1e-3 and 0.99; 1 GiB and 1 s per decode)
    seed : int, seeds the calibration instances
    calibration : int, number of calibration instances (>= 1)
    chi_cap : int, largest chi tried
    strategies : names to calibrate (default DEFAULT_STRATEGIES present in the catalog)
    allow_exact : bool, False: exact strategies serve as the reference only, never as the choice
        (to pick an approximate setting, e.g. for larger sizes of the same family)
    store : ChoiceStore, optional; a stored choice for the same key is returned
        (``from_store`` True) and a new one is saved
    progress : called with each candidate once it is measured
    """
    target, budget = target or Target(), budget or Budget()
    if calibration < 1:
        raise TnarenaError(f"the number of calibration instances must be at least 1, not {calibration!r}.")
    ladder = chi_ladder(int(chi_cap))
    table = validate_table(noise_table, code.n)
    chosen_strategies = _strategies(catalog, strategies)
    structure = NetworkBuilder(code, table).structure
    names = [s.name for s in chosen_strategies]
    key, question = choice_question(structure.fingerprint, table, target, budget, seed, calibration, chi_cap, names,
                                    allow_exact)
    if store is not None:
        stored = store.get(key)
        if stored is not None:
            return stored
    errors = calibration_errors(table, seed, structure.fingerprint, calibration)
    notify = progress or (lambda candidate: None)
    candidates: list[Candidate] = []
    exacts = [s for s in chosen_strategies if s.exact]
    costs = exact_costs(exacts, structure)
    reference: Run | None = None
    for strategy in exacts:
        run = run_setting(code, table, strategy, _exact_params(strategy), errors)
        candidates.append(run.candidate)
        if run.log_probs is not None:
            compare(run, run, "itself")
            reference = reference or run
        notify(run.candidate)
        if allow_exact and run.candidate.fits(budget):
            return _finish(run.candidate, True, candidates, costs, structure.fingerprint, (key, question),
                           target, budget, seed, calibration, store)
    for strategy in chosen_strategies:
        if strategy.exact or not any(p.name == "chi" for p in strategy.parameters):
            continue
        directions, rows = rank_directions(strategy, structure, ladder[len(ladder) // 2])
        costs.extend(rows)
        for direction in directions:
            extra = {} if direction is None else {"direction": direction}
            _track(code, table, strategy, extra, ladder, errors, reference, target, budget, candidates, notify)
    chosen, met = select([c for c in candidates if allow_exact or c.strategy not in {s.name for s in exacts}],
                         target, budget)
    return _finish(chosen, met, candidates, costs, structure.fingerprint, (key, question), target, budget, seed,
                   calibration, store)


def _track(code, table, strategy: Strategy, extra: dict, ladder: list[int], errors, reference: Run | None,
           target: Target, budget: Budget, candidates: list[Candidate], notify) -> None:
    """Run one strategy and direction at increasing chi until the target is met (see module docstring)."""
    previous: Run | None = None
    for chi in ladder:
        run = run_setting(code, table, strategy, {"chi": chi, **extra}, errors, time_limit=budget.seconds_per_decode)
        candidate = run.candidate
        candidates.append(candidate)
        notify(candidate)
        if candidate.status != "ok":
            return
        if reference is not None:
            compare(run, reference, reference.candidate.strategy)
            if candidate.meets(target):
                return
        elif previous is not None:
            compare(previous, run, f"chi={chi}")
            if previous.candidate.meets(target):
                _add_note(candidate, "the reference of the chi before")
                return
        if candidate.seconds_per_decode > budget.seconds_per_decode:
            _add_note(candidate, "over the time budget: larger chi not tried")
            return
        if (candidate.memory_bytes or 0.0) > budget.memory_bytes:
            _add_note(candidate, "over the memory budget: larger chi not tried")
            return
        previous = run
    if reference is None:
        _add_note(candidate, "largest chi: nothing larger to compare with")


def _add_note(candidate: Candidate, text: str) -> None:
    candidate.note = f"{candidate.note}; {text}" if candidate.note else text


def select(candidates: list[Candidate], target: Target, budget: Budget) -> tuple[Candidate, bool]:
    """The chosen candidate and whether it met the target (rule in the module docstring)."""
    eligible = [c for c in candidates if c.meets(target) and c.fits(budget)]
    if eligible:
        fastest = min(c.seconds_per_decode for c in eligible)
        near = [c for c in eligible if c.seconds_per_decode <= fastest * (1.0 + TIME_TOLERANCE)]
        return min(near, key=lambda c: (c.params.get("chi", 0), candidates.index(c))), True
    fitting = [c for c in candidates if c.fits(budget) and c.error is not None]
    if fitting:
        return min(fitting, key=lambda c: (c.error, -c.agreement, candidates.index(c))), False
    ran = [c for c in candidates if c.status == "ok"]
    if ran:
        return min(ran, key=lambda c: (c.seconds_per_decode, candidates.index(c))), False
    reasons = "; ".join(f"{c.label}: {c.note}" for c in candidates[:3])
    raise TnarenaError(f"no strategy setting could decode this code ({reasons}); try other strategies or a larger budget.")


def _finish(chosen: Candidate, met: bool, candidates, costs, fingerprint: str, asked: tuple[str, dict],
            target: Target, budget: Budget, seed: int, calibration: int, store: ChoiceStore | None) -> Choice:
    chosen.chosen = True
    choice = Choice(chosen.strategy, dict(chosen.params), met, target, budget, seed, calibration, candidates,
                    costs, fingerprint, *asked)
    if store is not None:
        store.put(choice)
    return choice


def _exact_params(strategy: Strategy) -> dict[str, Any]:
    declared = {p.name for p in strategy.parameters}
    params = {k: v for k, v in EXACT_SEARCH.items() if k in declared}
    if "max_intermediate" in declared:
        params["max_intermediate"] = REFERENCE_MAX_INTERMEDIATE
    return params


def _strategies(catalog: Catalog, names: Sequence[str] | None) -> list[Strategy]:
    if names is None:
        found = [catalog.strategies[n] for n in DEFAULT_STRATEGIES if n in catalog.strategies]
        if not found:
            raise TnarenaError("none of the default strategies (" + ", ".join(DEFAULT_STRATEGIES)
                               + ") is installed; name some with --strategy.")
        return found
    if not names:
        raise TnarenaError("give at least one strategy to choose from.")
    out = [catalog.strategy(n) for n in dict.fromkeys(names)]
    for s in out:
        if not s.exact and not any(p.name == "chi" for p in s.parameters):
            raise TnarenaError(f"strategy {s.name!r} is approximate but has no 'chi' parameter to calibrate; "
                               "leave it out.")
    return out


__all__ = ["DEFAULT_STRATEGIES", "calibration_errors", "chi_ladder", "choose", "select"]
