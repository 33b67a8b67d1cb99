"""Every random draw of a study, keyed by (study seed, what it is for).

Draws come from numpy's SeedSequence with entropy ``[study seed, *digest words]``
so they depend on what is drawn, never on worker count or task order.
"""

from __future__ import annotations

import hashlib

import numpy as np


def digest_words(key: str) -> list[int]:
    """Four 32-bit words of the SHA-256 of ``key`` (a canonical JSON string)."""
    raw = hashlib.sha256(key.encode("utf-8")).digest()
    return [int.from_bytes(raw[i:i + 4], "little") for i in range(0, 16, 4)]


def seed_sequence(study_seed: int, key: str, *extra: int) -> np.random.SeedSequence:
    return np.random.SeedSequence([study_seed, *digest_words(key), *extra])


def integer_seed(study_seed: int, key: str) -> int:
    """A 32-bit seed for builders that take an int (random lattices, inhomogeneous noise)."""
    return int(seed_sequence(study_seed, key).generate_state(1)[0])


def instance_rng(study_seed: int, point_key: str, instance: int) -> np.random.Generator:
    """The generator that draws the error of one instance of one point."""
    return np.random.default_rng(seed_sequence(study_seed, point_key, instance))
