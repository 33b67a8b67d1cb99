"""Built-in code families: ``build(lattice_builder, size, seed) -> PauliCode``.

``lattice_builder(width, height, seed) -> Lattice`` is the chosen lattice
family's builder (None when the user named no lattice). Families that have
their own geometry (the color code) refuse a lattice they cannot use.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from tnarena.codes.core import PauliCode
from tnarena.errors import TnarenaError

LatticeBuilder = Callable[..., object]

#: How many times the surface-code patch may grow while seeking the requested distance.
MAX_GROWTH_STEPS = 200


@dataclass(frozen=True)
class CodeFamily:
    name: str
    summary: str
    build: Callable[..., PauliCode]


def _surface(lattice_builder: LatticeBuilder | None, size: int, seed: int = 0) -> PauliCode:
    """Planar surface code whose X and Z distances are both at least ``size``.

    The patch (lattice spacing units) starts at width ``size``, height
    ``size - 1``; it grows in width while d_z < size and in height while
    d_x < size, then shrinks each side in steps of 1/2 while both distances
    stay at least ``size``. On the square lattice this is width ``size``,
    height ``size - 1``: exactly distance ``size``, n = size^2 + (size-1)^2.
    """
    from tnarena.codes.surface import planar_surface_code

    if lattice_builder is None:
        raise TnarenaError("the surface code needs a lattice; name one, e.g. --lattice square.")
    size = _check_size(size, 2)
    width, height = float(size), float(size - 1)
    for _ in range(MAX_GROWTH_STEPS):
        d_x, d_z = _distances(lattice_builder, width, height, seed)
        if d_x >= size and d_z >= size:
            break
        if d_z < size:
            width += max(0.5, 0.5 * (size - d_z))
        if d_x < size:
            height += max(0.5, 0.5 * (size - d_x))
    else:
        raise TnarenaError(
            f"no patch up to {width:g} x {height:g} reached distance {size}; use another size."
        )
    for _ in range(2 * size):
        shrunk = False
        for dw, dh in ((0.5, 0.0), (0.0, 0.5)):
            if width - dw >= 1 and height - dh >= 1 and min(
                _distances(lattice_builder, width - dw, height - dh, seed)
            ) >= size:
                width, height, shrunk = width - dw, height - dh, True
        if not shrunk:
            break
    lattice = lattice_builder(width, height, seed=seed)
    code = planar_surface_code(lattice, name=f"surface/{lattice.name}/d{size}")
    code.metadata.update(size=size, seed=seed, width=width, height=height)
    return code


def _distances(lattice_builder: LatticeBuilder, width: float, height: float, seed: int) -> tuple[int, int]:
    """(d_x, d_z) of the patch, or (0, 0) when the patch is too small to hold a code."""
    from tnarena.codes.surface import surface_distances

    try:
        return surface_distances(lattice_builder(width, height, seed=seed))
    except TnarenaError:
        return 0, 0


def _color_666(lattice_builder: LatticeBuilder | None, size: int, seed: int = 0) -> PauliCode:
    from tnarena.codes.color import color_666

    if lattice_builder is not None:
        raise TnarenaError(
            "the 6.6.6 color code has its own hexagonal geometry; do not name a lattice for it."
        )
    return color_666(_check_size(size, 3))


def _color_488(lattice_builder: LatticeBuilder | None, size: int, seed: int = 0) -> PauliCode:
    from tnarena.codes.color_488 import color_488

    _own_geometry("4.8.8 color code", lattice_builder)
    return color_488(_check_size(size, 3))


def _own_geometry(name: str, lattice_builder: LatticeBuilder | None) -> None:
    if lattice_builder is not None:
        raise TnarenaError(f"the {name} has its own geometry; do not name a lattice for it.")


def _rotated_surface(lattice_builder: LatticeBuilder | None, size: int, seed: int = 0) -> PauliCode:
    from tnarena.codes.rotated import rotated_surface_code

    _own_geometry("rotated surface code", lattice_builder)
    return rotated_surface_code(_check_size(size, 2))


def _xzzx(lattice_builder: LatticeBuilder | None, size: int, seed: int = 0) -> PauliCode:
    from tnarena.codes.rotated import xzzx_code

    _own_geometry("XZZX surface code", lattice_builder)
    return xzzx_code(_check_size(size, 2))


def _subsystem_surface(lattice_builder: LatticeBuilder | None, size: int, seed: int = 0) -> PauliCode:
    from tnarena.codes.subsystem import subsystem_surface_code

    _own_geometry("subsystem surface code", lattice_builder)
    return subsystem_surface_code(_check_size(size, 2))


def _check_size(size: int, smallest: int) -> int:
    if isinstance(size, bool) or not isinstance(size, int) or size < smallest:
        raise TnarenaError(f"the code size {size!r} must be a whole number >= {smallest}.")
    return size


CODE_FAMILIES: dict[str, CodeFamily] = {
    f.name: f
    for f in (
        CodeFamily("surface", "planar surface code on any lattice (qubits on edges), k = 1, both distances >= size", _surface),
        CodeFamily("color_666", "6.6.6 color code on a triangular patch (size = odd distance)", _color_666),
        CodeFamily("color_488", "4.8.8 color code on a triangular patch (size = odd distance), n = (size^2 - 1) / 2 + size, k = 1", _color_488),
        CodeFamily("rotated_surface", "rotated square-lattice surface code, n = size^2, k = 1, both distances = size", _rotated_surface),
        CodeFamily("xzzx", "rotated XZZX surface code (Hadamard on every other qubit), n = size^2, k = 1, distance = size", _xzzx),
        CodeFamily("subsystem_surface", "subsystem surface code: weight-3 gauge triangles, weight-6 stabilizers, n = 3 size^2 - 2 size, distance = size", _subsystem_surface),
    )
}
