"""Multi-field forward positivity: the cone of allowed forward tensors, and its certificates.

For n low-energy modes and Wilson coefficients c (k of them) the forward tensor
``M^{ijkl}(c) = sum_a c_a M_a^{ijkl}`` (:mod:`eftsieve.bounds.contact`) must lie in the
convex cone

    C = { M : M^{ijkl} = rho^{(ij),(kl)} + rho^{(il),(kj)},  rho PSD on the pair space }

(Zhang & Zhou, arXiv:2005.03047; Li, Xu, Yang, Zhang & Zhou, arXiv:2101.01191;
docs/physics_cones.md derives it).  Written as n^2 x n^2 matrices with rows (ij) and
columns (kl), crossing is the map ``X^x_{(ij),(kl)} = X_{(il),(kj)}``.

Two bound families:

``extremal``
    M(c) in C, decided by semidefinite programming (:mod:`eftsieve.bounds.sdp`).
``elastic``
    E(u, v) = u_i v_j u_k v_l M^{ijkl} >= 0 for all real unit u, v (product states),
    decided by a search for violating states and a branch-and-bound proof
    (:mod:`eftsieve.bounds.elastic`).

Certificates (checked here, independently of any solver status):

* an outer facet of ``extremal`` is a crossing-symmetric PSD matrix Z: for M = rho +
  rho^x, <Z, M>/2 = <Z, rho> >= lambda_min(Z) tr(rho) = lambda_min(Z) tau(M) (Z on the
  live pairs only, :func:`eftsieve.bounds.sectors.dead_pairs`: rho vanishes elsewhere) with
  tau(M) = (1/2) sum_ij M^{ijij}; so ``n_a = <Z, M_a>/2 - min(lambda_min(Z), 0) tau_a``
  is valid whatever the solver did (:func:`facet_from_dual`).
* an outer facet of ``elastic`` is a product state (u, v): n_a = E_a(u, v), exact.
  It is also a facet of ``extremal`` (Z = (u x v)(u x v)^T is PSD and crossing-symmetric).
* an inner point of ``extremal`` is an explicit rho: rho' = sym(rho) + R/2 with the
  residual R = M(c) - rho - rho^x satisfies rho' + rho'^x = M(c) exactly (R^x = R),
  and c is proven inside when lambda_min(rho') > 0 (:func:`verify_rho`).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from eftsieve.tolerances import CONE_CERT_TOL

#: verdict codes, equal to those of eftsieve.check (inside, marginal, outside)
INSIDE, MARGINAL, OUTSIDE = 0, 1, 2
FAMILIES = ("elastic", "extremal")


def as_matrix(t: np.ndarray) -> np.ndarray:
    """(..., n, n, n, n) tensor -> (..., n^2, n^2) matrix with rows (ij), columns (kl)."""
    n = t.shape[-1]
    return t.reshape(*t.shape[:-4], n * n, n * n)


def cross(x: np.ndarray) -> np.ndarray:
    """Crossing of an (..., n^2, n^2) matrix: X^x_{(ij),(kl)} = X_{(il),(kj)}."""
    n = int(round(np.sqrt(x.shape[-1])))
    t = x.reshape(*x.shape[:-2], n, n, n, n)
    return np.swapaxes(t, -3, -1).reshape(x.shape)


@dataclass(frozen=True)
class ConeProblem:
    """A multi-field positivity problem: modes, coefficients and their forward tensors.

    Attributes
    ----------
    coefficients
        Names of the Wilson coefficients c_a (the region's coordinates).
    modes
        Labels of the n modes.
    tensors
        M_a^{ijkl}, shape (k, n, n, n, n), real.
    info
        Free-form description (basis, normalisation) recorded in the region.
    """

    coefficients: tuple[str, ...]
    modes: tuple[str, ...]
    tensors: np.ndarray
    info: dict[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        t = np.asarray(self.tensors, dtype=float)
        k, n = len(self.coefficients), len(self.modes)
        if t.shape != (k, n, n, n, n):
            raise ValueError(f"tensors must have shape {(k, n, n, n, n)}, got {t.shape}")
        object.__setattr__(self, "tensors", t)

    @property
    def k(self) -> int:
        return len(self.coefficients)

    @property
    def n(self) -> int:
        return len(self.modes)

    def derived(self, key: str, make: Callable[[], Any]) -> Any:
        """``make()``, computed once per problem object and kept with it (the tensors are
        never modified after construction).  Per-point solvers ask for their programs and
        masks here instead of re-deriving them from the tensors (a 3 MB copy and hash for
        18 coefficients on 12 modes) at every point.  Not pickled."""
        memo = self.__dict__.setdefault("_derived", {})
        if key not in memo:
            memo[key] = make()
        return memo[key]

    def __getstate__(self) -> dict[str, Any]:
        return {k: v for k, v in self.__dict__.items() if k != "_derived"}

    def matrices(self) -> np.ndarray:
        """M_a as (k, n^2, n^2) matrices."""
        return as_matrix(self.tensors)

    def tensor(self, c: np.ndarray) -> np.ndarray:
        """M(c) = sum_a c_a M_a, shape (..., n, n, n, n)."""
        return np.tensordot(np.asarray(c, dtype=float), self.tensors, axes=(-1, 0))

    def tau(self) -> np.ndarray:
        """tau_a = (1/2) sum_ij M_a^{ijij}: tau(M) = tr(rho) >= 0 on the cone."""
        return 0.5 * np.einsum("aijij->a", self.tensors)

    def symmetry_defects(self) -> dict[str, float]:
        """Largest violation (relative) of the symmetries every forward tensor must have:
        crossing j <-> l, time reversal (ij) <-> (kl), and Bose (i, j) <-> (j, i) with
        (k, l) <-> (l, k)."""
        t = self.tensors
        scale = max(float(np.abs(t).max()), 1e-300)
        return {"crossing": float(np.abs(t - t.transpose(0, 1, 4, 3, 2)).max() / scale),
                "time_reversal": float(np.abs(t - t.transpose(0, 3, 4, 1, 2)).max() / scale),
                "bose": float(np.abs(t - t.transpose(0, 2, 1, 4, 3)).max() / scale)}

    def rank(self) -> int:
        """Rank of the map c -> M(c); the cone is pointed in c only if this is k."""
        return int(np.linalg.matrix_rank(self.tensors.reshape(self.k, -1)))

    def to_dict(self) -> dict[str, Any]:
        """Sparse JSON form: entries [a, i, j, k, l, value] with |value| > 0."""
        idx = np.argwhere(np.abs(self.tensors) > 0)
        entries = [[int(x) for x in row] + [float(self.tensors[tuple(row)])] for row in idx]
        return {"coefficients": list(self.coefficients), "modes": list(self.modes),
                "entries": entries, "info": self.info}

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> ConeProblem:
        k, n = len(d["coefficients"]), len(d["modes"])
        t = np.zeros((k, n, n, n, n))
        for row in d["entries"]:
            t[tuple(int(x) for x in row[:5])] = float(row[5])
        return cls(tuple(d["coefficients"]), tuple(d["modes"]), t, dict(d.get("info", {})))


# ---- product states ---------------------------------------------------------------------
def elastic_values(problem: ConeProblem, u: np.ndarray, v: np.ndarray) -> np.ndarray:
    """E_a(u, v) = u_i v_j u_k v_l M_a^{ijkl} for batches of states: (..., k)."""
    return np.einsum("aijkl,...i,...j,...k,...l->...a", problem.tensors, u, v, u, v)


# ---- certificates --------------------------------------------------------------------------
@dataclass(frozen=True)
class FacetCertificate:
    """A verified outer facet n . c >= 0 and what proves it.

    Attributes
    ----------
    normal
        Unit normal in the coefficients' coordinates.
    kind
        ``dual-psd`` (Z) or ``product-state`` (u, v).
    lambda_min
        Smallest eigenvalue of Z relative to its largest (``dual-psd``), re-evaluated.
    repair
        The amount of tau added to the normal to make the facet exact despite a slightly
        negative eigenvalue (0 when Z is PSD within rounding).
    data
        The certificate itself (Z as a list, or u and v).
    """

    normal: np.ndarray
    kind: str
    lambda_min: float
    repair: float
    data: dict[str, Any]

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "lambda_min_rel": self.lambda_min, "repair": self.repair,
                **self.data}


def _eig_error(z: np.ndarray) -> float:
    """A bound on the absolute floating-point error of eigvalsh (n eps ||Z||_F)."""
    return 8 * z.shape[-1] * np.finfo(float).eps * float(np.linalg.norm(z))


def dense_factors(data: dict[str, Any]) -> list[list[float]]:
    """The ``[l_k, *z_k]`` rows of a stored dual certificate: ``Z_factors`` as written, or
    ``Z_sparse`` (``{"size": n^2, "factors": [[l_k, [indices], [values]], ...]}``, the
    compact form that :func:`facet_from_dual` writes)."""
    if "Z_factors" in data:
        return data["Z_factors"]
    sp = data["Z_sparse"]
    rows = []
    for lam, idx, val in sp["factors"]:
        z = np.zeros(int(sp["size"]))
        z[np.asarray(idx, dtype=int)] = val
        rows.append([float(lam), *z.tolist()])
    return rows


def _sparse(factors: np.ndarray) -> dict[str, Any]:
    """Z_sparse of dense ``[l_k, *z_k]`` rows (entries that are exactly zero dropped)."""
    out = []
    for row in factors:
        idx = np.flatnonzero(row[1:])
        out.append([float(row[0]), idx.tolist(), row[1:][idx].tolist()])
    return {"size": int(factors.shape[1] - 1), "factors": out}


def certificate_matrix(factors: list[list[float]], dead: np.ndarray | None = None,
                       ) -> np.ndarray:
    """Z = (Zt + Zt^x)/2 with Zt = sum_k l_k z_k z_k^T from stored ``[l_k, *z_k]`` rows.

    With dead pairs (boolean mask, :func:`eftsieve.bounds.sectors.dead_pairs`), Zt counts
    on the live-live entries only: Z = (Zt + Zt^x)/2 where an entry and its crossing
    partner are both live-live, Zt where only the entry is, Zt^x where only the partner
    is, 0 elsewhere.  Z is crossing-symmetric and equals Zt on the live pairs up to that
    average; without dead pairs it is (Zt + Zt^x)/2.
    """
    f = np.asarray(factors, dtype=float)
    zt = np.einsum("k,kp,kq->pq", f[:, 0], f[:, 1:], f[:, 1:])
    if dead is None or not dead.any():
        return 0.5 * (zt + cross(zt))
    live = ~dead
    ll = (live[:, None] & live[None, :]).astype(float)
    llx = cross(ll) > 0.5
    ll_b = ll > 0.5
    zx = cross(zt)
    return np.where(ll_b & llx, 0.5 * (zt + zx), np.where(ll_b, zt, np.where(llx, zx, 0.0)))


def _block_eigh(z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Eigenpairs of a symmetric matrix, block by block of its exact-zero pattern (the
    SDP's dual is block diagonal in the sign sectors, :mod:`eftsieve.bounds.sectors`):
    each eigenvector is supported on one block, so the stored factors stay sparse even
    where eigenvalues of different blocks coincide."""
    from scipy.sparse.csgraph import connected_components

    n_blocks, label = connected_components(z != 0, directed=False)
    lams, vecs = [], []
    for b in range(n_blocks):
        idx = np.flatnonzero(label == b)
        lb, vb = np.linalg.eigh(z[np.ix_(idx, idx)])
        full = np.zeros((len(z), len(idx)))
        full[idx] = vb
        lams.append(lb)
        vecs.append(full)
    return np.concatenate(lams), np.hstack(vecs)


def facet_from_dual(problem: ConeProblem, z: np.ndarray) -> FacetCertificate | None:
    """A valid facet from a (numerical) dual matrix Z, or None when Z is far from PSD.

    Z is symmetrised and its eigenpairs above ``1e-12`` of the largest are kept, with the
    eigenvector entries below ``1e-13`` set to zero and the rest rounded to 12 significant
    digits (the stored certificate, still a PSD Zt = sum_k l_k z_k z_k^T whatever the
    rounding, and stored sparse); the normal is computed from the stored Zt, so it is
    exact for what is written.  The linear form on crossing-symmetric M sees only
    Zc = (Zt + Zt^x)/2, whose eigenvalues are re-evaluated; a negative smallest eigenvalue
    -e is absorbed exactly by adding (e + rounding) tau to the normal (module docstring).
    """
    z = 0.5 * (z + z.T)
    lam, vec = _block_eigh(z)
    top = float(np.abs(lam).max()) if len(lam) else 0.0
    if top == 0 or lam.min() < -CONE_CERT_TOL * top:
        return None
    keep = lam > 1e-12 * top
    f = np.column_stack([lam[keep] / top, vec[:, keep].T])
    f[:, 1:][np.abs(f[:, 1:]) < 1e-13] = 0.0
    f = _round_significant(f, 12)
    cert = _facet_from_factors(problem, f.tolist())
    if cert is None:
        return None
    data = {"Z_sparse": _sparse(f), "scale": cert.data["scale"]}
    return FacetCertificate(cert.normal, cert.kind, cert.lambda_min, cert.repair, data)


def _round_significant(x: np.ndarray, digits: int) -> np.ndarray:
    """x rounded to ``digits`` significant digits (zeros and non-finite values kept)."""
    out = np.array(x, dtype=float)
    nz = (out != 0) & np.isfinite(out)
    scale = 10.0 ** (digits - 1 - np.floor(np.log10(np.abs(out[nz]))))
    out[nz] = np.round(out[nz] * scale) / scale
    return out


def _facet_from_factors(problem: ConeProblem, factors: list[list[float]],
                        ) -> FacetCertificate | None:
    dead = _dead_pairs(problem)
    zc = certificate_matrix(factors, dead)
    # every rho of the cone vanishes on dead pairs, so only Zc on the live pairs matters
    live = ~dead
    zl = zc[np.ix_(live, live)]
    lmin = float(np.linalg.eigvalsh(zl)[0])
    top = float(np.abs(zc).max())
    if lmin < -CONE_CERT_TOL * top:
        return None
    repair = max(-lmin, 0.0) + _eig_error(zl)
    normal = 0.5 * np.einsum("pq,apq->a", zc, problem.matrices()) + repair * problem.tau()
    norm = float(np.linalg.norm(normal))
    if norm == 0:
        return None
    return FacetCertificate(normal / norm, "dual-psd", lmin / top, repair / norm,
                            {"Z_factors": factors, "scale": norm})


def verify_certificate(problem: ConeProblem, cert: dict[str, Any],
                       normal: np.ndarray) -> bool:
    """Recompute a stored facet from its certificate alone and compare the normals."""
    if cert.get("kind") == "product-state":
        again = facet_from_states(problem, np.asarray(cert["u"]), np.asarray(cert["v"]))
    elif cert.get("kind") == "product-states":          # sum_s w_s E(u_s, v_s), w >= 0
        w = np.asarray(cert["weights"], dtype=float)
        if (w < 0).any():
            return False
        total = sum(wi * elastic_values(problem, np.asarray(u) / np.linalg.norm(u),
                                        np.asarray(v) / np.linalg.norm(v))
                    for wi, u, v in zip(w, cert["u"], cert["v"], strict=True))
        return bool(np.allclose(total / np.linalg.norm(total), normal, rtol=0, atol=1e-12))
    elif cert.get("kind") == "dual-psd":
        got = _facet_from_factors(problem, dense_factors(cert))
        if got is None:
            return False
        again = got
    else:
        return False
    return bool(np.allclose(again.normal, normal, rtol=0, atol=1e-12))


def facet_from_states(problem: ConeProblem, u: np.ndarray, v: np.ndarray) -> FacetCertificate:
    """The exact facet E_a(u, v) . c >= 0 of a real product state."""
    u = np.asarray(u, dtype=float) / np.linalg.norm(u)
    v = np.asarray(v, dtype=float) / np.linalg.norm(v)
    normal = elastic_values(problem, u, v)
    norm = float(np.linalg.norm(normal))
    return FacetCertificate(normal / norm, "product-state", 0.0, 0.0,
                            {"u": u.tolist(), "v": v.tolist()})


def check_facet_on_cone(problem: ConeProblem, cert: FacetCertificate,
                        rng: np.random.Generator, draws: int = 64) -> float:
    """Worst value of the facet's linear form on random members of the cone (>= 0 if valid).

    Random members are built without any solver: M = rho + rho^x for random PSD rho
    (Wishart; zero on dead pairs, where every member's rho vanishes), and the form is
    applied on the tensor level, n . c -> <Z, M>/2 + repair tau
    for ``dual-psd`` and E(u, v) for ``product-state``.  Returns the smallest value
    relative to the form's size (an independent check of the certificate).
    """

    n2 = problem.n ** 2
    dead = _dead_pairs(problem)
    g = rng.normal(size=(draws, n2, 3))
    g[:, dead, :] = 0.0                             # members of the cone vanish there
    rho = g @ np.swapaxes(g, 1, 2)
    m = rho + cross(rho)
    if cert.kind == "dual-psd":
        z = certificate_matrix(dense_factors(cert.data), dead) / cert.data["scale"]
        tau_m = 0.5 * np.einsum("bijij->b", m.reshape(draws, *(problem.n,) * 4))
        vals = 0.5 * np.einsum("pq,bpq->b", z, m) + cert.repair * tau_m
        scale = np.abs(z).sum() * np.abs(m).max(axis=(1, 2))
    else:
        u, v = np.asarray(cert.data["u"]), np.asarray(cert.data["v"])
        uv = np.kron(u, v)
        vals = np.einsum("p,bpq,q->b", uv, m, uv)
        scale = np.abs(m).max(axis=(1, 2)) * np.abs(uv).sum() ** 2
    return float((vals / scale).min())


def _dead_pairs(problem: ConeProblem) -> np.ndarray:
    """:func:`eftsieve.bounds.sectors.dead_pairs` of the problem, computed once (read-only)."""
    from eftsieve.bounds.sectors import dead_pairs

    def make() -> np.ndarray:
        dead = dead_pairs(problem.tensors)
        dead.flags.writeable = False
        return dead

    return problem.derived("dead_pairs", make)


def verify_rho(problem: ConeProblem, c: np.ndarray, rho: np.ndarray,
               ) -> tuple[bool, float, np.ndarray]:
    """Prove M(c) in C from a numerical rho: (proven, lambda_min relative, exact rho').

    rho' = sym(rho) + R/2 with R = M(c) - rho - rho^x reproduces M(c) exactly; the proof
    holds when lambda_min(rho') exceeds the eigenvalue rounding bound.  Where some pairs
    are dead (M_a^{ijij} = 0 for all a, :func:`eftsieve.bounds.sectors.dead_pairs`),
    every entry of rho' in a dead row or column is moved to its crossing partner (which
    keeps rho' + rho'^x = M(c)), the dead rows must then vanish up to the rounding of M
    itself (1e-12 of its largest entry, the tolerance of ``dead_pairs``) and are set to
    zero, and lambda_min is taken on the live pairs.
    """

    m = as_matrix(problem.tensor(c))
    r0 = 0.5 * (rho + rho.T)
    resid = m - r0 - cross(r0)
    resid = 0.5 * (resid + cross(resid))
    rp = r0 + 0.5 * resid
    dead = _dead_pairs(problem)
    if dead.any():
        mask = dead[:, None] | dead[None, :]
        moved = np.where(mask, rp, 0.0)
        rp = np.where(mask, 0.0, rp) + cross(moved)
        # what is left on dead rows is M's own rounding at entries that vanish
        # structurally (the tolerance of dead_pairs); more than that refutes the proof
        if np.abs(rp[mask]).max() > 1e-12 * max(float(np.abs(m).max()), 1e-300):
            return False, -1.0, rp
        rp = np.where(mask, 0.0, rp)
        live = ~dead
        sub = rp[np.ix_(live, live)]
    else:
        sub = rp
    lam = float(np.linalg.eigvalsh(sub)[0])
    top = max(float(np.abs(sub).max()), 1e-300)
    return lam > _eig_error(sub), lam / top, rp
