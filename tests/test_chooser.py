"""The automatic choice of a strategy setting (tnarena.chooser, tnarena choose).

References: exact contraction (the ``exact`` strategy, checked elsewhere against
brute-force group sums) is the reference for every accuracy check here; the
line-crossing counts are closed forms for a grid graph (common practice).
No assertion is made on time values.
"""

from __future__ import annotations

import argparse

import numpy as np
import pytest

from tnarena.chooser import Budget, ChoiceStore, Target, choose, line_crossings, report
from tnarena.cli_choose import add_commands
from tnarena.decode import Decoder
from tnarena.errors import TnarenaError
from tnarena.network import GENERATOR, QUBIT, NetworkBuilder, NetworkStructure
from tnarena.noise import make_noise, sample_errors

TARGET = Target(max_error=1e-3, min_agreement=0.99)


def _square(catalog, size: int):
    code = catalog.build_code("surface", "square", size)
    return code, make_noise("bit_flip", code.n, 0.08)


def _grid_structure(side: int) -> NetworkStructure:
    """A side x side grid graph at integer positions (kinds alternate; only geometry matters here)."""
    index = {(x, y): x * side + y for x in range(side) for y in range(side)}
    bonds = [(index[x, y], index[x + 1, y]) for x in range(side - 1) for y in range(side)]
    bonds += [(index[x, y], index[x, y + 1]) for x in range(side) for y in range(side - 1)]
    node_bonds = [[] for _ in index]
    for b, (u, v) in enumerate(bonds):
        node_bonds[u].append(b)
        node_bonds[v].append(b)
    kinds = tuple(GENERATOR if (x + y) % 2 else QUBIT for (x, y) in index)
    positions = np.array(list(index), dtype=float)
    return NetworkStructure(kinds, tuple(range(side * side)), positions, np.array(bonds),
                            tuple(tuple(nb) for nb in node_bonds))


def test_line_crossings_on_a_grid_graph():
    """A side x side grid: a line across the x axis cuts `side` bonds at every offset; a diagonal
    one cuts at most 2 (side - 1), between the two middle anti-diagonals (closed form, common practice)."""
    side = 5
    structure = _grid_structure(side)
    assert line_crossings(structure, 0.0) == {"max_crossings": side, "mean_crossings": side}
    assert line_crossings(structure, 90.0)["max_crossings"] == side
    assert line_crossings(structure, 45.0)["max_crossings"] == 2 * (side - 1)


def test_cheap_exact_is_chosen(catalog):
    """Square surface code d = 5 under bit flip: exact contraction fits a 1 GiB, 1 s budget, so it is the choice."""
    code, table = _square(catalog, 5)
    choice = choose(code, table, catalog, TARGET, Budget(2.0**30, 1.0), seed=3, calibration=3)
    assert choice.strategy == "exact" and choice.met
    assert [c.chosen for c in choice.candidates] == [True]
    assert "* " in report(choice)


def _exact_bytes(catalog, code, table) -> float:
    """Largest intermediate of exact's greedy tree, bytes (its plan keeps greedy as a floor)."""
    exact = catalog.strategy("exact")
    return exact.cost(NetworkBuilder(code, table).structure, exact.resolve({}))["largest_intermediate"] * 8


def _exact_log_probs(catalog, code, table, errors):
    decoder = Decoder(code, table, catalog.strategy("exact"), {"method": "greedy"})
    results = [decoder.decode_error(e) for e in errors]
    return np.array([[c.log_prob for c in r.classes] for r in results]), [r.decision for r in results]


