"""Planar embedded lattices: regular tilings, random ones, and user files.

Use :func:`build_lattice` with a family name from :data:`LATTICE_FAMILIES`.
"""

from tnarena.lattices.core import Lattice, trace_faces

__all__ = ["Lattice", "trace_faces"]
