"""Plugin loading and the registry: built-ins through entry points, broken plugins isolated."""

import inspect
from importlib import metadata

import pytest

import tnarena
from tnarena import catalog as catalog_module
from tnarena import hookspecs
from tnarena.catalog import load_catalog
from tnarena.errors import PluginError, TnarenaError
from tnarena.strategy import Estimate, Parameter, Strategy


class _Trivial(Strategy):
    name = "trivial_test"
    summary = "returns 0 for every network (test double)"
    exact = False
    parameters = (Parameter("chi", "int", 4, "bond dimension", minimum=1),)

    def plan(self, structure, params):
        return None

    def contract(self, plan, network):
        return Estimate(0.0)


class _GoodPlugin:
    @tnarena.hookimpl
    def tnarena_register_strategies(self, register):
        register(_Trivial())


class _RaisingPlugin:
    @tnarena.hookimpl
    def tnarena_register_strategies(self, register):
        raise RuntimeError("database not reachable")


class _WrongArgumentPlugin:
    @tnarena.hookimpl
    def tnarena_register_strategies(self, register, chi):
        pass


class _DuplicatePlugin:
    @tnarena.hookimpl
    def tnarena_register_strategies(self, register):
        register(_Trivial())


class _NotAStrategyPlugin:
    @tnarena.hookimpl
    def tnarena_register_strategies(self, register):
        register("exact")


def test_builtin_exact_strategy_comes_through_the_entry_point():
    cat = load_catalog(strict=True)
    record = next(r for r in cat.plugins if "strategy:exact" in r.provides)
    assert record.ok and record.distribution == "tnarena-exact-tree"
    assert cat.strategy_origin["exact"] == record.name
    assert cat.strategy("exact").exact is True


def test_a_broken_plugin_does_not_stop_the_others():
    cat = load_catalog(extra_plugins=[("raiser", _RaisingPlugin()), ("good", _GoodPlugin())])
    raiser = next(r for r in cat.plugins if r.name == "raiser")
    assert not raiser.ok and "database not reachable" in raiser.reason
    assert "trivial_test" in cat.strategies and "exact" in cat.strategies


def test_a_hook_with_a_wrong_signature_is_reported_with_the_plugin_name():
    cat = load_catalog(extra_plugins=[("wrongargs", _WrongArgumentPlugin())])
    rec = next(r for r in cat.plugins if r.name == "wrongargs")
    assert not rec.ok and "chi" in rec.reason and "wrongargs" in rec.reason


def test_duplicate_strategy_names_are_an_error_naming_both_plugins():
    cat = load_catalog(extra_plugins=[("first", _GoodPlugin()), ("second", _DuplicatePlugin())])
    rec = next(r for r in cat.plugins if r.name == "second")
    assert not rec.ok
    assert "plugin 'second': strategy 'trivial_test' is already registered by plugin 'first'" in rec.reason
    assert cat.strategy_origin["trivial_test"] == "first"


def test_registering_something_that_is_not_a_strategy_is_refused():
    cat = load_catalog(extra_plugins=[("notastrategy", _NotAStrategyPlugin())])
    rec = cat.plugins[-1]
    assert not rec.ok and "needs an instance of tnarena.strategy.Strategy" in rec.reason


def test_an_entry_point_that_cannot_be_imported_is_reported(monkeypatch):
    real = metadata.entry_points

    def with_broken(**kwargs):
        eps = list(real(**kwargs))
        return eps + [metadata.EntryPoint("aaa_broken", "no_such_module_for_tnarena", kwargs["group"])]

    monkeypatch.setattr(catalog_module.metadata, "entry_points", with_broken)
    cat = load_catalog()
    broken = next(r for r in cat.plugins if r.name == "aaa_broken")
    assert not broken.ok and "No module named 'no_such_module_for_tnarena'" in broken.reason
    assert "exact" in cat.strategies  # loaded after the broken one (sorted by name)
    with pytest.raises(PluginError, match="plugin 'aaa_broken' failed to load"):
        load_catalog(strict=True)


def test_unknown_names_list_the_known_ones():
    cat = load_catalog()
    with pytest.raises(TnarenaError, match="strategy 'sweep9' is unknown; known: .*exact"):
        cat.strategy("sweep9")
    with pytest.raises(TnarenaError, match="lattice 'penrose' is unknown; known: delaunay"):
        cat.lattice("penrose")
    with pytest.raises(TnarenaError, match="code family 'toric' is unknown"):
        cat.code_family("toric")


def test_every_hook_is_documented_with_its_signature():
    """Every hook carries the project prefix, takes only `register`, and documents it (STYLE.md)."""
    hooks = [f for name, f in vars(hookspecs).items() if name.startswith("tnarena_")]
    assert len(hooks) >= 4
    for hook in hooks:
        assert list(inspect.signature(hook).parameters) == ["register"]
        doc = inspect.getdoc(hook) or ""
        assert "register" in doc and "Returns" in doc


def test_parameter_validation_names_strategy_and_range():
    strat = _Trivial()
    assert strat.resolve({}) == {"chi": 4}
    assert strat.resolve({"chi": "8"}) == {"chi": 8}
    with pytest.raises(TnarenaError, match="strategy 'trivial_test' parameter 'chi' = 0 is outside its range"):
        strat.resolve({"chi": 0})
    with pytest.raises(TnarenaError, match="takes int in \\[1, inf\\], not 'many'"):
        strat.resolve({"chi": "many"})
