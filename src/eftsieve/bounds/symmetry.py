"""Continuous symmetries of a forward tensor, and the finer blocks of rho they imply.

A continuous symmetry is a rotation R = exp(L) of the modes (L real antisymmetric) that
leaves every M_a unchanged.  Its infinitesimal form is linear in L:

    sum over the four legs of L acting on that index of M_a = 0   (for every a),

so the Lie algebra of such rotations is a null space (:func:`lie_generators`).  For the
gauge bosons and scalars of an unbroken gauge theory it holds the global gauge group and
the rotations about the beam axis (the forward limit), whatever the coefficients
(docs/physics_cones.md).

Together with the sign symmetries (:mod:`eftsieve.bounds.sectors`) they generate a compact
group K acting on the pair space as g (x) g.  As for the sign symmetries, averaging any
rho of M = rho + rho^x over K keeps it PSD and keeps the equation (crossing permutes the
four indices that g acts on alike), so rho may be taken K-invariant: it commutes with
every element of the group algebra of K.  A generic symmetric element S of that algebra
therefore has eigenspaces that every invariant rho maps into themselves, and rho is block
diagonal in them (the standard symmetry reduction of semidefinite programs: Gatermann &
Parrilo, "Symmetry groups, semidefinite programs, and sums of squares",
J. Pure Appl. Algebra 192 (2004) 95, arXiv:math/0211450, Sec. 5).  S is built inside
each sign sector (as P S' P with P the sector's projector, itself in the algebra), so
every block lies in one sector.

The blocks are an optimisation, never a source of truth: the programs of
:mod:`eftsieve.bounds.sdp` that use them return a rho (checked by
:func:`eftsieve.bounds.cones.verify_rho`) or a dual matrix (checked by
:func:`eftsieve.bounds.cones.facet_from_dual`) like any other, and fall back to the
sector blocks when the reduced program's answer does not pass those checks.  A block
split wrongly (eigenvalues taken as equal that are not, or the reverse) could only cost
a verdict, not give a wrong one.
"""

from __future__ import annotations

from typing import Any

import numpy as np

#: relative size below which a singular value counts as zero (the generators' null space;
#: on the 12-mode tensors of docs/physics_cones.md the zero ones are below 1e-15 and the
#: others above 1e-2)
NULL_REL = 1e-6
#: relative gap below which two eigenvalues of the generic element count as equal
CLUSTER_REL = 1e-8


def lie_generators(tensors: np.ndarray, rel: float = NULL_REL) -> list[np.ndarray]:
    """Antisymmetric (n, n) matrices L with sum_legs L . M_a = 0 for every a (a basis of the
    Lie algebra of rotations of the modes that leave each M_a unchanged)."""
    t = np.asarray(tensors, dtype=float)
    n = t.shape[-1]
    pairs = [(i, j) for i in range(n) for j in range(i + 1, n)]
    if not pairs or not t.size:
        return []
    cols = []
    for i, j in pairs:
        # L = E_ij - E_ji acting on each leg: (L M)[.. x ..] = M[.. j ..] if x = i,
        # -M[.. i ..] if x = j
        d = np.zeros_like(t)
        for leg in range(1, 5):
            at_i = tuple(i if ax == leg else slice(None) for ax in range(5))
            at_j = tuple(j if ax == leg else slice(None) for ax in range(5))
            d[at_i] += t[at_j]
            d[at_j] -= t[at_i]
        cols.append(d.ravel())
    a = np.array(cols)                                   # (pairs, k n^4)
    gram = a @ a.T
    lam, vec = np.linalg.eigh(gram)
    top = float(lam.max()) if len(lam) else 0.0
    if top <= 0:
        return []
    # singular values of a below rel of the largest: eigenvalues of a a^T below rel^2
    null = vec[:, lam <= rel * rel * top].T
    out = []
    for v in null:
        gen = np.zeros((n, n))
        for coef, (i, j) in zip(v, pairs, strict=True):
            gen[i, j] += coef
            gen[j, i] -= coef
        out.append(gen)
    return out


def symmetry_blocks(tensors: np.ndarray, sectors: list[np.ndarray], charges: np.ndarray,
                    seed: int = 0, gens: list[np.ndarray] | None = None,
                    ) -> list[tuple[int, np.ndarray]] | None:
    """Orthonormal bases of the blocks of an invariant rho, or None without continuous
    symmetries (the sign sectors are then the finest blocks this module finds).

    Parameters
    ----------
    tensors
        M_a, shape (k, n, n, n, n).
    sectors
        The live pairs of each sign sector (:func:`eftsieve.bounds.sectors.pair_sectors`).
    charges
        The sign charges (:func:`eftsieve.bounds.sectors.sign_charges`).
    seed
        Seed of the generic element (fixed: the same problem gives the same blocks).
    gens
        The generators (:func:`lie_generators`), when already computed.

    Returns
    -------
    list of (sector index, basis) with basis of shape (len(sector), m), its columns
    orthonormal, spanning the sector together with the other bases of that sector.  A
    sector whose eigenvalues do not separate cleanly is kept whole, with the identity as
    its basis; when the group mixes live pairs with dead ones there is no reduction (None).
    """
    gens = lie_generators(tensors) if gens is None else gens
    if not gens:
        return None
    n = tensors.shape[-1]
    eye = np.eye(n)
    ops = [np.kron(g, eye) + np.kron(eye, g) for g in gens]
    for q in np.asarray(charges):
        d = (-1.0) ** q.astype(float)
        ops.append(np.diag(np.kron(d, d)))
    rng = np.random.default_rng(seed)
    n2 = n * n
    x = np.zeros((n2, n2))
    for _ in range(8 * len(ops)):
        prod = ops[rng.integers(len(ops))]
        for _ in range(int(rng.integers(0, 4))):
            prod = prod @ ops[rng.integers(len(ops))]
        x += rng.normal() * prod
    x = x + x.T
    scale = float(np.abs(x).max())
    live = np.zeros(n2, dtype=bool)
    for sec in sectors:
        live[sec] = True
    out: list[tuple[int, np.ndarray]] = []
    for b, sec in enumerate(sectors):
        whole = [(b, np.eye(len(sec)))]
        if np.abs(x[np.ix_(sec, np.flatnonzero(~live))]).max(initial=0.0) > CLUSTER_REL * scale:
            return None                         # the group mixes live and dead pairs
        w, vec = np.linalg.eigh(x[np.ix_(sec, sec)])
        groups = _clusters(w, CLUSTER_REL * scale)
        if groups is None:
            out += whole
            continue
        out += [(b, vec[:, g]) for g in groups]
    return out


