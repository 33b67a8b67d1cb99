"""Pauli codes: the :class:`PauliCode` type and the families built on lattices."""

from tnarena.codes.core import GAUGE, STABILIZER, PauliCode

__all__ = ["GAUGE", "STABILIZER", "PauliCode"]
