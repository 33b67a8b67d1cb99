"""The shared network builder and the decoding-network types."""

from tnarena.network.batch import NetworkBatch
from tnarena.network.builder import NetworkBuilder, copy_tensor
from tnarena.network.structure import GENERATOR, QUBIT, DecodingNetwork, NetworkStructure

__all__ = ["GENERATOR", "QUBIT", "DecodingNetwork", "NetworkBatch", "NetworkBuilder", "NetworkStructure", "copy_tensor"]
