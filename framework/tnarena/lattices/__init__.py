"""Planar embedded lattices: regular tilings, random ones, and user files.

Use :func:`build_lattice` with a family name from :data:`LATTICE_FAMILIES`,
or :func:`read_lattice_file` for a graph of your own.
"""

from tnarena.lattices.core import Lattice, trace_faces
from tnarena.lattices.duals import dual
from tnarena.lattices.files import read_lattice_file, write_lattice_file
from tnarena.lattices.registry import LATTICE_FAMILIES, LatticeFamily, build_lattice

__all__ = [
    "LATTICE_FAMILIES",
    "Lattice",
    "LatticeFamily",
    "build_lattice",
    "dual",
    "read_lattice_file",
    "trace_faces",
    "write_lattice_file",
]
