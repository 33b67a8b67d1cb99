"""Loading plugins and keeping the registry of what is available.

Load order (also in DEVELOPERS.md):

1. The built-in lattices, code families and noise models of the core.
2. Every entry point of the ``tnarena.plugins`` group, sorted by entry-point
   name; built-in strategies are plugins found this way too.
3. Objects passed as ``extra_plugins`` (tests use this), in the order given.

For each plugin, each hook implementation is called with a ``register``
bound to that plugin, so every entry is attributed to it. A plugin that fails
to import, has a malformed hook, or registers something invalid is recorded
as failed with the reason; the others still load. ``strict=True`` raises
:class:`PluginError` at the first failure instead (for CI).
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from importlib import metadata
from typing import Any

import pluggy

from tnarena import hookspecs
from tnarena.errors import PluginError, TnarenaError
from tnarena.strategy import Parameter, Strategy

_NAME = re.compile(r"^[a-z][a-z0-9_]*$")
CORE = "tnarena (core)"


@dataclass
class PluginRecord:
    """One plugin's load outcome, for ``tnarena plugins``."""

    name: str
    distribution: str
    version: str
    ok: bool = True
    reason: str = ""
    provides: list[str] = field(default_factory=list)


@dataclass(frozen=True)
class Entry:
    """A registered thing (lattice family, code family or noise model) and its origin."""

    name: str
    summary: str
    build: Callable[..., Any]
    plugin: str
    random: bool = False


class Catalog:
    """Everything that is available: strategies, lattices, code families, noise models."""

    def __init__(self) -> None:
        self.strategies: dict[str, Strategy] = {}
        self.strategy_origin: dict[str, str] = {}
        self.lattices: dict[str, Entry] = {}
        self.code_families: dict[str, Entry] = {}
        self.noise_models: dict[str, Entry] = {}
        self.plugins: list[PluginRecord] = []

    # ---- look-ups with clear errors -----------------------------------------
    def strategy(self, name: str) -> Strategy:
        return _lookup(self.strategies, name, "strategy", self._strategy_hint())

    def lattice(self, name: str) -> Entry:
        return _lookup(self.lattices, name, "lattice")

    def code_family(self, name: str) -> Entry:
        return _lookup(self.code_families, name, "code family")

    def noise_model(self, name: str) -> Entry:
        return _lookup(self.noise_models, name, "noise model")

    def build_code(self, family: str, lattice: str | None, size: int, *, seed: int = 0):
        """A code of the named family, on the named lattice family (or none)."""
        lattice_builder = None if lattice is None else self.lattice(lattice).build
        return self.code_family(family).build(lattice_builder, size, seed=seed)

    def _strategy_hint(self) -> str:
        failed = [p for p in self.plugins if not p.ok]
        if not failed:
            return ""
        return " (plugins that failed to load: " + "; ".join(f"{p.name}: {p.reason}" for p in failed) + ")"

    # ---- registration ----------------------------------------------------------
    def add_strategy(self, strategy: Any, plugin: str) -> None:
        _check_strategy(strategy, plugin)
        name = strategy.name
        if name in self.strategies:
            raise PluginError(
                f"plugin {plugin!r}: strategy {name!r} is already registered by plugin "
                f"{self.strategy_origin[name]!r}; strategy names must be unique, rename one."
            )
        self.strategies[name] = strategy
        self.strategy_origin[name] = plugin

    def add_entry(self, table: str, plugin: str, name: str, build: Callable, summary: str, random: bool = False) -> None:
        registry: dict[str, Entry] = getattr(self, table)
        what = table.rstrip("s").replace("_", " ")
        if not isinstance(name, str) or not _NAME.match(name):
            raise PluginError(f"plugin {plugin!r}: {what} name {name!r} must be a lowercase identifier.")
        if not callable(build):
            raise PluginError(f"plugin {plugin!r}: {what} {name!r} has a builder that is not callable.")
        if name in registry:
            raise PluginError(
                f"plugin {plugin!r}: {what} {name!r} is already registered by plugin "
                f"{registry[name].plugin!r}; rename one."
            )
        registry[name] = Entry(name, str(summary), build, plugin, bool(random))


def _lookup(registry: dict, name: str, what: str, hint: str = "") -> Any:
    if name not in registry:
        known = ", ".join(sorted(registry)) or "none"
        raise TnarenaError(f"{what} {name!r} is unknown; known: {known}.{hint}")
    return registry[name]


