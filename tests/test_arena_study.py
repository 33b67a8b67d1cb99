"""Study files: what is accepted, and one clear sentence for everything that is not.

Source: the TOML 1.0 specification (read by the standard library's tomllib)
for the syntax; the messages are our own contract (README, "Study files").
"""

import copy

import pytest

from tnarena.arena.study import parse_study, read_study
from tnarena.cli import main
from tnarena.errors import TnarenaError

GOOD = {
    "title": "t", "seed": 1, "samples": 4,
    "codes": [{"family": "surface", "lattices": ["square", "kagome"], "sizes": [3, 5]},
              {"family": "color_666", "sizes": [3]}],
    "noise": [{"model": "bit_flip", "rates": [0.05, 0.1]}, {"model": "biased", "rates": [0.1], "options": {"eta": 10}}],
    "strategies": [{"name": "sweep", "grid": {"chi": [4, 8], "direction": [0, "auto"]}, "params": {"cutoff": 0.0}},
                   {"name": "exact"}],
}


def test_a_good_study_expands_its_grid(catalog):
    study = parse_study(GOOD, catalog)
    assert len(study.points) == (2 * 2 + 1) * 3  # (lattices x sizes + colour code) x noise points
    assert [s.label for s in study.settings] == [
        "sweep(chi=4,cutoff=0.0,direction=0)", "sweep(chi=4,cutoff=0.0,direction=auto)",
        "sweep(chi=8,cutoff=0.0,direction=0)", "sweep(chi=8,cutoff=0.0,direction=auto)", "exact"]
    assert study.reference.label == "exact"
    assert study.fallback.label == "sweep(chi=8,cutoff=0.0,direction=0)"  # the largest chi, first of equals
    assert study.points[-1].lattice is None


def broken(path, value):
    data = copy.deepcopy(GOOD)
    *head, last = path
    target = data
    for key in head:
        target = target[key]
    if value is KeyError:
        del target[last]
    else:
        target[last] = value
    return data


@pytest.mark.parametrize("path, value, message", [
    (("colour",), 1, "unknown key 'colour'; the keys here are: title, seed"),
    (("seed",), KeyError, "the key 'seed' is missing"),
    (("seed",), "one", "seed must be an integer, not 'one'"),
    (("samples",), 0, "samples = 0; give at least 1"),
    (("time_limit",), -2, "time_limit = -2 s; give a positive"),
    (("memory_limit",), 8, "memory_limit = 8 MiB is too small"),
    (("codes", 0, "family"), "toric_donut", "codes[0]: code family 'toric_donut' is unknown; known: color_488, color_666"),
    (("codes", 0, "lattices"), ["square", "penrose"], "lattice 'penrose' is unknown; known: delaunay"),
    (("codes", 0, "sizes"), [3, 1], "codes[0]: sizes holds 1; give integers >= 2"),
    (("codes", 0, "depth"), 2, "codes[0]: unknown key 'depth'"),
    (("noise", 0, "model"), "cosmic_rays", "noise[0]: noise model 'cosmic_rays' is unknown; known: biased"),
    (("noise", 0, "rates"), [0.1, 1.5], "noise[0]: the rate 1.5 is outside [0, 1]"),
    (("noise", 1, "options"), {"eta": 10, "tilt": 3}, "noise[1]: noise model 'biased' refused its options"),
    (("strategies", 0, "name"), "annealing", "strategies[0]: strategy 'annealing' is unknown; known: columns"),
    (("strategies", 0, "grid"), {"chi": [4, 0]}, "strategies[0]: strategy 'sweep' parameter 'chi' = 0 is outside"),
    (("strategies", 0, "grid"), {"chi": 8}, "grid.chi must be a non-empty list"),
    (("strategies", 0, "params"), {"chi": 3}, "'chi' is in both params and grid"),
    (("strategies", 1, "params"), {"chi": 3}, "strategy 'exact' has no parameter 'chi'"),
    (("strategies",), [], "strategies is empty"),
    (("reference",), {"strategy": "sweep", "params": {"direction": "sideways"}}, "reference: strategy 'sweep'"),
])
def test_bad_studies_are_refused_naming_the_key(catalog, path, value, message):
    with pytest.raises(TnarenaError) as info:
        parse_study(broken(path, value), catalog, where="s.toml")
    assert message in str(info.value)
    assert str(info.value).startswith("s.toml")


