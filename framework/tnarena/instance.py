"""One seeded decoding instance, named the way a user names it on the command line."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from tnarena.catalog import Catalog
from tnarena.codes.core import PauliCode
from tnarena.errors import TnarenaError


@dataclass
class InstanceSpec:
    """Code, noise and seed of an instance.

    code : code family name (ignored when ``code_file`` is given); lattice : lattice family or None;
    size : linear size; noise : noise model name; rate : its rate; noise_options : model options;
    seed : seeds the lattice (for random families), the noise model and the error draw.
    """

    code: str = "surface"
    lattice: str | None = "square"
    size: int = 5
    noise: str = "depolarizing"
    rate: float = 0.1
    seed: int = 0
    noise_options: dict[str, Any] = field(default_factory=dict)
    code_file: str | None = None

    def build_code(self, catalog: Catalog) -> PauliCode:
        if self.code_file:
            from tnarena.codes.json_format import read_code_json

            return read_code_json(self.code_file)
        return catalog.build_code(self.code, self.lattice, self.size, seed=self.seed)

    def build_noise(self, catalog: Catalog, n: int) -> np.ndarray:
        from tnarena.noise import validate_table

        entry = catalog.noise_model(self.noise)
        try:
            table = entry.build(n, self.rate, seed=self.seed, **self.noise_options)
        except TypeError as exc:
            raise TnarenaError(f"noise model {self.noise!r} refused its options: {exc}.") from None
        return validate_table(table, n)

    def sample_error(self, table: np.ndarray) -> np.ndarray:
        """The error of this instance: drawn from SeedSequence(seed)."""
        from tnarena.noise import sample_errors

        rng = np.random.default_rng(np.random.SeedSequence(self.seed))
        return sample_errors(table, rng)
