"""The ``elastic`` family: E(u, v) = u_i v_j u_k v_l M^{ijkl} >= 0 for real product states.

Deciding whether a bi-quadratic form is non-negative is hard in general, so this module
keeps the two directions apart:

* :func:`search_states` looks for a violating product state by alternating minimisation
  (for fixed u the best v is the lowest eigenvector of A(u)_{jl} = M^{ijkl} u_i u_k, and
  vice versa), from many random starts at once.  A state found with E < 0 is an exact
  witness: it is re-evaluated directly.
* :func:`prove_elastic` proves E >= 0 by branch and bound over u on the faces of the cube
  [-1, 1]^n (u -> -u is a symmetry, so the faces w_m = +1 suffice): on a box with centre
  w0 and half-widths h, A(w) = A(w0) + A(w0, d) + A(w0, d)^T + A(d, d) gives the rigorous
  lower bound lambda_min(A(w0)) - 2 sum_k h_k |A(w0, e_k)|_F - sum_ik h_i h_k |A(e_i, e_k)|_F
  of lambda_min(A(w)); a box whose bound is positive is proven, a box whose centre has a
  negative eigenvalue gives a witness, the others are split.  Without a proof within the
  cell budget the answer is "undecided", never a verdict.  The boxes live in n - 1
  dimensions, and near the boundary the cells needed grow like (width/gap)^(n-1): above
  :data:`MAX_GENERAL_MODES` modes (without a symmetry reduction) the search is not run
  at all and the answer is "undecided".  Measured on Choi's form (tests/bounds/
  test_cones.py) padded with decoupled modes, eps |u|^2 |v|^2 on all of them: with
  eps = 1 it is proven in 245 cells on 3 modes and 38043 on 5, but 400000 cells (5-8 s)
  prove nothing on 6 or 8 modes; on 12 modes each undecided call took about half a
  minute, so an elastic build on them never finished (docs/physics_cones.md).

Only real u, v are used.  For a real, time-reversal and crossing-symmetric M (every
theory here: each mode is its own crossing image) that loses nothing: a complex state
u = a + i b, v = c + i d gives E(u, v) = E(a, c) + E(a, d) + E(b, c) + E(b, d), a sum of
real product values (docs/physics_cones.md, section 3; tests/bounds/test_elastic_states.py).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

_EPS = float(np.finfo(float).eps)
#: the general branch and bound (no symmetry reduction) runs on at most this many modes
MAX_GENERAL_MODES = 5


@dataclass(frozen=True)
class ElasticProof:
    """Outcome of :func:`prove_elastic`.

    Attributes
    ----------
    outcome
        ``proven`` (E >= 0 everywhere), ``violated`` (witness found) or ``undecided``.
    cells
        Boxes examined.
    witness
        (u, v, E) of a violating state, or None.
    """

    outcome: str
    cells: int
    witness: tuple[np.ndarray, np.ndarray, float] | None = None
    #: why the search stopped short ("" when it ran to an outcome or to its cell budget)
    note: str = ""

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"outcome": self.outcome, "cells": self.cells}
        if self.note:
            out["note"] = self.note
        if self.witness is not None:
            out["u"], out["v"], out["E"] = (self.witness[0].tolist(), self.witness[1].tolist(),
                                            self.witness[2])
        return out


@dataclass(frozen=True)
class StateReduction:
    """A symmetry reduction of the product states u (supplied by a theory).

    Every real unit u is claimed equivalent, under a symmetry R of every M_a
    (M^{ijkl} = R_ii' R_jj' R_kk' R_ll' M^{i'j'k'l'}, applied to both u and v), to
    ``fn(theta)`` for some theta in the box [lo, hi]; then min_{u,v} E = min_theta
    lambda_min(A(fn(theta))).  The claim that the family meets every orbit is the
    theory's (stated in ``description``); that the ``generators`` are symmetries is checked
    by :meth:`defect`.

    Attributes
    ----------
    fn
        (B, p) -> (B, n) unit vectors.
    lo, hi
        The parameter box.
    lipschitz
        L with |fn(a) - fn(b)|_2 <= L |a - b|_inf.
    generators
        Orthogonal (n, n) matrices acting on the modes.
    description
        Why the family meets every orbit.
    """

    fn: Callable[[np.ndarray], np.ndarray]
    lo: np.ndarray
    hi: np.ndarray
    lipschitz: float
    generators: tuple[np.ndarray, ...] = field(default_factory=tuple)
    description: str = ""

    def defect(self, tensors: np.ndarray) -> float:
        """Largest relative change of the M_a under the generators (0 for a symmetry)."""
        scale = float(np.abs(tensors).max())
        worst = 0.0
        for r in self.generators:
            moved = np.einsum("ai,bj,ck,dl,xijkl->xabcd", r, r, r, r, tensors)
            worst = max(worst, float(np.abs(moved - tensors).max()) / scale)
        return worst


def _a_of_u(m: np.ndarray, u: np.ndarray) -> np.ndarray:
    """A(u)_{jl} = M^{ijkl} u_i u_k, batched over u (B, n) -> (B, n, n), symmetrised."""
    a = np.einsum("ijkl,bi,bk->bjl", m, u, u)
    return 0.5 * (a + np.swapaxes(a, 1, 2))


def _b_of_v(m: np.ndarray, v: np.ndarray) -> np.ndarray:
    """B(v)_{ik} = M^{ijkl} v_j v_l, batched, symmetrised."""
    b = np.einsum("ijkl,bj,bl->bik", m, v, v)
    return 0.5 * (b + np.swapaxes(b, 1, 2))


def value(m: np.ndarray, u: np.ndarray, v: np.ndarray) -> np.ndarray:
    """E(u, v) for unit-normalised batches of states."""
    u = u / np.linalg.norm(u, axis=-1, keepdims=True)
    v = v / np.linalg.norm(v, axis=-1, keepdims=True)
    return np.einsum("ijkl,...i,...j,...k,...l->...", m, u, v, u, v)


def search_states(m: np.ndarray, rng: np.random.Generator, starts: int = 128,
                  sweeps: int = 60) -> tuple[np.ndarray, np.ndarray, float]:
    """The lowest E(u, v) found by alternating minimisation from random starts.

    Returns (u, v, E) with E re-evaluated directly.
    """
    n = m.shape[0]
    u = np.concatenate([np.eye(n), rng.normal(size=(starts, n))])
    u /= np.linalg.norm(u, axis=1, keepdims=True)
    v = np.zeros_like(u)
    for _ in range(sweeps):
        _, vecs = np.linalg.eigh(_a_of_u(m, u))
        v = vecs[:, :, 0]
        _, vecs = np.linalg.eigh(_b_of_v(m, v))
        u = vecs[:, :, 0]
    vals = value(m, u, v)
    best = int(np.argmin(vals))
    return u[best], v[best], float(vals[best])


def search_reduced(m: np.ndarray, red: StateReduction, points: int = 2048,
                   ) -> tuple[np.ndarray, np.ndarray, float]:
    """The lowest E(u, v) over a grid of the reduced family u = fn(theta) (v exact, the
    lowest eigenvector of A(u)); (u, v, E) with E re-evaluated directly."""
    lo, hi = np.asarray(red.lo, dtype=float), np.asarray(red.hi, dtype=float)
    per_axis = max(2, int(round(points ** (1 / len(lo)))))
    axes = [np.linspace(a, b, per_axis) for a, b in zip(lo, hi, strict=True)]
    theta = np.stack(np.meshgrid(*axes, indexing="ij"), axis=-1).reshape(-1, len(lo))
    u = red.fn(theta)
    lam, vecs = np.linalg.eigh(_a_of_u(m, u))
    b = int(np.argmin(lam[:, 0]))
    return u[b], vecs[b, :, 0], float(value(m, u[b], vecs[b, :, 0]))


def prove_elastic(m: np.ndarray, max_cells: int = 400_000, batch: int = 20_000,
                  reduction: StateReduction | None = None) -> ElasticProof:
    """Prove E(u, v) >= 0 for all real u, v by branch and bound (module docstring).

    With a ``reduction`` the boxes live in its parameter space and the centre's u is
    fn(theta0); |u - u0| <= L max(h) bounds the perturbation.
    """
    if reduction is not None:
        return _prove_reduced(m, reduction, max_cells, batch)
    n = m.shape[0]
    if n > MAX_GENERAL_MODES:
        return ElasticProof("undecided", 0, note=f"branch and bound not run on {n} modes "
                            f"(more than {MAX_GENERAL_MODES}, no symmetry reduction)")
    scale = float(np.abs(m).max())
    if scale == 0:
        return ElasticProof("proven", 0)
    m = m / scale
    m = 0.5 * (m + m.transpose(2, 3, 0, 1))  # E is unchanged; A(u) is then symmetric
    # the quadratic remainder: |A(d, d)| <= sum_ik |d_i||d_k| |A(e_i, e_k)|_F, and also
    # <= |d|^2 sigma_max(Q) with Q[(i,k),(j,l)] = M^{ijkl}
    aik, sigma_q = _remainder_norms(m)
    quad = np.linalg.norm(aik, axis=(2, 3)) + np.linalg.norm(np.swapaxes(aik, 0, 1), axis=(2, 3))
    quad = 0.5 * quad
    centres, halves = [], []
    for face in range(n):
        c = np.zeros(n)
        c[face] = 1.0
        h = np.ones(n)
        h[face] = 0.0
        centres.append(c)
        halves.append(h)
    cen, hal = np.array(centres), np.array(halves)
    done = 0
    while len(cen):
        if done >= max_cells:
            return ElasticProof("undecided", done)
        cb, hb = cen[:batch], hal[:batch]
        cen, hal = cen[batch:], hal[batch:]
        done += len(cb)
        lam, vecs = np.linalg.eigh(_a_of_u(m, cb))
        bad = np.nonzero(lam[:, 0] < 0)[0]
        for b in bad[np.argsort(lam[bad, 0])][:3]:
            e = float(value(m, cb[b], vecs[b, :, 0]))
            if e < -64 * n * n * _EPS:
                u = cb[b] / np.linalg.norm(cb[b])
                return ElasticProof("violated", done, (u, vecs[b, :, 0], e * scale))
        lk = np.einsum("ijkl,bi->bkjl", m, cb)                   # L_k = A(w0, e_k)
        gram = np.einsum("bkjl,bqjl->bkq", lk, lk)
        lin = np.minimum(np.einsum("bk,bk->b", hb, np.sqrt(np.einsum("bkk->bk", gram))),
                         np.linalg.norm(hb, axis=1) * np.sqrt(np.linalg.eigvalsh(gram)[:, -1]))
        h2 = np.einsum("bk,bk->b", hb, hb)
        quadb = np.minimum(np.einsum("bi,ik,bk->b", hb, quad, hb), h2 * sigma_q)
        lower = lam[:, 0] - 2 * lin - quadb - 64 * n * n * _EPS
        keep = lower <= 0
        cb, hb = cb[keep], hb[keep]
        if not len(cb):
            continue
        cen, hal = _split(cen, hal, cb, hb)
    return ElasticProof("proven", done)


def _split(cen: np.ndarray, hal: np.ndarray, cb: np.ndarray, hb: np.ndarray
           ) -> tuple[np.ndarray, np.ndarray]:
    """The queue with each undecided box (centres cb, half-widths hb) halved along its
    widest side appended."""
    axis = np.argmax(hb, axis=1)
    rows = np.arange(len(hb))
    step = np.zeros_like(hb)
    step[rows, axis] = hb[rows, axis] / 2
    hb2 = hb.copy()
    hb2[rows, axis] /= 2
    return np.concatenate([cen, cb - step, cb + step]), np.concatenate([hal, hb2, hb2])


def _remainder_norms(m: np.ndarray) -> tuple[np.ndarray, float]:
    n = m.shape[0]
    aik = np.einsum("ijkl->ikjl", m)
    aik = 0.5 * (aik + np.swapaxes(aik, 2, 3))
    return aik, float(np.linalg.norm(aik.reshape(n * n, n * n), 2))


def _prove_reduced(m: np.ndarray, red: StateReduction, max_cells: int, batch: int,
                   ) -> ElasticProof:
    n = m.shape[0]
    scale = float(np.abs(m).max())
    if scale == 0:
        return ElasticProof("proven", 0)
    m = m / scale
    m = 0.5 * (m + m.transpose(2, 3, 0, 1))
    _, sigma_q = _remainder_norms(m)
    lo, hi = np.asarray(red.lo, dtype=float), np.asarray(red.hi, dtype=float)
    cen, hal = ((lo + hi) / 2)[None, :], ((hi - lo) / 2)[None, :]
    done = 0
    while len(cen):
        if done >= max_cells:
            return ElasticProof("undecided", done)
        cb, hb = cen[:batch], hal[:batch]
        cen, hal = cen[batch:], hal[batch:]
        done += len(cb)
        u0 = red.fn(cb)
        lam, vecs = np.linalg.eigh(_a_of_u(m, u0))
        b = int(np.argmin(lam[:, 0]))
        if lam[b, 0] < 0:
            e = float(value(m, u0[b], vecs[b, :, 0]))
            if e < -64 * n * n * _EPS:
                return ElasticProof("violated", done, (u0[b], vecs[b, :, 0], e * scale))
        lk = np.einsum("ijkl,bi->bkjl", m, u0)
        gram = np.einsum("bkjl,bqjl->bkq", lk, lk)
        delta = red.lipschitz * hb.max(axis=1)
        lower = (lam[:, 0] - 2 * delta * np.sqrt(np.linalg.eigvalsh(gram)[:, -1])
                 - delta**2 * sigma_q - 64 * n * n * _EPS)
        keep = lower <= 0
        cb, hb = cb[keep], hb[keep]
        if not len(cb):
            continue
        cen, hal = _split(cen, hal, cb, hb)
    return ElasticProof("proven", done)
