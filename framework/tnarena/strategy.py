"""What a contraction strategy is: declared parameters, ``plan`` and ``contract``.

A strategy plugin subclasses :class:`Strategy` and hands an instance to the
``register`` callable of :func:`tnarena.hookspecs.tnarena_register_strategies`.
The host calls ``plan`` once per network structure and ``contract`` for every
set of arrays with that structure.
"""

from __future__ import annotations

import abc
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, ClassVar

from tnarena.errors import TnarenaError
from tnarena.network.structure import DecodingNetwork, NetworkStructure

_TYPES = {"int": int, "float": float, "str": str, "bool": bool}


@dataclass(frozen=True)
class Parameter:
    """A declared strategy parameter.

    name : identifier; kind : {'int', 'float', 'str', 'bool'}; default : value of that kind;
    minimum / maximum : inclusive numeric bounds (None: unbounded); choices : allowed values.
    """

    name: str
    kind: str
    default: Any
    summary: str
    minimum: float | None = None
    maximum: float | None = None
    choices: tuple[Any, ...] | None = None

    def describe_range(self) -> str:
        if self.choices is not None:
            return "one of " + ", ".join(map(str, self.choices))
        lo = "-inf" if self.minimum is None else f"{self.minimum:g}"
        hi = "inf" if self.maximum is None else f"{self.maximum:g}"
        return f"{self.kind} in [{lo}, {hi}]" if self.kind in ("int", "float") else self.kind

    def coerce(self, value: Any, *, owner: str) -> Any:
        """Return ``value`` converted to this parameter's kind, or raise TnarenaError."""
        where = f"strategy {owner!r} parameter {self.name!r}"
        if self.kind == "bool" and isinstance(value, str):
            lowered = value.strip().lower()
            if lowered not in ("true", "false", "1", "0", "yes", "no"):
                raise TnarenaError(f"{where} takes true or false, not {value!r}.")
            value = lowered in ("true", "1", "yes")
        try:
            if self.kind == "int" and isinstance(value, float) and not value.is_integer():
                raise ValueError
            out = _TYPES[self.kind](value)
        except (TypeError, ValueError):
            raise TnarenaError(f"{where} takes {self.describe_range()}, not {value!r}.") from None
        if self.kind == "float" and math.isnan(out):
            raise TnarenaError(f"{where} is NaN; give {self.describe_range()}.")
        if self.choices is not None and out not in self.choices:
            raise TnarenaError(f"{where} must be {self.describe_range()}, not {value!r}.")
        if (self.minimum is not None and out < self.minimum) or (
            self.maximum is not None and out > self.maximum
        ):
            raise TnarenaError(f"{where} = {out!r} is outside its range: {self.describe_range()}.")
        return out


@dataclass
class Estimate:
    """What ``contract`` returns.

    log_value : float
        Natural log of the absolute value of the network's arrays contracted
        (without the network's ``log_scale``; the host adds it). ``-inf`` for 0.
    stats : dict
        Measured figures; the recognised keys are ``flops`` (multiply-adds),
        ``largest_intermediate`` (elements), ``width`` (log2 of that),
        ``discarded_weight`` (sum of squared discarded singular values, relative).
    """

    log_value: float
    stats: dict[str, float] = field(default_factory=dict)


class Strategy(abc.ABC):
    """Base class of every contraction strategy.

    Class attributes a subclass sets: ``name`` (identifier used on the command
    line and in study files), ``summary`` (one line), ``exact`` (True when the
    result is exact up to rounding) and ``parameters`` (tuple of Parameter).
    """

    name: ClassVar[str] = ""
    summary: ClassVar[str] = ""
    exact: ClassVar[bool] = False
    parameters: ClassVar[tuple[Parameter, ...]] = ()

    @abc.abstractmethod
    def plan(self, structure: NetworkStructure, params: Mapping[str, Any]) -> Any:
        """Prepare to contract every network with this structure.

        params holds every declared parameter, validated. Returns an opaque
        plan object that :meth:`contract` receives; raise TnarenaError with a
        clear message when the structure cannot be handled within the params
        (e.g. a memory budget), before allocating anything large.
        """

    @abc.abstractmethod
    def contract(self, plan: Any, network: DecodingNetwork) -> Estimate:
        """Contract one network's arrays with a plan made for its structure."""

    def contract_batch(self, plan: Any, networks: Sequence[DecodingNetwork]) -> list[Estimate]:
        """Contract many array sets of one structure; one Estimate per network, in order.

        Strategies that can do better than one at a time (a leading batch axis,
        batched matrix products and SVDs) override this; the default loops.
        ``networks`` may be a :class:`~tnarena.network.NetworkBatch` (what
        ``Decoder.decode_errors`` passes): a sequence of DecodingNetwork like any
        other, whose ``stacks`` (one array per node, shape (B,) + (2,) * degree)
        a batching strategy can use as they are instead of stacking the arrays itself.
        """
        return [self.contract(plan, network) for network in networks]

    @property
    def batched(self) -> bool:
        """True when this strategy overrides :meth:`contract_batch`."""
        return type(self).contract_batch is not Strategy.contract_batch

    def cost(self, structure: NetworkStructure, params: Mapping[str, Any]) -> dict[str, float] | None:
        """What contracting this structure with these params would cost, from the structure alone.

        Optional (the default returns None: no estimate). Must be cheap: no
        contraction, well under a second at size 15. params holds every
        declared parameter, validated. Keys are the strategy's own figures
        (e.g. ``width``, ``flops``, ``largest_intermediate`` in elements,
        ``columns``, ``largest_column``); the automatic chooser
        (:mod:`tnarena.chooser`) shows them and ranks directions by them.
        """
        return None

    def resolve(self, given: Mapping[str, Any] | None = None) -> dict[str, Any]:
        """Every declared parameter: the given values validated, the rest at their defaults."""
        given = dict(given or {})
        known = {p.name: p for p in self.parameters}
        unknown = sorted(set(given) - set(known))
        if unknown:
            names = ", ".join(known) or "none"
            raise TnarenaError(
                f"strategy {self.name!r} has no parameter {unknown[0]!r}; its parameters are: {names}."
            )
        return {
            p.name: p.coerce(given[p.name], owner=self.name) if p.name in given else p.default
            for p in self.parameters
        }
