"""Hook specifications: the whole contract between tnarena and its plugins.

A plugin is a module (or object) found through the ``tnarena.plugins``
entry-point group. It implements any of the hooks below with
``@tnarena.hookimpl``; implementations take keyword arguments only, with no
defaults. Every hook receives a ``register`` callable and calls it once per
thing it contributes; the host validates each entry when it is registered.
All implementations of a hook are called (none "wins"), in plugin load order.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import pluggy

PROJECT = "tnarena"
ENTRY_POINT_GROUP = "tnarena.plugins"

hookspec = pluggy.HookspecMarker(PROJECT)
hookimpl = pluggy.HookimplMarker(PROJECT)


@hookspec
def tnarena_register_strategies(register: Callable[[Any], None]) -> None:
    """Contribute contraction strategies.

    register : callable
        Call ``register(strategy)`` once per strategy, where ``strategy`` is an
        instance of a subclass of :class:`tnarena.strategy.Strategy` (it
        declares ``name``, ``summary``, ``exact`` and ``parameters`` and
        implements ``plan`` and ``contract``). A duplicate name is an error
        naming both plugins.

    Returns nothing; every implementation is called.
    """


@hookspec
def tnarena_register_lattices(register: Callable[..., None]) -> None:
    """Contribute lattice families.

    register : callable
        Call ``register(name, builder, summary, random=False)`` where
        ``builder(width: float, height: float, seed: int) -> tnarena.lattices.Lattice``.

    Returns nothing; every implementation is called.
    """


@hookspec
def tnarena_register_code_families(register: Callable[..., None]) -> None:
    """Contribute code families.

    register : callable
        Call ``register(name, builder, summary)`` where
        ``builder(lattice_builder, size: int, seed: int) -> tnarena.codes.PauliCode``;
        ``lattice_builder(width, height, seed=...) -> Lattice`` is the builder of
        the lattice family the user named, or None when none was named.

    Returns nothing; every implementation is called.
    """


@hookspec
def tnarena_register_noise_models(register: Callable[..., None]) -> None:
    """Contribute noise models.

    register : callable
        Call ``register(name, builder, summary)`` where
        ``builder(n: int, rate: float, seed: int, **options) -> ndarray`` returns
        the (n, 4) table of Pauli probabilities (I, X, Y, Z) per qubit.

    Returns nothing; every implementation is called.
    """
