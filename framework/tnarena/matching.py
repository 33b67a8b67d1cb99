"""A minimum-weight perfect matching baseline for CSS codes (surface codes).

X and Z errors are decoded separately (for depolarizing noise this treats the
X and Z parts as independent, the usual practice). For X errors the detectors
are the Z-type stabilizers; every qubit is an edge between the one or two
Z-type stabilizers it touches (one: an edge to a virtual boundary node),
weighted ``-ln(p / (1 - p))`` with p = P(X) + P(Y) of that qubit. Z errors use
the X-type stabilizers and p = P(Z) + P(Y) the same way.

Shortest paths between all detectors and the boundary are found once per code
(networkx Dijkstra). Per syndrome the defects are matched and the correction is
the XOR of the matched shortest paths. The standard construction matches the
defects plus one boundary copy per defect (a defect to its copy costs its
boundary distance, copies pair at no cost). Two exact simplifications keep it
fast: a defect pair is left out when sending both to the boundary costs no
more, which splits the defects into small independent pieces; and in each
piece the copies are eliminated by maximising the saving of each pair over
sending both to the boundary (networkx's blossom ``max_weight_matching``).
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import networkx as nx
import numpy as np

from tnarena.codes.core import PauliCode
from tnarena.decode import SyndromeSolver, relative_class
from tnarena.errors import TnarenaError
from tnarena.noise import validate_table

#: Flip probabilities are raised to at least _P_FLOOR before taking weights, so a
#: qubit that never flips gets a large finite weight (about 708) instead of inf.
_P_FLOOR = np.finfo(float).tiny


@dataclass
class MatchingResult:
    """The outcome of matching one syndrome.

    Attributes
    ----------
    syndrome : ndarray, shape (s,), uint8
        Against ``code.stabilizers``.
    correction : ndarray, shape (2n,), uint8
        Symplectic ``[x | z]`` correction with this syndrome.
    decision : tuple of int
        Logical class of ``correction`` relative to the pure error of the
        syndrome, in the convention of :class:`tnarena.decode.Decoder`.
    weight : float
        Sum of the edge weights of the correction, -ln(p / (1 - p)) per flip.
    true_class : tuple of int or None
        Class of the known error relative to the same pure error, when decoded
        from an error.
    seconds : float
        Wall time of the decode.
    """

    syndrome: np.ndarray
    correction: np.ndarray
    decision: tuple[int, ...]
    weight: float
    true_class: tuple[int, ...] | None = None
    seconds: float = 0.0

    @property
    def failed(self) -> bool | None:
        """True when the decision differs from the known error's class (None if unknown)."""
        return None if self.true_class is None else self.decision != self.true_class