def _clusters(w: np.ndarray, tol: float) -> list[np.ndarray] | None:
    """Indices of sorted eigenvalues grouped where neighbours differ by less than tol, or
    None when some gap is neither clearly zero nor clearly open (between tol and 1e3 tol:
    no clean split)."""
    if not len(w):
        return []
    gaps = np.diff(w)
    if np.any((gaps > tol) & (gaps < 1e3 * tol)):
        return None
    cuts = np.flatnonzero(gaps > tol) + 1
    return [np.asarray(g) for g in np.split(np.arange(len(w)), cuts)]


def _csr_rows(mat: Any, which: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The stored entries of rows ``which`` of a CSR matrix, row after row: (position in
    ``which``, column, value) each."""
    starts = mat.indptr[which]
    counts = mat.indptr[which + 1] - starts
    owner = np.repeat(np.arange(len(which)), counts)
    first = np.repeat(np.cumsum(counts) - counts, counts)
    at = np.repeat(starts, counts) + (np.arange(int(counts.sum())) - first)
    return owner, mat.indices[at], mat.data[at]


class Commutant:
    """The matrices on the live pairs that commute with the group (an orthonormal basis),
    and the orthogonal projection onto them, which is the average over the group.

    The reduced programs give a dual matrix Z that is PSD on each block but need not be
    invariant, and its crossing image need not be PSD.  Its average over the group is
    invariant, so it commutes with crossing (crossing permutes four indices that the group
    acts on alike), it pairs with every M_a as Z does (each M_a is invariant), and on each
    isotypic component it is the mean of Z's blocks over the copies of the irreducible
    representation, hence PSD: a certificate of the unreduced program with the same
    normal.  :func:`eftsieve.bounds.cones.facet_from_dual` checks it as any other.

    Parameters
    ----------
    tensors
        M_a, shape (k, n, n, n, n).
    sectors
        The live pairs of each sign sector; the commutant lies on their diagonal blocks
        (it commutes with the sign flips).
    gens
        The generators (:func:`lie_generators`), when already computed.
    """

    def __init__(self, tensors: np.ndarray, sectors: list[np.ndarray],
                 gens: list[np.ndarray] | None = None) -> None:
        from scipy import sparse

        n = tensors.shape[-1]
        n2 = n * n
        eye = np.eye(n)
        self.sectors = sectors
        self.n2 = n2
        # unknowns: the entries of X on each sector's diagonal block, (p, q) flat
        ps = np.concatenate([np.repeat(sec, len(sec)) for sec in sectors])
        qs = np.concatenate([np.tile(sec, len(sec)) for sec in sectors])
        m = len(ps)
        blocks = []
        for g in (lie_generators(tensors) if gens is None else gens):
            gp = sparse.csr_matrix(np.kron(g, eye) + np.kron(eye, g))
            gt = gp.T.tocsr()
            # [X, G] for X = e_p e_q^T: e_p G[q, :] - G[:, p] e_q^T, for every unknown u
            # at once (row q of G, then row p of G^T)
            u1, j1, v1 = _csr_rows(gp, qs)
            u2, i2, v2 = _csr_rows(gt, ps)
            rows = [ps[u1] * n2 + j1, i2 * n2 + qs[u2]]
            cols = [u1, u2]
            vals = [v1, -v2]
            blocks.append(sparse.csr_matrix(
                (np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                shape=(n2 * n2, m)))
        gram = sum((b.T @ b).toarray() for b in blocks) if blocks else np.zeros((m, m))
        lam, vec = np.linalg.eigh(gram)
        top = max(float(lam.max()), 1.0) if len(lam) else 1.0
        self.basis = vec[:, lam <= 1e-10 * top]          # (unknowns, dim of the commutant)
        self._ps, self._qs = ps, qs

    @property
    def dim(self) -> int:
        return int(self.basis.shape[1])

    def project(self, z: np.ndarray) -> np.ndarray:
        """The average of z (n^2 x n^2) over the group."""
        x = z[self._ps, self._qs]
        y = self.basis @ (self.basis.T @ x)
        out = np.zeros((self.n2, self.n2))
        out[self._ps, self._qs] = y
        return out
