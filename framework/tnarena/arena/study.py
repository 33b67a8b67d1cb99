"""Study files: what to compare, on which instances. A TOML format of our own (README).

:func:`read_study` parses and validates a file; :func:`parse_study` a dict.
Everything is checked before anything runs: unknown keys, wrong types,
unknown names and impossible values each give one sentence naming the key.
"""

from __future__ import annotations

import itertools
import json
import tomllib
from dataclasses import dataclass, field
from typing import Any

from tnarena.catalog import Catalog
from tnarena.errors import TnarenaError

#: Keys of the top level and of each table, with the type each takes.
_TOP = {"title": str, "seed": int, "samples": int, "time_limit": (int, float), "memory_limit": (int, float),
        "trace_memory": int, "give_up_after": int, "profile": bool, "codes": list, "noise": list, "strategies": list, "baselines": list,
        "reference": dict}
_CODE = {"family": str, "lattices": list, "sizes": list}
_NOISE = {"model": str, "rates": list, "options": dict}
_STRATEGY = {"name": str, "params": dict, "grid": dict}
_BASELINE = {"name": str}
_REFERENCE = {"strategy": str, "params": dict, "fallback": dict}
_FALLBACK = {"strategy": str, "params": dict}
_REQUIRED = ("seed", "samples", "codes", "noise", "strategies")


@dataclass(frozen=True)
class Point:
    """One code under one noise model at one rate: instances are drawn here.

    family, lattice (None for codes with their own geometry), size, model, rate, options.
    """

    family: str
    lattice: str | None
    size: int
    model: str
    rate: float
    options: tuple[tuple[str, Any], ...] = ()

    @property
    def code_key(self) -> str:
        """Identifies the code (shared by every noise point on it); seeds random lattices."""
        return json.dumps({"family": self.family, "lattice": self.lattice, "size": self.size}, sort_keys=True)

    @property
    def key(self) -> str:
        """Canonical JSON identifying the point; seeds its instances."""
        return json.dumps({"family": self.family, "lattice": self.lattice, "size": self.size,
                           "model": self.model, "rate": self.rate, "options": dict(self.options)},
                          sort_keys=True)

    @property
    def label(self) -> str:
        opts = "".join(f",{k}={v}" for k, v in self.options)
        where = f"{self.lattice}:" if self.lattice else ""
        return f"{self.family}:{where}{self.size} {self.model}({self.rate:g}{opts})"


@dataclass(frozen=True)
class Setting:
    """A strategy with the parameters the study gives it (the rest at their defaults).

    kind 'strategy' : a contraction strategy (class probabilities); 'baseline' : a
    decoder of :mod:`tnarena.baselines` (a decision only); 'auto' : the setting the
    chooser picks at each point (params: its target and budget, AUTO_OPTIONS).
    """

    strategy: str
    params: tuple[tuple[str, Any], ...] = ()
    kind: str = "strategy"

    @property
    def key(self) -> str:
        base = {"strategy": self.strategy, "params": dict(self.params)}
        return json.dumps(base if self.kind == "strategy" else {**base, "kind": self.kind}, sort_keys=True)

    @property
    def label(self) -> str:
        inner = ",".join(f"{k}={v}" for k, v in self.params)
        return f"{self.strategy}({inner})" if inner else self.strategy


@dataclass
class Study:
    """A validated study.

    seed : study seed; samples : instances per point; time_limit : seconds per task
    (one decode); memory_limit : MiB per worker process (None: no limit); trace_memory :
    instances per point whose contraction is re-run under tracemalloc; give_up_after : after
    this many time-outs of one setting at one point its other tasks there are recorded as
    skipped, not run (0: never); profile : sample where each decode's time goes
    (:mod:`tnarena.arena.profiler`); settings : compared
    settings, in file order; reference : preferred reference setting; fallback : used at
    points where the reference's plan is refused (None: none).
    """

    title: str
    seed: int
    samples: int
    points: list[Point]
    settings: list[Setting]
    reference: Setting
    fallback: Setting | None
    time_limit: float = 600.0
    memory_limit: float | None = None
    trace_memory: int = 3
    give_up_after: int = 2
    profile: bool = False
    source: str = ""
    extra: dict[str, Any] = field(default_factory=dict)

    @property
    def all_settings(self) -> list[Setting]:
        """Compared settings, then the reference and fallback when not among them."""
        out = list(self.settings)
        for s in (self.reference, self.fallback):
            if s is not None and s not in out:
                out.append(s)
        return out


