"""tnarena: optimal decoding of 2D Pauli codes by planar tensor-network contraction."""

from tnarena.hookspecs import hookimpl

__version__ = "0.1.0"
__all__ = ["hookimpl", "__version__"]