def _check_strategy(strategy: Any, plugin: str) -> None:
    label = f"plugin {plugin!r}, strategy {getattr(strategy, 'name', strategy)!r}"
    if not isinstance(strategy, Strategy):
        raise PluginError(f"{label}: register() needs an instance of tnarena.strategy.Strategy.")
    if not isinstance(strategy.name, str) or not _NAME.match(strategy.name):
        raise PluginError(f"{label}: 'name' must be a lowercase identifier such as 'my_sweep'.")
    if not isinstance(strategy.summary, str) or not strategy.summary.strip():
        raise PluginError(f"{label}: 'summary' must be a one-line description.")
    if not isinstance(strategy.exact, bool):
        raise PluginError(f"{label}: 'exact' must be True or False.")
    params = strategy.parameters
    if not isinstance(params, tuple) or not all(isinstance(p, Parameter) for p in params):
        raise PluginError(f"{label}: 'parameters' must be a tuple of tnarena.strategy.Parameter.")
    for p in params:
        if p.kind not in ("int", "float", "str", "bool"):
            raise PluginError(f"{label}: parameter {p.name!r} has kind {p.kind!r}; use int, float, str or bool.")
        try:
            p.coerce(p.default, owner=strategy.name)
        except TnarenaError as exc:
            raise PluginError(f"{label}: the default of parameter {p.name!r} is invalid: {exc}") from None


def _builtin_entries(catalog: Catalog) -> None:
    from tnarena.codes.families import CODE_FAMILIES
    from tnarena.lattices import LATTICE_FAMILIES
    from tnarena.noise import NOISE_MODELS

    for fam in LATTICE_FAMILIES.values():
        catalog.add_entry("lattices", CORE, fam.name, fam.build, fam.summary, fam.random)
    for fam in CODE_FAMILIES.values():
        catalog.add_entry("code_families", CORE, fam.name, fam.build, fam.summary)
    for model in NOISE_MODELS.values():
        catalog.add_entry("noise_models", CORE, model.name, model.build, model.summary)


_HOOKS = {
    "tnarena_register_strategies": lambda c, plugin: (lambda strategy: c.add_strategy(strategy, plugin)),
    "tnarena_register_lattices": lambda c, plugin: (
        lambda name, builder, summary, random=False: c.add_entry("lattices", plugin, name, builder, summary, random)
    ),
    "tnarena_register_code_families": lambda c, plugin: (
        lambda name, builder, summary: c.add_entry("code_families", plugin, name, builder, summary)
    ),
    "tnarena_register_noise_models": lambda c, plugin: (
        lambda name, builder, summary: c.add_entry("noise_models", plugin, name, builder, summary)
    ),
}


def load_catalog(*, strict: bool = False, extra_plugins: Iterable[tuple[str, Any]] = (), entry_points: bool = True) -> Catalog:
    """Build a Catalog: built-ins, then entry-point plugins by name, then ``extra_plugins``.

    extra_plugins : iterable of (name, plugin object or module).
    """
    catalog = Catalog()
    _builtin_entries(catalog)
    found: list[tuple[PluginRecord, Callable[[], Any]]] = []
    if entry_points:
        for ep in sorted(metadata.entry_points(group=hookspecs.ENTRY_POINT_GROUP), key=lambda e: e.name):
            dist = ep.dist.metadata["Name"] if ep.dist is not None else "?"
            version = ep.dist.version if ep.dist is not None else "?"
            found.append((PluginRecord(ep.name, dist, version), ep.load))
    for name, obj in extra_plugins:
        found.append((PluginRecord(name, "(passed in)", "-"), lambda obj=obj: obj))
    for record, load in found:
        catalog.plugins.append(record)
        try:
            _load_one(catalog, record, load())
        except Exception as exc:  # a broken plugin must not stop the others
            record.ok = False
            record.reason = f"{type(exc).__name__}: {exc}"
            if strict:
                raise PluginError(f"plugin {record.name!r} failed to load: {record.reason}") from exc
    return catalog


def _load_one(catalog: Catalog, record: PluginRecord, plugin: Any) -> None:
    pm = pluggy.PluginManager(hookspecs.PROJECT)
    pm.add_hookspecs(hookspecs)
    pm.register(plugin, name=record.name)
    pm.check_pending()
    before = _snapshot(catalog)
    staged = Catalog()
    for table in _TABLES:
        setattr(staged, table, dict(getattr(catalog, table)))
    for hook_name, make_register in _HOOKS.items():
        for impl in getattr(pm.hook, hook_name).get_hookimpls():
            impl.function(register=make_register(staged, record.name))
    for table in _TABLES:  # commit only when the whole plugin registered cleanly
        setattr(catalog, table, getattr(staged, table))
    record.provides = sorted(_snapshot(catalog) - before)


_TABLES = ("strategies", "strategy_origin", "lattices", "code_families", "noise_models")


def _snapshot(catalog: Catalog) -> set[str]:
    return (
        {f"strategy:{n}" for n in catalog.strategies}
        | {f"lattice:{n}" for n in catalog.lattices}
        | {f"code:{n}" for n in catalog.code_families}
        | {f"noise:{n}" for n in catalog.noise_models}
    )