def read_study(path: str, catalog: Catalog) -> Study:
    """Read and validate a study file (TOML)."""
    try:
        with open(path, "rb") as fh:
            raw = fh.read()
    except OSError as exc:
        raise TnarenaError(f"cannot read the study file {path!r}: {exc.strerror}.") from None
    try:
        data = tomllib.loads(raw.decode("utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise TnarenaError(f"the study file {path!r} is not valid TOML: {exc}.") from None
    study = parse_study(data, catalog, where=path)
    study.source = raw.decode("utf-8")
    return study


def parse_study(data: dict[str, Any], catalog: Catalog, *, where: str = "the study") -> Study:
    """Validate a study given as a dict (the parsed TOML)."""
    _check_keys(data, _TOP, where)
    for key in _REQUIRED:
        if key not in data:
            raise TnarenaError(f"{where}: the key {key!r} is missing; see the study format in README.")
    seed, samples = data["seed"], data["samples"]
    if seed < 0:
        raise TnarenaError(f"{where}: seed = {seed} is negative; give an integer >= 0.")
    if samples < 1:
        raise TnarenaError(f"{where}: samples = {samples}; give at least 1 instance per point.")
    time_limit = float(data.get("time_limit", 600.0))
    if time_limit <= 0:
        raise TnarenaError(f"{where}: time_limit = {time_limit:g} s; give a positive number of seconds.")
    memory_limit = data.get("memory_limit")
    if memory_limit is not None and memory_limit < 64:
        raise TnarenaError(f"{where}: memory_limit = {memory_limit:g} MiB is too small; give at least 64.")
    give_up_after = data.get("give_up_after", 2)
    if give_up_after < 0:
        raise TnarenaError(f"{where}: give_up_after = {give_up_after}; give 0 (never) or a count of time-outs.")
    trace_memory = data.get("trace_memory", 3)
    if trace_memory < 0:
        raise TnarenaError(f"{where}: trace_memory = {trace_memory}; give 0 or more instances.")

    codes = [_code(entry, catalog, f"{where}: codes[{i}]") for i, entry in enumerate(_tables(data, "codes", where))]
    noises = [_noise(entry, catalog, f"{where}: noise[{i}]") for i, entry in enumerate(_tables(data, "noise", where))]
    points = [Point(fam, lat, size, model, rate, opts)
              for (fam, lat, size) in itertools.chain.from_iterable(codes)
              for (model, rate, opts) in itertools.chain.from_iterable(noises)]
    settings: list[Setting] = []
    for i, entry in enumerate(_tables(data, "strategies", where)):
        for s in _settings(entry, catalog, f"{where}: strategies[{i}]"):
            if s in settings:
                raise TnarenaError(f"{where}: strategies[{i}] repeats the setting {s.label}; give each once.")
            settings.append(s)
    for i, entry in enumerate(data.get("baselines", [])):
        settings.append(_baseline(entry, f"{where}: baselines[{i}]"))
    if len(set(settings)) != len(settings):
        raise TnarenaError(f"{where}: baselines repeats a decoder; give each once.")
    reference, fallback = _reference(data.get("reference", {}), settings, catalog, f"{where}: reference")
    return Study(title=data.get("title", "untitled study"), seed=seed, samples=samples, points=points,
                 settings=settings, reference=reference, fallback=fallback, time_limit=time_limit,
                 memory_limit=None if memory_limit is None else float(memory_limit), trace_memory=trace_memory,
                 give_up_after=give_up_after, profile=data.get("profile", False))


def _check_keys(table: dict[str, Any], allowed: dict[str, Any], where: str) -> None:
    for key, value in table.items():
        if key not in allowed:
            raise TnarenaError(f"{where}: unknown key {key!r}; the keys here are: {', '.join(allowed)}.")
        kind = allowed[key]
        if (isinstance(value, bool) and kind is not bool) or not isinstance(value, kind):
            raise TnarenaError(f"{where}: {key} must be {_KIND_WORDS[kind]}, not {value!r}.")


_KIND_WORDS = {bool: "true or false", str: "a string", int: "an integer", (int, float): "a number", list: "a list", dict: "a table"}


def _known(lookup, name: str, where: str) -> Any:
    """A catalog entry by name; an unknown name says where it was written and what is known."""
    try:
        return lookup(name)
    except TnarenaError as exc:
        raise TnarenaError(f"{where}: {exc}") from None


def _tables(data: dict[str, Any], key: str, where: str) -> list[dict[str, Any]]:
    entries = data[key]
    if not entries:
        raise TnarenaError(f"{where}: {key} is empty; give at least one [[{key}]] table.")
    for i, entry in enumerate(entries):
        if not isinstance(entry, dict):
            raise TnarenaError(f"{where}: {key}[{i}] must be a table ([[{key}]]), not {entry!r}.")
    return entries


def _code(entry: dict[str, Any], catalog: Catalog, where: str) -> list[tuple[str, str | None, int]]:
    _check_keys(entry, _CODE, where)
    if "family" not in entry or "sizes" not in entry:
        raise TnarenaError(f"{where}: give family and sizes (and lattices, for families built on a lattice).")
    family = entry["family"]
    _known(catalog.code_family, family, where)
    lattices = entry.get("lattices", [None])
    if not lattices:
        raise TnarenaError(f"{where}: lattices is empty; name at least one lattice family or leave the key out.")
    for lat in lattices:
        if lat is not None:
            if not isinstance(lat, str):
                raise TnarenaError(f"{where}: lattices holds {lat!r}; give lattice family names as strings.")
            _known(catalog.lattice, lat, where)
    sizes = entry["sizes"]
    if not sizes:
        raise TnarenaError(f"{where}: sizes is empty; give at least one size.")
    for size in sizes:
        if isinstance(size, bool) or not isinstance(size, int) or size < 2:
            raise TnarenaError(f"{where}: sizes holds {size!r}; give integers >= 2.")
    return [(family, lat, size) for lat in lattices for size in sizes]


def _noise(entry: dict[str, Any], catalog: Catalog, where: str) -> list[tuple[str, float, tuple]]:
    _check_keys(entry, _NOISE, where)
    if "model" not in entry or "rates" not in entry:
        raise TnarenaError(f"{where}: give model and rates.")
    model = _known(catalog.noise_model, entry["model"], where)
    options = entry.get("options", {})
    rates = entry["rates"]
    if not rates:
        raise TnarenaError(f"{where}: rates is empty; give at least one rate.")
    out = []
    for rate in rates:
        if isinstance(rate, bool) or not isinstance(rate, (int, float)):
            raise TnarenaError(f"{where}: rates holds {rate!r}; give numbers in [0, 1].")
        try:  # the model itself checks the rate and its options, on a one-qubit table
            model.build(1, float(rate), seed=0, **options)
        except TypeError as exc:
            raise TnarenaError(f"{where}: noise model {model.name!r} refused its options: {exc}.") from None
        except TnarenaError as exc:
            raise TnarenaError(f"{where}: {exc}") from None
        out.append((model.name, float(rate), tuple(sorted(options.items()))))
    return out


def _settings(entry: dict[str, Any], catalog: Catalog, where: str) -> list[Setting]:
    _check_keys(entry, _STRATEGY, where)
    if "name" not in entry:
        raise TnarenaError(f"{where}: give the strategy's name (tnarena list strategies).")
    if entry["name"] == AUTO:
        return _auto_settings(entry, where)
    strategy = _known(catalog.strategy, entry["name"], where)
    fixed, grid = entry.get("params", {}), entry.get("grid", {})
    both = sorted(set(fixed) & set(grid))
    if both:
        raise TnarenaError(f"{where}: {both[0]!r} is in both params and grid; give it in one.")
    for key, values in grid.items():
        if not isinstance(values, list) or not values:
            raise TnarenaError(f"{where}: grid.{key} must be a non-empty list of values, not {values!r}.")
    out = []
    for combo in itertools.product(*grid.values()):
        given = {**fixed, **dict(zip(grid, combo))}
        try:
            strategy.resolve(given)
        except TnarenaError as exc:
            raise TnarenaError(f"{where}: {exc}") from None
        out.append(Setting(strategy.name, tuple(sorted(given.items()))))
    return out


#: The strategy name that asks the chooser (tnarena.chooser) for a setting per point.
AUTO = "auto"
#: Options of the automatic choice: name -> (type, default, smallest allowed).
AUTO_OPTIONS = {"target_error": (float, 1e-3, 0.0), "target_agreement": (float, 0.99, 0.0),
                "budget_ms": (float, 1000.0, 1e-3), "budget_mib": (float, 1024.0, 1e-6),
                "calibration": (int, 6, 1), "chi_cap": (int, 64, 2)}


def _auto_settings(entry: dict[str, Any], where: str) -> list[Setting]:
    """``name = "auto"``: one setting; params are the chooser's target and budget."""
    if entry.get("grid"):
        raise TnarenaError(f"{where}: the automatic choice takes params, not a grid.")
    params = dict(entry.get("params", {}))
    for key, value in params.items():
        if key not in AUTO_OPTIONS:
            raise TnarenaError(f"{where}: the automatic choice has no option {key!r}; its options are: "
                               f"{', '.join(AUTO_OPTIONS)}.")
        kind, _, smallest = AUTO_OPTIONS[key]
        if isinstance(value, bool) or not isinstance(value, (int, float)) or (kind is int and not
                                                                            isinstance(value, int)):
            raise TnarenaError(f"{where}: auto option {key} must be {'an integer' if kind is int else 'a number'}, "
                               f"not {value!r}.")
        if value < smallest or (key == "target_agreement" and value > 1):
            raise TnarenaError(f"{where}: auto option {key} = {value!r} is out of range.")
    return [Setting(AUTO, tuple(sorted(params.items())), kind="auto")]


def _baseline(entry: Any, where: str) -> Setting:
    from tnarena.baselines import baseline

    if not isinstance(entry, dict):
        raise TnarenaError(f"{where} must be a table ([[baselines]] with name = ...), not {entry!r}.")
    _check_keys(entry, _BASELINE, where)
    if "name" not in entry:
        raise TnarenaError(f"{where}: give the baseline's name (e.g. name = \"matching\").")
    try:
        baseline(entry["name"])
    except TnarenaError as exc:
        raise TnarenaError(f"{where}: {exc}") from None
    return Setting(entry["name"], (), kind="baseline")


def _reference(entry: dict[str, Any], settings: list[Setting], catalog: Catalog,
               where: str) -> tuple[Setting, Setting | None]:
    """The reference (default: exact) and its fallback (default: the setting of largest chi)."""
    _check_keys(entry, _REFERENCE, where)
    reference = _one_setting(entry.get("strategy", "exact"), entry.get("params", {}), catalog, where)
    if "fallback" in entry:
        _check_keys(entry["fallback"], _FALLBACK, f"{where}.fallback")
        if "strategy" not in entry["fallback"]:
            raise TnarenaError(f"{where}.fallback: give the fallback's strategy.")
        return reference, _one_setting(entry["fallback"]["strategy"], entry["fallback"].get("params", {}),
                                       catalog, f"{where}.fallback")
    with_chi = [s for s in settings if "chi" in dict(s.params) and s.kind == "strategy"]  # not auto, baselines
    fallback = max(with_chi, key=lambda s: dict(s.params)["chi"]) if with_chi else None
    return reference, fallback


def _one_setting(name: str, params: dict[str, Any], catalog: Catalog, where: str) -> Setting:
    strategy = _known(catalog.strategy, name, where)
    try:
        strategy.resolve(params)
    except TnarenaError as exc:
        raise TnarenaError(f"{where}: {exc}") from None
    return Setting(strategy.name, tuple(sorted(params.items())))
