"""The command line: readable output, JSON for machines, one clear line for every user mistake."""

import json
import subprocess
import sys

import pytest

from tnarena.cli import main


def run(capsys, *argv):
    code = main(list(argv))
    out = capsys.readouterr()
    return code, out.out, out.err


def test_help_teaches_with_examples():
    proc = subprocess.run([sys.executable, "-m", "tnarena.cli", "--help"], capture_output=True, text=True)
    assert proc.returncode == 0
    assert "examples:" in proc.stdout and "tnarena decode" in proc.stdout


def test_list_shows_every_section_and_strategy_parameters(capsys):
    code, out, _ = run(capsys, "list")
    assert code == 0
    for word in ("lattices:", "code families:", "noise models:", "strategies:", "kagome", "surface",
                 "depolarizing", "exact", "search_time", "max_intermediate"):
        assert word in out


def test_plugins_shows_distribution_and_version(capsys):
    code, out, _ = run(capsys, "plugins")
    assert code == 0 and "tnarena-exact-tree" in out and "strategy:exact" in out


def test_decode_prints_a_table(capsys):
    code, out, _ = run(capsys, "decode", "--size", "3", "--noise", "bit_flip", "--rate", "0.1", "--seed", "2",
                       "--param", "search_time=0.2")
    assert code == 0
    assert "surface/square/d3" in out and "<- decision" in out and "impossible" in out


def test_decode_json_is_complete(capsys):
    code, out, _ = run(capsys, "decode", "--lattice", "kagome", "--size", "3", "--seed", "5", "--json",
                       "--param", "search_time=0.2")
    assert code == 0
    doc = json.loads(out)
    assert [c["class"] for c in doc["classes"]] == ["I", "X", "Y", "Z"]
    assert sum(c["posterior"] for c in doc["classes"]) == pytest.approx(1.0)
    assert doc["decision"] in {"I", "X", "Y", "Z"} and isinstance(doc["failed"], bool)


def test_same_seed_same_output(capsys):
    args = ("decode", "--size", "3", "--seed", "9", "--json", "--param", "search_time=0.1")
    a = json.loads(run(capsys, *args)[1])
    b = json.loads(run(capsys, *args)[1])
    assert [c["log_prob"] for c in a["classes"]] == pytest.approx([c["log_prob"] for c in b["classes"]], rel=1e-12)
    assert a["error_weight"] == b["error_weight"]


def test_write_code_then_decode_it(capsys, tmp_path):
    path = tmp_path / "tri.json"
    code, out, _ = run(capsys, "write-code", "--lattice", "triangular", "--size", "2", "-o", str(path))
    assert code == 0 and path.exists()
    code, out, _ = run(capsys, "decode", "--code-file", str(path), "--rate", "0.05", "--param", "search_time=0.1")
    assert code == 0 and "surface/triangular/d2" in out


@pytest.mark.parametrize(
    "argv, message",
    [
        (["decode", "--lattice", "penrose"], "lattice 'penrose' is unknown; known:"),
        (["decode", "--strategy", "magic"], "strategy 'magic' is unknown; known: "),
        (["decode", "--rate", "1.5"], "outside [0, 1]"),
        (["decode", "--noise", "gaussian"], "noise model 'gaussian' is unknown"),
        (["decode", "--param", "chi"], "--param 'chi' is not KEY=VALUE"),
        (["decode", "--param", "chi=3"], "has no parameter 'chi'"),
        (["decode", "--size", "1"], "must be a whole number >= 2"),
        (["decode", "--code", "color_666", "--lattice", "square"], "has its own hexagonal geometry"),
        (["decode", "--code-file", "/nonexistent/code.json"], "/nonexistent/code.json"),
    ],
)
def test_user_mistakes_exit_2_with_one_clear_line(capsys, argv, message):
    code, out, err = run(capsys, *argv)
    assert code == 2
    assert err.startswith("tnarena: error: ") and message in err
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1


def test_malformed_code_file_is_one_clear_line(capsys, tmp_path):
    path = tmp_path / "bad.json"
    path.write_text('{"format": "tnarena-code", "version": 1,')
    code, _, err = run(capsys, "decode", "--code-file", str(path))
    assert code == 2 and "bad.json" in err and "Traceback" not in err


def test_a_broken_plugin_makes_plugins_exit_nonzero(capsys, monkeypatch):
    from importlib import metadata

    from tnarena import catalog as catalog_module

    real = metadata.entry_points

    def with_broken(**kwargs):
        return list(real(**kwargs)) + [metadata.EntryPoint("zz_broken", "no_such_module_xyz", kwargs["group"])]

    monkeypatch.setattr(catalog_module.metadata, "entry_points", with_broken)
    code, out, _ = run(capsys, "plugins")
    assert code == 1 and "zz_broken" in out and "FAILED: ModuleNotFoundError" in out


def test_noise_table_from_a_file(capsys, tmp_path):
    """A user-supplied table equal to bit flip gives the same ln P as the bit_flip model."""
    path = tmp_path / "noise.csv"
    path.write_text("# P(I), P(X), P(Y), P(Z)\n" + "0.9, 0.1, 0, 0\n" * 13)
    common = ("decode", "--size", "3", "--seed", "4", "--json", "--param", "search_time=0.1")
    table = json.loads(run(capsys, *common, "--noise-table", str(path))[1])
    model = json.loads(run(capsys, *common, "--noise", "bit_flip", "--rate", "0.1")[1])
    assert table["noise"] == "table"
    assert [c["log_prob"] for c in table["classes"]] == pytest.approx([c["log_prob"] for c in model["classes"]])
    path.write_text("0.9, 0.1, 0\n")
    code, _, err = run(capsys, *common, "--noise-table", str(path))
    assert code == 2 and "has 3 numbers; give P(I) P(X) P(Y) P(Z)" in err
