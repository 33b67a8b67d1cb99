"""What the chooser takes (target, budget) and gives back (candidates, the choice)."""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field
from typing import Any

from tnarena.errors import TnarenaError


@dataclass(frozen=True)
class Target:
    """Accuracy a setting must reach on the calibration instances.

    max_error : float
        Largest allowed mean |ln P - ln P_reference| (natural log) over instances and the
        classes the reference finds possible.
    min_agreement : float
        Smallest allowed fraction of instances whose decision matches the reference's, in [0, 1].
    """

    max_error: float = 1e-3
    min_agreement: float = 0.99

    def __post_init__(self) -> None:
        if not (self.max_error > 0 and math.isfinite(self.max_error)):
            raise TnarenaError(f"the target error must be a positive number, not {self.max_error!r}.")
        if not 0.0 <= self.min_agreement <= 1.0:
            raise TnarenaError(f"the target agreement must lie in [0, 1], not {self.min_agreement!r}.")


@dataclass(frozen=True)
class Budget:
    """What one decode may cost.

    memory_bytes : float
        Largest intermediate a contraction may hold, bytes (the strategies' ``largest_intermediate``
        stat in float64 elements x 8, as the arena records it).
    seconds_per_decode : float
        Mean wall time of one decode (every logical class), seconds.
    """

    memory_bytes: float = 2.0**30
    seconds_per_decode: float = 1.0

    def __post_init__(self) -> None:
        for name, value in (("memory", self.memory_bytes), ("time", self.seconds_per_decode)):
            if not (value > 0 and math.isfinite(value)):
                raise TnarenaError(f"the {name} budget must be a positive number, not {value!r}.")


@dataclass
class Candidate:
    """One setting the chooser tried, and what it measured on the calibration instances.

    status : {'ok', 'refused', 'failed'}
        'refused': the plan was refused (TnarenaError); 'failed': the strategy raised.
    seconds_per_decode : mean decode wall time, s; plan_seconds : planning wall time, s
    error, max_error : mean and max |ln P - ln P_reference| (None: no reference reached)
    agreement : fraction of decisions equal to the reference's; reference : what it was compared to
    memory_bytes : largest intermediate, bytes (float64); note : why it was stopped, refused, ...
    """

    strategy: str
    params: dict[str, Any]
    status: str = "ok"
    seconds_per_decode: float | None = None
    plan_seconds: float | None = None
    error: float | None = None
    max_error: float | None = None
    agreement: float | None = None
    reference: str = ""
    memory_bytes: float | None = None
    note: str = ""
    chosen: bool = False

    @property
    def label(self) -> str:
        return setting_label(self.strategy, self.params)

    def meets(self, target: Target) -> bool:
        return (self.status == "ok" and self.error is not None and self.agreement is not None
                and self.error <= target.max_error and self.agreement >= target.min_agreement)

    def fits(self, budget: Budget) -> bool:
        return (self.status == "ok" and self.seconds_per_decode is not None
                and self.seconds_per_decode <= budget.seconds_per_decode
                and (self.memory_bytes or 0.0) <= budget.memory_bytes)


@dataclass
class Choice:
    """The setting chosen for one structure, and the evidence behind it.

    strategy, params : the chosen setting (params: the ones the chooser set; the rest default)
    met : whether it met the target within the budget (False: the most accurate that fit)
    candidates : every setting tried, in the order tried, the chosen one marked
    costs : structure-only cost figures (one dict per strategy and direction, see ``cost``)
    fingerprint : the network structure's; key, question : the store key and what it digests
    from_store : whether this was answered from the store
    """

    strategy: str
    params: dict[str, Any]
    met: bool
    target: Target
    budget: Budget
    seed: int
    calibration: int
    candidates: list[Candidate]
    costs: list[dict[str, Any]] = field(default_factory=list)
    fingerprint: str = ""
    key: str = ""
    question: dict[str, Any] = field(default_factory=dict)
    from_store: bool = False

    @property
    def label(self) -> str:
        return setting_label(self.strategy, self.params)

    def to_dict(self) -> dict[str, Any]:
        out = asdict(self)
        out.pop("from_store")
        return out

    @classmethod
    def from_dict(cls, data: dict[str, Any], *, from_store: bool = False) -> "Choice":
        data = dict(data)
        data["target"] = Target(**data["target"])
        data["budget"] = Budget(**data["budget"])
        data["candidates"] = [Candidate(**c) for c in data["candidates"]]
        return cls(**data, from_store=from_store)


def setting_label(strategy: str, params: dict[str, Any]) -> str:
    """'sweep:chi=8,direction=90' (the compare command's notation)."""
    if not params:
        return strategy
    return strategy + ":" + ",".join(f"{k}={v}" for k, v in params.items())