class MatchingDecoder:
    """Minimum-weight perfect matching decoder for a CSS code.

    Parameters
    ----------
    code : PauliCode
        Every stabilizer purely X-type or purely Z-type, and every qubit in the
        support of at most two stabilizers of each type.
    noise : ndarray, shape (n, 4)
        Per-qubit probabilities of I, X, Y, Z; only the marginal X-flip and
        Z-flip probabilities are used.
    """

    def __init__(self, code: PauliCode, noise: np.ndarray) -> None:
        self.code = code
        table = validate_table(noise, code.n)
        n, stab = code.n, code.stabilizers
        has_x, has_z = stab[:, :n].any(axis=1), stab[:, n:].any(axis=1)
        if np.any(has_x & has_z):
            row = int(np.flatnonzero(has_x & has_z)[0])
            raise TnarenaError(
                f"stabilizer {row} of {code.name} mixes X and Z, so matching (which needs a CSS "
                "code) cannot decode it; use a Decoder with a tensor-network strategy instead."
            )
        self.syndromes = SyndromeSolver(code)
        # X flips are seen by Z-type stabilizers (their z part), Z flips by X-type ones.
        rows_z, rows_x = np.flatnonzero(has_z), np.flatnonzero(has_x)
        self._x_graph = _DecodingGraph(stab[rows_z, n:], rows_z, table[:, 1] + table[:, 2], code.name, "X")
        self._z_graph = _DecodingGraph(stab[rows_x, :n], rows_x, table[:, 2] + table[:, 3], code.name, "Z")

    def pure_error(self, syndrome: np.ndarray) -> np.ndarray:
        """An error (shape (2n,)) with the given syndrome (shape (s,), 0/1)."""
        return self.syndromes.pure_error(syndrome)

    def true_class(self, error: np.ndarray, pure: np.ndarray) -> tuple[int, ...]:
        """Logical class of ``error`` relative to ``pure``, in the convention of Decoder."""
        return relative_class(self.code, error, pure)

    def correction(self, syndrome: np.ndarray) -> tuple[np.ndarray, float]:
        """Minimum-weight correction (shape (2n,), uint8) of a syndrome and its weight."""
        s = np.asarray(syndrome, dtype=np.uint8).reshape(-1)
        x_flips, x_weight = self._x_graph.match(s)
        z_flips, z_weight = self._z_graph.match(s)
        return np.concatenate([x_flips, z_flips]), x_weight + z_weight

    def decode_syndrome(self, syndrome: np.ndarray) -> MatchingResult:
        """Match a syndrome (shape (s,), 0/1, against ``code.stabilizers``)."""
        start = time.perf_counter()
        s = np.asarray(syndrome).reshape(-1)
        pure = self.pure_error(s)  # also checks length and values
        return self._result(s.astype(np.uint8), pure, None, start)

    def decode_error(self, error: np.ndarray) -> MatchingResult:
        """Match the syndrome of a known error (shape (2n,)) and record whether it failed."""
        start = time.perf_counter()
        error = self.code.error_vector(error)
        s = self.code.syndrome(error)
        pure = self.pure_error(s)
        return self._result(s, pure, self.true_class(error, pure), start)

    def _result(self, s, pure, true_cls, start) -> MatchingResult:
        corr, weight = self.correction(s)
        decision = self.true_class(corr, pure)
        return MatchingResult(s, corr, decision, weight, true_cls, time.perf_counter() - start)


