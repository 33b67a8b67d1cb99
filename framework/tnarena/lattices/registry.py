"""The built-in lattice families by name, and :func:`build_lattice`."""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from numbers import Integral, Real

from tnarena.errors import TnarenaError
from tnarena.lattices import duals, random_lattices, tilings
from tnarena.lattices.core import Lattice

Builder = Callable[[float, float, int], Lattice]


@dataclass(frozen=True)
class LatticeFamily:
    """A named way to build lattice patches.

    Attributes
    ----------
    name : str
        Registry key, e.g. ``"kagome"``.
    summary : str
        One line for listings.
    build : callable
        ``build(width, height, seed) -> Lattice``; the patch covers
        [0, width] x [0, height] in the family's spacing units.
    random : bool
        Whether the seed changes the lattice.
    """

    name: str
    summary: str
    build: Builder
    random: bool = False


_BUILT_IN = [
    LatticeFamily("square", "square grid (4.4.4.4), vertices at integer points", tilings.square),
    LatticeFamily("triangular", "triangular lattice (3.3.3.3.3.3), edge 1", tilings.triangular),
    LatticeFamily("hexagonal", "honeycomb (6.6.6), edge 1", tilings.hexagonal),
    LatticeFamily("kagome", "kagome (3.6.3.6), edge 1", tilings.kagome),
    LatticeFamily("rhombille", "rhombille, dual of kagome, rhombi of side 1", duals.rhombille),
    LatticeFamily("truncated_square", "truncated square (4.8.8), edge 1", tilings.truncated_square),
    LatticeFamily(
        "tetrakis_square",
        "tetrakis square, dual of 4.8.8, edges 1 and sqrt2",
        duals.tetrakis_square,
    ),
    LatticeFamily(
        "truncated_hexagonal", "truncated hexagonal (3.12.12), edge 1", tilings.truncated_hexagonal
    ),
    LatticeFamily(
        "triakis_triangular",
        "triakis triangular, dual of 3.12.12, edges 1 and sqrt3",
        duals.triakis_triangular,
    ),
    LatticeFamily(
        "delaunay",
        "Delaunay triangulation of random points, one per unit area",
        random_lattices.delaunay,
        random=True,
    ),
    LatticeFamily(
        "voronoi",
        "Voronoi diagram of random points, one per unit area",
        random_lattices.voronoi,
        random=True,
    ),
]

LATTICE_FAMILIES: dict[str, LatticeFamily] = {f.name: f for f in _BUILT_IN}


def build_lattice(
    name: str, width: float, height: float | None = None, *, seed: int = 0
) -> Lattice:
    """Build a patch of a named lattice family covering [0, width] x [0, height].

    Parameters
    ----------
    name : str
        A key of :data:`LATTICE_FAMILIES`.
    width, height : float
        Size of the rectangle in the family's spacing units; height defaults to width.
    seed : int
        Seed of the random families (``numpy.random.default_rng``); others ignore it.
    """
    family = LATTICE_FAMILIES.get(name)
    if family is None:
        known = ", ".join(sorted(LATTICE_FAMILIES))
        raise TnarenaError(f"unknown lattice family {name!r}; choose one of: {known}.")
    height = width if height is None else height
    for label, value in (("width", width), ("height", height)):
        if not _is_positive_number(value):
            raise TnarenaError(
                f"lattice {label} {value!r} is not a positive finite number; give one."
            )
    if isinstance(seed, bool) or not isinstance(seed, Integral) or seed < 0:
        raise TnarenaError(f"lattice seed {seed!r} is not a non-negative integer; give one.")
    return family.build(float(width), float(height), int(seed))


def _is_positive_number(value: object) -> bool:
    if isinstance(value, bool) or not isinstance(value, Real):
        return False
    return math.isfinite(value) and value > 0
