"""Decoders that are not tensor-network contractions, run next to the strategies as baselines.

A baseline gives a decision but no class probabilities; the arena records its
decision, agreement with the reference and logical failures on the same
instances as every strategy. Each entry builds a decoder from (code, noise
table) whose ``decode_error(error)`` returns an object with ``syndrome``,
``decision``, ``true_class``, ``failed`` and ``seconds``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from tnarena.errors import TnarenaError


@dataclass(frozen=True)
class Baseline:
    name: str
    summary: str
    build: Callable


def _matching(code, noise):
    from tnarena.matching import MatchingDecoder

    return MatchingDecoder(code, noise)


BASELINES: dict[str, Baseline] = {
    b.name: b for b in (
        Baseline("matching", "minimum-weight perfect matching (networkx), X and Z decoded apart; CSS codes",
                 _matching),
    )
}


def baseline(name: str) -> Baseline:
    try:
        return BASELINES[name]
    except KeyError:
        raise TnarenaError(f"baseline decoder {name!r} is unknown; known: {', '.join(sorted(BASELINES))}.") from None