def test_repeated_setting_is_refused(catalog):
    data = broken(("strategies",), [{"name": "exact"}, {"name": "exact"}])
    with pytest.raises(TnarenaError, match="repeats the setting exact"):
        parse_study(data, catalog)


def test_invalid_toml_names_the_file_and_line(catalog, tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("seed = 1\nsamples = = 3\n")
    with pytest.raises(TnarenaError, match=r"bad.toml' is not valid TOML: .*line 2"):
        read_study(str(bad), catalog)


def test_cli_run_of_a_bad_study_is_one_line_and_exit_2(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text('seed = 1\nsamples = 2\n[[codes]]\nfamily = "surface"\nsizes = [3]\n'
                   '[[noise]]\nmodel = "bit_flip"\nrates = [0.1]\n[[strategies]]\nname = "nope"\n')
    assert main(["run", str(bad), "--db", str(tmp_path / "x.db")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("tnarena: error:") and "strategy 'nope' is unknown" in err[0]


def test_a_database_of_another_seed_is_refused(tmp_path, capsys):
    study = tmp_path / "s.toml"
    text = ('seed = {}\nsamples = 1\n[[codes]]\nfamily = "surface"\nlattices = ["square"]\nsizes = [3]\n'
            '[[noise]]\nmodel = "bit_flip"\nrates = [0.1]\n[[strategies]]\nname = "sweep"\n'
            '[reference]\nstrategy = "sweep"\n')
    study.write_text(text.format(1))
    db = str(tmp_path / "s.db")
    assert main(["run", str(study), "--db", db, "--quiet", "--workers", "1"]) == 0
    study.write_text(text.format(2))
    assert main(["run", str(study), "--db", db, "--quiet"]) == 2
    assert "holds a study with seed 1, not 2" in capsys.readouterr().err


def test_compare_runs_without_a_study_file(capsys):
    code = main(["compare", "--size", "3", "--samples", "2", "--setting", "sweep:chi=4", "--setting", "exact",
                 "--workers", "1", "--quiet"])
    out = capsys.readouterr().out
    assert code == 0 and "sweep(chi=4)" in out and "reference: exact" in out and "2/2" in out


def test_baselines_join_the_settings_and_unknown_ones_are_refused(catalog):
    study = parse_study(dict(GOOD, baselines=[{"name": "matching"}]), catalog)
    assert study.settings[-1].label == "matching" and study.settings[-1].kind == "baseline"
    with pytest.raises(TnarenaError, match=r"baselines\[0\]: baseline decoder 'oracle' is unknown; known: matching"):
        parse_study(dict(GOOD, baselines=[{"name": "oracle"}]), catalog)
    with pytest.raises(TnarenaError, match=r"baselines\[0\]: unknown key 'chi'"):
        parse_study(dict(GOOD, baselines=[{"name": "matching", "chi": 4}]), catalog)


@pytest.mark.parametrize("entry, message", [
    ({"name": "auto", "grid": {"chi": [4]}}, "the automatic choice takes params, not a grid"),
    ({"name": "auto", "params": {"chi": 4}}, "the automatic choice has no option 'chi'; its options are: target_error"),
    ({"name": "auto", "params": {"target_agreement": 1.5}}, "auto option target_agreement = 1.5 is out of range"),
    ({"name": "auto", "params": {"calibration": 2.5}}, "auto option calibration must be an integer"),
])
def test_bad_automatic_choice_options_are_refused(catalog, entry, message):
    with pytest.raises(TnarenaError, match=message):
        parse_study(broken(("strategies",), [entry]), catalog)