class _DecodingGraph:
    """Detectors of one stabilizer type, their shortest paths, and matching on them.

    support : (m, n) 0/1 rows of the detectors; rows : (m,) their indices among
    ``code.stabilizers``; flip : (n,) flip probability of each qubit.
    """

    def __init__(self, support: np.ndarray, rows: np.ndarray, flip: np.ndarray, name: str, pauli: str) -> None:
        m, n = support.shape
        self.n, self.rows, self.boundary = n, rows, m
        touches = support.sum(axis=0)
        if np.any(touches > 2):
            q = int(np.flatnonzero(touches > 2)[0])
            kind = "ZX"[pauli == "Z"]
            raise TnarenaError(
                f"qubit {q} of {name} is in {int(touches[q])} {kind}-type stabilizers, more than the "
                "two a matching edge joins; use a Decoder with a tensor-network strategy instead."
            )
        if np.any(flip > 0.5):
            q = int(np.flatnonzero(flip > 0.5)[0])
            raise TnarenaError(
                f"qubit {q} of {name} has {pauli}-flip probability {flip[q]:g} > 1/2, where matching "
                "weights -ln(p/(1-p)) turn negative; use a Decoder with a tensor-network strategy instead."
            )
        p = np.maximum(flip, _P_FLOOR)
        self.qubit_weight = -np.log(p / (1 - p))
        graph = nx.Graph()
        graph.add_nodes_from(range(m + 1))  # node m: the boundary
        for q in np.flatnonzero(touches):
            ends = np.flatnonzero(support[:, q])
            u, v = (int(ends[0]), m) if ends.size == 1 else (int(ends[0]), int(ends[1]))
            w = float(self.qubit_weight[q])
            if not graph.has_edge(u, v) or graph[u][v]["weight"] > w:
                graph.add_edge(u, v, weight=w, qubit=int(q))  # parallel qubits: keep the lightest
        self.dist = np.full((m + 1, m + 1), np.inf)
        self.pred = -np.ones((m + 1, m + 1), dtype=np.int64)
        for src in range(m + 1):
            preds, dists = nx.dijkstra_predecessor_and_distance(graph, src)
            nodes = np.fromiter(dists, dtype=np.int64, count=len(dists))
            self.dist[src, nodes] = np.fromiter(dists.values(), dtype=float, count=len(dists))
            for v, ps in preds.items():
                if ps:
                    self.pred[src, v] = ps[0]
        self.edge_qubit = {(u, v): d["qubit"] for u, v, d in graph.edges(data=True)}
        self.edge_qubit.update({(v, u): q for (u, v), q in self.edge_qubit.items()})

    def match(self, syndrome: np.ndarray) -> tuple[np.ndarray, float]:
        """Flips (shape (n,), uint8) of a minimum-weight matching of the defects, and its weight."""
        flips = np.zeros(self.n, dtype=np.uint8)
        defects = np.flatnonzero(syndrome[self.rows])
        if not defects.size:
            return flips, 0.0
        for a, b in self._pairs(defects):
            self._flip_path(flips, a, b)
        return flips, float(self.qubit_weight[flips.astype(bool)].sum())

    def _pairs(self, defects: np.ndarray) -> list[tuple[int, int]]:
        """Matched (detector, detector or boundary) pairs for the defect list (shape (k,))."""
        to_boundary = self.dist[defects, self.boundary]
        pair_dist = self.dist[np.ix_(defects, defects)]
        # A pair is worth matching only when it is cheaper than sending both to the boundary.
        useful = np.triu(pair_dist < to_boundary[:, None] + to_boundary[None, :], 1)
        pieces = nx.Graph()
        pieces.add_nodes_from(range(defects.size))
        pieces.add_edges_from(zip(*np.nonzero(useful)))
        pairs = []
        for piece in nx.connected_components(pieces):
            idx = sorted(piece)
            if len(idx) == 1:
                pairs.append((int(defects[idx[0]]), self.boundary))
                continue
            pairs.extend(self._match_piece(defects, idx, useful, pair_dist, to_boundary))
        for a, b in pairs:
            if not np.isfinite(self.dist[a, b]):
                raise TnarenaError(
                    "this syndrome has no correction made of the code's edges (a defect cannot reach "
                    "a partner or the boundary); check that it belongs to this code."
                )
        return pairs

    def _match_piece(self, defects, idx, useful, pair_dist, to_boundary) -> list[tuple[int, int]]:
        """Pairs for one piece: the defects (positions ``idx`` in ``defects``) joined by useful pairs.

        With a boundary in reach, minimising the total weight is maximising the saving
        to_boundary[i] + to_boundary[j] - pair_dist[i, j] over any matching of useful pairs
        (an unmatched defect goes to the boundary): the boundary-copy construction with
        the copies eliminated. Without one, every defect needs a partner.
        """
        edges = [(i, j) for i in idx for j in idx if useful[i, j]]
        graph = nx.Graph()
        if np.isfinite(to_boundary[idx[0]]):  # pieces never mix: a useful pair is connected
            graph.add_weighted_edges_from(
                (i, j, float(to_boundary[i] + to_boundary[j] - pair_dist[i, j])) for i, j in edges
            )
            matched = nx.max_weight_matching(graph)
        else:
            graph.add_weighted_edges_from((i, j, float(pair_dist[i, j])) for i, j in edges)
            matched = nx.min_weight_matching(graph)
            if 2 * len(matched) != len(idx):
                raise TnarenaError(
                    "this syndrome has an odd number of defects out of reach of any boundary; "
                    "check that it belongs to this code."
                )
        partner = {i: self.boundary for i in idx}
        for i, j in matched:
            partner[i], partner[j] = int(defects[j]), -1
        return [(int(defects[i]), b) for i, b in partner.items() if b >= 0]

    def _flip_path(self, flips: np.ndarray, a: int, b: int) -> None:
        """XOR into ``flips`` the qubits of the stored shortest path from ``a`` to ``b``."""
        v = b
        while v != a:
            u = int(self.pred[a, v])
            if u < 0:
                return  # unreachable; reported by _pairs
            flips[self.edge_qubit[(u, v)]] ^= 1
            v = u
