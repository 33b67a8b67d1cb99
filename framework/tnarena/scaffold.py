"""Write a new strategy plugin folder: pyproject with the entry point, module, test.

The generated strategy is exact but naive (one numpy einsum over the whole
network, for tiny networks only): a correct starting point to replace.
"""

from __future__ import annotations

import re
from pathlib import Path

from tnarena.errors import TnarenaError

_PYPROJECT = '''\
[build-system]
requires = ["setuptools>=77", "wheel"]
build-backend = "setuptools.build_meta"

[project]
name = "tnarena-{dist}"
version = "0.1.0"
description = "tnarena strategy plugin: {name}"
requires-python = ">=3.11"
dependencies = ["tnarena", "numpy"]

[project.optional-dependencies]
test = ["pytest"]

[project.entry-points."tnarena.plugins"]
{name} = "{package}"

[tool.setuptools]
packages = ["{package}"]
'''

_MODULE = '''\
"""tnarena strategy plugin `{name}`.

Replace ``plan`` and ``contract`` with your method. ``plan`` runs once per
network structure; ``contract`` once per set of arrays and returns the natural
log of |value of the arrays| (the host adds ``network.log_scale``).
"""

from __future__ import annotations

import math

import numpy as np

import tnarena
from tnarena.errors import TnarenaError
from tnarena.strategy import Estimate, Parameter, Strategy

#: numpy.einsum names indices with letters: at most this many distinct ones.
MAX_INDICES = 52


class {cls}(Strategy):
    name = "{name}"
    summary = "one numpy einsum over the whole network (template; tiny networks only)"
    exact = True
    parameters = (
        Parameter("optimize", "str", "greedy", "numpy.einsum path search", choices=("greedy", "optimal")),
    )

    def plan(self, structure, params):
        inputs, qubit_nodes = structure.hyperedges()
        generators = sorted({{g for term in inputs for g in term}})
        if len(generators) > MAX_INDICES:
            raise TnarenaError(
                f"strategy '{name}' handles at most {{MAX_INDICES}} generators, this network has "
                f"{{len(generators)}}; use a smaller code or another strategy."
            )
        letter = {{g: i for i, g in enumerate(generators)}}
        terms = [[letter[g] for g in term] for term in inputs]
        return terms, qubit_nodes, params["optimize"]

    def contract(self, plan, network):
        terms, qubit_nodes, optimize = plan
        operands = []
        for term, node in zip(terms, qubit_nodes):
            operands += [network.arrays[node], term]
        value = float(np.einsum(*operands, [], optimize=optimize)) if operands else 1.0
        return Estimate(math.log(abs(value)) if value else -math.inf, {{}})


@tnarena.hookimpl
def tnarena_register_strategies(register):
    register({cls}())
'''

_TEST = '''\
"""Tests of the `{name}` strategy against the built-in exact strategy."""

import numpy as np
import pytest

from tnarena.catalog import load_catalog
from tnarena.network import NetworkBuilder
from tnarena.noise import make_noise, sample_errors


def test_agrees_with_exact_on_a_small_code():
    catalog = load_catalog(strict=True)
    code = catalog.build_code("surface", "square", 3)
    table = make_noise("depolarizing", code.n, 0.1)
    builder = NetworkBuilder(code, table)
    mine, exact = catalog.strategy("{name}"), catalog.strategy("exact")
    plan_mine = mine.plan(builder.structure, mine.resolve({{}}))
    plan_exact = exact.plan(builder.structure, exact.resolve({{}}))
    network = builder.network(sample_errors(table, np.random.default_rng(0)))
    assert mine.contract(plan_mine, network).log_value == pytest.approx(
        exact.contract(plan_exact, network).log_value, rel=1e-10
    )
'''


def scaffold_strategy(name: str, directory: str | Path) -> Path:
    """Create ``directory/<name>/`` holding a plugin that registers strategy ``name``.

    Returns the folder. Refuses names that are not lowercase identifiers and
    folders that already exist.
    """
    if not re.fullmatch(r"[a-z][a-z0-9_]*", name or ""):
        raise TnarenaError(
            f"plugin name {name!r} must be a lowercase identifier (letters, digits, _), e.g. my_sweep."
        )
    root = Path(directory) / name
    if root.exists():
        raise TnarenaError(f"{root} already exists; choose another name or folder.")
    package = f"tnarena_{name}"
    cls = "".join(part.capitalize() for part in name.split("_")) + "Strategy"
    fields = {"name": name, "package": package, "cls": cls, "dist": name.replace("_", "-")}
    (root / package).mkdir(parents=True)
    (root / "tests").mkdir()
    (root / "pyproject.toml").write_text(_PYPROJECT.format(**fields))
    (root / package / "__init__.py").write_text(_MODULE.format(**fields))
    (root / "tests" / f"test_{name}.py").write_text(_TEST.format(**fields))
    return root
