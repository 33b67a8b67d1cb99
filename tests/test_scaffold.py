"""`tnarena new-plugin`: the scaffolded plugin installs, is listed, and runs next to the built-ins."""

import json
import subprocess
import sys
import uuid

import pytest

from tnarena.errors import TnarenaError
from tnarena.scaffold import scaffold_strategy


def _pip(*args):
    return subprocess.run([sys.executable, "-m", "pip", *args], capture_output=True, text=True)


def test_scaffolded_plugin_installs_lists_and_runs(tmp_path):
    name = f"scaffold_{uuid.uuid4().hex[:8]}"
    proc = subprocess.run([sys.executable, "-m", "tnarena.cli", "new-plugin", name, "--dir", str(tmp_path)],
                          capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    root = tmp_path / name
    install = _pip("install", "--quiet", "--no-deps", "--no-build-isolation", "-e", str(root))
    assert install.returncode == 0, install.stderr
    try:
        listed = subprocess.run([sys.executable, "-m", "tnarena.cli", "plugins"], capture_output=True, text=True)
        assert name in listed.stdout and f"strategy:{name}" in listed.stdout
        assert "tnarena-exact-tree" in listed.stdout  # the built-ins still load beside it
        decode = subprocess.run(
            [sys.executable, "-m", "tnarena.cli", "decode", "--size", "3", "--strategy", name, "--json"],
            capture_output=True, text=True,
        )
        assert decode.returncode == 0, decode.stderr
        assert json.loads(decode.stdout)["strategy"] == name
        own_test = subprocess.run([sys.executable, "-m", "pytest", "-q", str(root / "tests")],
                                  capture_output=True, text=True)
        assert own_test.returncode == 0, own_test.stdout
    finally:
        _pip("uninstall", "--yes", f"tnarena-{name.replace('_', '-')}")
    after = subprocess.run([sys.executable, "-m", "tnarena.cli", "plugins"], capture_output=True, text=True)
    assert name not in after.stdout


@pytest.mark.parametrize("name", ["My-Plugin", "9lives", ""])
def test_bad_plugin_names_are_refused(tmp_path, name):
    with pytest.raises(TnarenaError, match="must be a lowercase identifier"):
        scaffold_strategy(name, tmp_path)


def test_existing_folder_is_not_overwritten(tmp_path):
    scaffold_strategy("twice", tmp_path)
    with pytest.raises(TnarenaError, match="already exists"):
        scaffold_strategy("twice", tmp_path)
