"""Sign symmetries of a forward tensor, and the sectors of the pair space they imply.

A sign symmetry flips some modes, ``i -> d_i i`` with d_i = +-1, and leaves every M_a
unchanged: ``d_i d_j d_k d_l = 1`` wherever some ``M_a^{ijkl} != 0``.  Writing
d_i = (-1)^{q_i}, the charges q (vectors over GF(2)) form the null space of the parity
constraints ``q_i + q_j + q_k + q_l = 0 (mod 2)``, one per non-zero entry.

If M is invariant, so is the cone problem, and averaging any rho with M = rho + rho^x over
the group keeps it PSD and keeps the equation (crossing permutes the same four indices), so
rho may be taken invariant: rho_{(ij),(kl)} = 0 unless q_i + q_j = q_k + q_l.  The pair
space then splits into sectors of equal pair charge q_i + q_j, and the semidefinite
programs of :mod:`eftsieve.bounds.sdp` need one PSD block per sector instead of one
n^2 x n^2 matrix (an exact reduction, common practice for symmetric SDPs).  Examples:
scalars odd under Phi -> -Phi, or x- and y-polarisations odd under reflections.
"""

from __future__ import annotations

import numpy as np


def _gf2_null_space(rows: np.ndarray) -> np.ndarray:
    """Basis (r, n) of {q : rows @ q = 0 mod 2} by Gaussian elimination over GF(2)."""
    a = (rows % 2).astype(np.uint8)
    n = a.shape[1]
    pivots: list[int] = []
    r = 0
    for col in range(n):
        hit = np.nonzero(a[r:, col])[0]
        if len(hit) == 0:
            continue
        p = r + hit[0]
        a[[r, p]] = a[[p, r]]
        others = np.nonzero(a[:, col])[0]
        for o in others:
            if o != r:
                a[o] ^= a[r]
        pivots.append(col)
        r += 1
        if r == a.shape[0]:
            break
    free = [c for c in range(n) if c not in pivots]
    basis = []
    for f in free:
        q = np.zeros(n, dtype=np.uint8)
        q[f] = 1
        for row, pc in enumerate(pivots):
            q[pc] = a[row, f]
        basis.append(q)
    return np.array(basis, dtype=np.uint8).reshape(len(basis), n)


def sign_charges(tensors: np.ndarray, tol: float = 1e-12) -> np.ndarray:
    """Charges (r, n) over GF(2) of the sign symmetries of tensors (k, n, n, n, n); entries
    below ``tol`` of the largest count as zero (rounding of the Cauchy integrals)."""
    t = np.asarray(tensors)
    n = t.shape[-1]
    scale = float(np.abs(t).max()) if t.size else 0.0
    idx = np.argwhere((np.abs(t) > tol * scale).any(axis=0)) if scale > 0 else np.zeros((0, 4))
    rows = np.zeros((len(idx), n), dtype=np.int64)
    for col in range(4):
        np.add.at(rows, (np.arange(len(idx)), idx[:, col].astype(int)), 1)
    rows = np.unique(rows % 2, axis=0) if len(rows) else np.zeros((0, n), dtype=np.int64)
    return _gf2_null_space(rows)


def pair_sectors(tensors: np.ndarray) -> list[np.ndarray]:
    """Flat pair indices p = i n + j grouped by pair charge q_i + q_j (each sorted).

    One sector holding every pair when there is no sign symmetry.  Dead pairs
    (:func:`dead_pairs`) are left out: rho vanishes on them.
    """
    live = ~dead_pairs(tensors)
    q = sign_charges(tensors)
    if len(q) == 0:
        return [np.nonzero(live)[0]]
    weights = 1 << np.arange(len(q), dtype=np.int64)
    label = (q.astype(np.int64) * weights[:, None]).sum(axis=0)      # charge of each mode
    pair = (label[:, None] ^ label[None, :]).ravel()
    out = [np.nonzero((pair == v) & live)[0] for v in np.unique(pair)]
    return [sec for sec in out if len(sec)]


def dead_pairs(tensors: np.ndarray, rel: float = 1e-12) -> np.ndarray:
    """Pairs p = (ij) with M_a^{ijij} = 0 for every a, as a boolean (n^2,) mask.

    M^{ijij} = 2 rho_{(ij),(ij)}, so on such a pair every rho of the cone has a zero
    diagonal entry and, being PSD, a zero row: rho lives on the other ("live") pairs.
    """
    t = np.asarray(tensors)
    n = t.shape[-1]
    diag = np.abs(t.reshape(t.shape[0], n * n, n * n).diagonal(axis1=1, axis2=2))
    scale = float(np.abs(t).max()) if t.size else 0.0
    return (diag <= rel * scale).all(axis=0)
