"""The sweep on many array sets of one structure at once: every site carries a leading batch axis.

The schedule is replayed unchanged; each window operation becomes a few
stacked matrix products, QRs and SVDs (numpy's stacked ``matmul`` and
``linalg`` routines, one LAPACK call per element inside C), so the Python
cost of a step is paid once per batch instead of once per network.

Shapes stay rectangular across the batch: a truncated bond keeps, for every
element, the largest number of singular values any element needs under chi
and the cutoff (capped at chi). An element may therefore keep a few more
singular values than it would alone, all below ``cutoff`` times its largest,
so its value agrees with the one-at-a-time value to within the cutoff, not
bit for bit; apart from that a value does not depend on its batch-mates. (Where a cut falls
exactly between tied singular values, which of them survives is decided by rounding, batched or
not; such a truncation has no single answer, and values may then differ by its error.)

Exact splits skip the QR where a factor can be the identity (a window of r rows and c columns
with r <= c: an identity site, then the block; r > c and c within the cap: the block, then an
identity site, the centre on the block), and so do QR / LQ of wide / tall matrices.
Every element is normalised separately and the logarithm of its scale
carried in its own slot of ``log_value`` (shape (B,)).

Elements whose arrays agree so far share one line (:mod:`tnarena_sweep_line.sharing`): the
class networks of one syndrome differ only near their logical operator, so under depolarizing
noise on the surface code about half of the lines are never run.
"""

from __future__ import annotations

import numpy as np
from tnarena.network import NetworkBatch

from tnarena_sweep_line.linalg import svd as _svd_one
from tnarena_sweep_line.mps import Step, _eye
from tnarena_sweep_line.sharing import take


def _identity(batch: int, k: int) -> np.ndarray:
    return np.broadcast_to(_eye(k), (batch, k, k))