def test_under_a_small_memory_budget_the_choice_meets_the_target_on_fresh_instances(catalog):
    """Square d = 11, bit flip, memory budget half of exact's largest intermediate: the chosen approximate
    setting, decoded on 8 fresh seeded instances, stays within the target of exact contraction there
    (mean |dlnP| over possible classes, decision agreement)."""
    code, table = _square(catalog, 11)
    budget = Budget(memory_bytes=_exact_bytes(catalog, code, table) / 2, seconds_per_decode=30.0)
    choice = choose(code, table, catalog, TARGET, budget, seed=5, calibration=4)
    assert choice.strategy != "exact" and choice.met
    assert next(c for c in choice.candidates if c.strategy == "exact").memory_bytes > budget.memory_bytes

    rng = np.random.default_rng(np.random.SeedSequence([2026, 11]))  # not the chooser's instances
    fresh = [sample_errors(table, rng) for _ in range(8)]
    reference, ref_decisions = _exact_log_probs(catalog, code, table, fresh)
    decoder = Decoder(code, table, catalog.strategy(choice.strategy), choice.params)
    results = [decoder.decode_error(e) for e in fresh]
    ours = np.array([[c.log_prob for c in r.classes] for r in results])
    possible = np.isfinite(reference)
    assert np.isfinite(ours[possible]).all()
    assert np.abs(ours[possible] - reference[possible]).mean() <= TARGET.max_error
    agreement = np.mean([r.decision == d for r, d in zip(results, ref_decisions)])
    assert agreement >= TARGET.min_agreement


def test_the_same_seed_gives_the_same_choice(catalog):
    """Square d = 9 with a memory budget too small for exact: two runs with seed 7 pick the same
    setting and measure the same errors (the errors are deterministic; only timings vary)."""
    code, table = _square(catalog, 9)
    budget = Budget(memory_bytes=_exact_bytes(catalog, code, table) / 2, seconds_per_decode=30.0)
    first, second = (choose(code, table, catalog, TARGET, budget, seed=7, calibration=3,
                            strategies=("exact", "sweep")) for _ in range(2))
    assert first.strategy == "sweep" and first.met
    assert first.label == second.label
    assert [(c.label, c.error) for c in first.candidates] == [(c.label, c.error) for c in second.candidates]


def test_a_second_call_is_answered_from_the_store(catalog, tmp_path):
    """The same structure, noise, target, budget and seed: the stored choice comes back; another seed is new."""
    code, table = _square(catalog, 5)
    path = str(tmp_path / "choices.db")
    store = ChoiceStore(path)
    first = choose(code, table, catalog, TARGET, Budget(), seed=1, calibration=2, store=store)
    store.close()
    store = ChoiceStore(path)
    again = choose(code, table, catalog, TARGET, Budget(), seed=1, calibration=2, store=store)
    other = choose(code, table, catalog, TARGET, Budget(), seed=2, calibration=2, store=store)
    assert not first.from_store and again.from_store and not other.from_store
    assert again.label == first.label and again.candidates == first.candidates
    assert len(store.for_structure(first.fingerprint)) == 2
    assert "answered from the store" in report(again)


def _cli(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(prog="tnarena")
    add_commands(parser.add_subparsers(dest="command"))
    args = parser.parse_args(argv)
    return args.run(args)


def test_the_choose_command_prints_the_table_and_then_answers_from_the_store(tmp_path, capsys):
    """tnarena choose twice on the same code and --db: the second output says it came from the store."""
    argv = ["choose", "--size", "3", "--noise", "bit_flip", "--rate", "0.05", "--calibration", "2",
            "--db", str(tmp_path / "c.db")]
    assert _cli(argv) == 0
    out = capsys.readouterr().out
    assert out.startswith("chosen: exact") and "candidates (* chosen)" in out and "stored in" in out
    assert _cli(argv) == 0
    assert "answered from the store" in capsys.readouterr().out


@pytest.mark.parametrize("extra, words", [
    (["--target-agreement", "1.5"], "agreement"),
    (["--target-error", "0"], "target error"),
    (["--budget-ms", "-1"], "--budget-ms"),
    (["--calibration", "0"], "calibration"),
    (["--chi-cap", "1"], "chi cap"),
    (["--strategy", "nonesuch"], "nonesuch"),
])
def test_bad_options_give_one_line_errors(tmp_path, extra, words):
    """Each bad option is refused with a one-sentence TnarenaError naming it."""
    with pytest.raises(TnarenaError) as info:
        _cli(["choose", "--size", "3", "--noise", "bit_flip", "--no-store", *extra])
    message = str(info.value)
    assert words in message and "\n" not in message