def _qr(m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """m (B, r, c) = q (B, r, k) @ r_ (B, k, c), k = min(r, c), q with orthonormal columns
    (r_ is upper triangular only when r > c: for r <= c, q is the identity and r_ is m)."""
    if m.shape[1] <= m.shape[2]:
        return _identity(m.shape[0], m.shape[1]), m
    return np.linalg.qr(m, mode="reduced")


def _lq(m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """m (B, r, c) = l (B, r, k) @ q (B, k, c), k = min(r, c), q with orthonormal rows
    (for c <= r, q is the identity and l is m)."""
    if m.shape[2] <= m.shape[1]:
        return m, _identity(m.shape[0], m.shape[2])
    q, r_ = np.linalg.qr(m.transpose(0, 2, 1), mode="reduced")
    return r_.transpose(0, 2, 1), q.transpose(0, 2, 1)


def _svd(m: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Thin SVD of a stack (B, r, c); per element through LAPACK (dgesvd fallback) if the stack fails."""
    try:
        return np.linalg.svd(m, full_matrices=False)
    except np.linalg.LinAlgError:
        parts = [_svd_one(np.ascontiguousarray(x)) for x in m]
        return tuple(np.stack([p[i] for p in parts]) for i in range(3))


def _norms(x: np.ndarray) -> np.ndarray:
    """Frobenius norm of each batch element, shape (B,)."""
    flat = x.reshape(x.shape[0], -1)
    return np.sqrt(np.einsum("bi,bi->b", flat, flat))


class BatchLineMPS:
    """B line MPS with one shape: sites of shape (B, D_left, 2, D_right), one centre for all.

    log_value and discarded have shape (B,); flops and largest are per element
    (equal for every element, since the shapes are).
    """

    def __init__(self, batch: int, cutoff: float) -> None:
        self.batch = batch
        self.cutoff = cutoff
        self.sites: list[np.ndarray] = []
        self.center = 0
        self.log_value = np.zeros(batch)
        self.discarded = np.zeros(batch)
        self.flops = 0.0
        self.largest = 1

    def take(self, index: np.ndarray) -> "BatchLineMPS":
        """A batch of the lines of elements ``index`` (shape (G,)); sites broadcast along the batch
        axis (identity sites) stay views."""
        out = BatchLineMPS(len(index), self.cutoff)
        out.sites = [take(site, index) for site in self.sites]
        out.center = self.center
        out.log_value, out.discarded = self.log_value[index], self.discarded[index]
        out.flops, out.largest = self.flops, self.largest
        return out

    def _move_center(self, lo: int, hi: int) -> None:
        sites, batch = self.sites, self.batch
        while self.center < lo:
            a = sites[self.center]
            _, dl, p, dr = a.shape
            q, r = _qr(a.reshape(batch, dl * p, dr))
            sites[self.center] = q.reshape(batch, dl, p, -1)
            b = sites[self.center + 1]
            sites[self.center + 1] = np.matmul(r, b.reshape(batch, dr, -1)).reshape(
                batch, r.shape[1], b.shape[2], b.shape[3])
            self.flops += dl * p * dr * dr
            self.center += 1
        while self.center >= hi:
            a = sites[self.center]
            _, dl, p, dr = a.shape
            l, q = _lq(a.reshape(batch, dl, p * dr))
            sites[self.center] = q.reshape(batch, -1, p, dr)
            b = sites[self.center - 1]
            sites[self.center - 1] = np.matmul(b.reshape(batch, -1, dl), l).reshape(
                batch, b.shape[1], b.shape[2], l.shape[2])
            self.flops += dl * p * dr * dl
            self.center -= 1

    def apply(self, step: Step, node: np.ndarray | None) -> None:
        """As :meth:`LineMPS.apply`, on every element; node has shape (B,) + (2,) * degree."""
        lo, hi, count, batch = step.lo, step.hi, step.count, self.batch
        if hi > lo:
            if not lo <= self.center < hi:
                self._move_center(lo, hi)
            sites = self.sites
            first = sites[lo]
            dl = first.shape[1]
            block = first.reshape(batch, -1, first.shape[3])
            for i in range(lo + 1, hi):
                b = sites[i]
                self.flops += block.shape[1] * b.shape[1] * b.shape[2] * b.shape[3]
                block = np.matmul(block, b.reshape(batch, b.shape[1], -1)).reshape(batch, -1, b.shape[3])
            dr = block.shape[2]
            if step.node_perm is not None:
                width = block.shape[1] // dl
                legs = node.transpose((0,) + tuple(1 + a for a in step.node_perm)).reshape(batch, -1, width)
                self.flops += legs[0].size * dl * dr
                block = np.matmul(legs[:, None], block.reshape(batch, dl, width, dr))
            elif node is None:
                block = block.reshape(batch, dl, 2, 2, dr).transpose((0,) + tuple(1 + a for a in step.perm))
            else:
                block = self._general(block.reshape((batch, dl) + (2,) * (hi - lo) + (dr,)), node, step)
        else:
            block = self._general(np.ones((batch, 1, 1)), node, step)
        self.largest = max(self.largest, block[0].size)
        self._centre_offset = count - 1
        self.sites[lo:hi] = self._split(block, count, step.cap)
        if count:
            self.center = lo + self._centre_offset
            if not step.rescale:
                return
            centre = self.sites[self.center]
            norm = _norms(centre)
        else:
            norm = np.abs(block.reshape(batch, -1)[:, 0])
            self.center = min(self.center, max(len(self.sites) - 1, 0))
        self._absorb(norm)
        if count:
            self.sites[self.center] = centre / norm.reshape((batch,) + (1,) * (centre.ndim - 1))

    def _absorb(self, norm: np.ndarray) -> None:
        """Add ln norm to each element's log (-inf where 0; such an element's norm is set to 1 in place)."""
        dead = norm == 0.0
        if dead.any():
            self.log_value[dead] = -np.inf
            norm[dead] = 1.0
        self.log_value += np.log(norm)

    def _general(self, block: np.ndarray, node: np.ndarray, step: Step) -> np.ndarray:
        """Batched np.tensordot(block, node, step.axes) then the transpose into line order."""
        batch = self.batch
        w_axes, n_axes = step.axes
        b_rest = [a for a in range(1, block.ndim) if a not in {1 + x for x in w_axes}]
        n_rest = [a for a in range(1, node.ndim) if a not in {1 + x for x in n_axes}]
        b_in = [1 + x for x in w_axes]
        n_in = [1 + x for x in n_axes]
        rest_shape = [block.shape[a] for a in b_rest] + [node.shape[a] for a in n_rest]
        c = 1 << len(w_axes)
        bm = block.transpose([0] + b_rest + b_in).reshape(batch, -1, c)
        nm = node.transpose([0] + n_in + n_rest).reshape(batch, c, -1)
        out = np.matmul(bm, nm).reshape([batch] + rest_shape)
        self.flops += out[0].size * c
        return out.transpose((0,) + tuple(1 + a for a in step.perm))

    def _keep(self, s: np.ndarray, cap: int) -> int:
        """Common number of singular values kept (s: (B, n), descending): the most any element needs
        under cap and the cutoff; adds each element's discarded weight."""
        n = s.shape[1]
        top = s[:, 0]
        keep = min(n, cap)
        floor = self.cutoff * top
        needed = np.count_nonzero(s[:, :keep] > floor[:, None], axis=1)
        keep = max(1, int(needed.max()))
        if keep < n:
            s2 = s * s
            total = s2.sum(axis=1)
            with np.errstate(invalid="ignore", divide="ignore"):
                lost = np.where(total > 0, s2[:, keep:].sum(axis=1) / total, 0.0)
            self.discarded += lost
        return keep

    def _split(self, block: np.ndarray, count: int, cap: int) -> list[np.ndarray]:
        batch = self.batch
        if count == 0:
            return []
        dl, dr = block.shape[1], block.shape[-1]
        if count == 1:
            return [block.reshape(batch, dl, 2, dr)]
        rest = block.reshape(batch, dl * 2, -1)
        if count == 2 and rest.shape[1] <= min(rest.shape[2], cap):
            # exact and canonical without a QR: an identity (left-orthogonal) site, then the block
            eye = np.broadcast_to(_eye(2 * dl).reshape(1, dl, 2, 2 * dl), (batch, dl, 2, 2 * dl))
            return [eye, rest.reshape(batch, -1, 2, dr)]
        if count == 2 and rest.shape[2] <= cap:
            # the mirror image: the block, then an identity (right-orthogonal) site; the centre is the first
            eye = np.broadcast_to(_eye(2 * dr).reshape(1, 2 * dr, 2, dr), (batch, 2 * dr, 2, dr))
            self._centre_offset = 0
            return [rest.reshape(batch, dl, 2, -1), eye]
        out = []
        for k in range(count - 1):
            m = rest if k == 0 else rest.reshape(batch, dl * 2, -1)
            self.flops += m.shape[1] * m.shape[2] * min(m.shape[1:])
            if min(m.shape[1:]) <= cap:
                q, rest = _qr(m)
                keep = q.shape[2]
                out.append(q.reshape(batch, dl, 2, keep))
            else:
                u, s, vt = _svd(m)
                keep = self._keep(s, cap)
                out.append(u[:, :, :keep].reshape(batch, dl, 2, keep))
                rest = s[:, :keep, None] * vt[:, :keep]
            dl = keep
        out.append(rest.reshape(batch, dl, 2, dr))
        return out

    def compress(self, chi: int) -> None:
        """As :meth:`LineMPS.compress`, with a common kept count per bond."""
        sites, batch = self.sites, self.batch
        wide = [i for i in range(len(sites) - 1) if sites[i].shape[3] > chi]
        if not wide:
            return
        first, last = wide[0], wide[-1] + 1
        if 2 * self.center >= first + last:
            self._move_center(last, last + 1)
            for i in range(last, first, -1):
                a = sites[i]
                _, dl, p, dr = a.shape
                m = a.reshape(batch, dl, p * dr)
                if dl > chi:
                    self.flops += m.shape[1] * m.shape[2] * min(m.shape[1:])
                    u, s, vt = _svd(m)
                    keep = self._keep(s, chi)
                    left = u[:, :, :keep] * s[:, None, :keep]
                    sites[i] = vt[:, :keep].reshape(batch, keep, p, dr)
                else:
                    left, q = _lq(m)
                    sites[i] = q.reshape(batch, -1, p, dr)
                b = sites[i - 1]
                sites[i - 1] = np.matmul(b.reshape(batch, -1, dl), left).reshape(
                    batch, b.shape[1], p, left.shape[2])
            self.center = first
        else:
            self._move_center(first, first + 1)
            for i in range(first, last):
                a = sites[i]
                _, dl, p, dr = a.shape
                m = a.reshape(batch, dl * p, dr)
                if dr > chi:
                    self.flops += m.shape[1] * m.shape[2] * min(m.shape[1:])
                    u, s, vt = _svd(m)
                    keep = self._keep(s, chi)
                    right = s[:, :keep, None] * vt[:, :keep]
                    sites[i] = u[:, :, :keep].reshape(batch, dl, p, keep)
                else:
                    q, right = _qr(m)
                    sites[i] = q.reshape(batch, dl, p, -1)
                b = sites[i + 1]
                sites[i + 1] = np.matmul(right, b.reshape(batch, dr, -1)).reshape(
                    batch, right.shape[1], b.shape[2], b.shape[3])
            self.center = last
        centre = sites[self.center]
        norm = _norms(centre)
        self._absorb(norm)
        sites[self.center] = centre / norm.reshape((batch,) + (1,) * (centre.ndim - 1))


def log_overlap(left: BatchLineMPS, right: BatchLineMPS) -> np.ndarray:
    """As :func:`tnarena_sweep_line.mps.log_overlap`, per element; shape (B,)."""
    a_sites, b_sites = left.sites, right.sites[::-1]
    if len(a_sites) != len(b_sites):
        raise ValueError(f"lines of {len(a_sites)} and {len(b_sites)} sites cannot be joined")
    batch = left.batch
    env = np.ones((batch, 1, 1))
    log_env = np.zeros(batch)
    for a, b in zip(a_sites, b_sites):
        _, dal, p, dar = a.shape
        _, dbr, _, dbl = b.shape
        tmp = np.matmul(env, a.reshape(batch, dal, p * dar)).reshape(batch, dbl, p, dar)
        tmp = tmp.transpose(0, 2, 1, 3).reshape(batch, p * dbl, dar)
        env = np.matmul(b.reshape(batch, dbr, p * dbl), tmp)
        scale = np.abs(env).reshape(batch, -1).max(axis=1)
        dead = scale == 0.0
        if dead.any():
            log_env[dead] = -np.inf
            scale[dead] = 1.0
        log_env += np.log(scale)
        env = env / scale[:, None, None]
    with np.errstate(divide="ignore"):
        return left.log_value + right.log_value + log_env + np.log(np.abs(env[:, 0, 0]))


def stacked_arrays(layout, networks, paths: dict | None = None) -> list[np.ndarray]:
    """The folded group arrays of every network, shape (B,) + (2,) * degree each.

    A :class:`~tnarena.network.NetworkBatch` brings its node stacks; other networks are gathered
    by :meth:`NetworkBatch.from_networks`. Each group is folded by one batched einsum contracted
    pairwise along a path found once (cached in ``paths``, keyed by group index).
    """
    nodes = list(NetworkBatch.from_networks(networks).stacks)
    if layout.trivial:
        return nodes
    paths = {} if paths is None else paths
    out = []
    for g, (members, operands, output) in enumerate(layout.recipes):
        if len(members) == 1:
            out.append(nodes[members[0]])
            continue
        label = 1 + max(max((max(s) for s in operands if s), default=0), max(output, default=0))
        args = []
        for m, sub in zip(members, operands):
            args += [nodes[m], [label, *sub]]
        args.append([label, *output])
        path = paths.get(g)
        if path is None:
            path = paths[g] = np.einsum_path(*args, optimize="greedy")[0]
        out.append(np.einsum(*args, optimize=path))
    return out
