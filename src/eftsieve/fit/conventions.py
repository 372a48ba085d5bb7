"""Parameter conventions and the affine maps between them.

A *convention* says how a parameter is defined: ``lbar`` (the scale-independent
constants of SU(2) ChPT, defined at a stated pion mass), ``lr`` (the renormalised
constants l_i^r(mu) at a stated scale mu), or ``none`` for parameters that no theory
constrains (nuisance parameters, spectators), which are carried through untouched.

Use :func:`affine_map` to get the exact map between two sets of conventions, then
:meth:`AffineMap.apply_points` for samples and :meth:`AffineMap.apply_cov` for a
covariance.  The Jacobian is exact (the maps are affine), so round trips are exact to
rounding.

The SU(2) relation is Eq. (9.6)-(9.7) of Gasser & Leutwyler, Ann. Phys. 158 (1984) 142:

    lbar_i = (32 pi^2 / gamma_i) l_i^r(mu) - ln(M^2 / mu^2),
    gamma = (1/3, 2/3, -1/2, 2).

Because l_i^r(mu) does not depend on the pion mass, lbar at one mass M maps to lbar at
another mass M' by lbar_i(M') = lbar_i(M) + ln(M^2 / M'^2).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

#: Common-practice default kinematics in MeV (charged pion mass of the PDG, F_pi in the
#: 92 MeV normalisation, and the rho mass as renormalisation scale).  ``common practice``.
DEFAULT_PION_MASS_MEV = 139.57
DEFAULT_FPI_MEV = 92.07
DEFAULT_MU_MEV = 770.0

#: gamma_i of Gasser & Leutwyler, Ann. Phys. 158 (1984) 142, Eq. (9.7), for l_1..l_4.
GAMMA_SU2 = {1: 1.0 / 3.0, 2: 2.0 / 3.0, 3: -0.5, 4: 2.0}

CONVENTION_NAMES = ("lbar", "lr", "Lr", "projective", "dimensionful", "none")


@dataclass(frozen=True)
class Convention:
    """How one parameter is defined.

    Attributes
    ----------
    name
        ``lbar``, ``lr`` or ``none``.
    pion_mass_mev
        The pion mass at which ``lbar`` is defined (MeV); ``None`` otherwise.
    mu_mev
        The renormalisation scale of ``lr`` (MeV); ``None`` otherwise.
    """

    name: str
    pion_mass_mev: float | None = None
    mu_mev: float | None = None
    gap_mev: float | None = None

    def to_dict(self) -> dict[str, object]:
        out: dict[str, object] = {"name": self.name}
        if self.pion_mass_mev is not None:
            out["pion_mass_mev"] = self.pion_mass_mev
        if self.mu_mev is not None:
            out["mu_mev"] = self.mu_mev
        if self.gap_mev is not None:
            out["gap_mev"] = self.gap_mev
        return out

    def describe(self) -> str:
        if self.name == "lbar":
            return f"lbar at M_pi = {self.pion_mass_mev:g} MeV"
        if self.name == "lr":
            return f"l^r(mu) at mu = {self.mu_mev:g} MeV"
        if self.name == "Lr":
            return f"SU(3) L_i^r(mu) at mu = {self.mu_mev:g} MeV"
        if self.name == "dimensionful":
            return f"dimensionful coefficients with mass gap M = {self.gap_mev:g} MeV"
        if self.name == "projective":
            return "projective dimensionless ratios (g_k M^(2k-4) / g2)"
        return "untransformed"


@dataclass(frozen=True)
class AffineMap:
    """The map y = J x + c between two coordinate systems.

    Attributes
    ----------
    jacobian
        J, shape (n_out, n_in).
    shift
        c, shape (n_out,).
    names_in, names_out
        Parameter names of the source and target coordinates.
    """

    jacobian: np.ndarray
    shift: np.ndarray
    names_in: tuple[str, ...]
    names_out: tuple[str, ...] = field(default=())

    def apply_points(self, x: np.ndarray) -> np.ndarray:
        """Map points of shape (n, n_in) (or a single point of shape (n_in,))."""
        x = np.asarray(x, dtype=float)
        return x @ self.jacobian.T + self.shift

    def apply_cov(self, cov: np.ndarray) -> np.ndarray:
        """Map a covariance: J C J^T (exact for an affine map)."""
        return self.jacobian @ np.asarray(cov, dtype=float) @ self.jacobian.T

    def inverse(self) -> AffineMap:
        jinv = np.linalg.inv(self.jacobian)
        return AffineMap(jinv, -jinv @ self.shift, self.names_out, self.names_in)

    def to_dict(self) -> dict[str, object]:
        return {
            "jacobian": self.jacobian.tolist(),
            "shift": self.shift.tolist(),
            "names_in": list(self.names_in),
            "names_out": list(self.names_out),
        }


def lec_index(name: str) -> int | None:
    """The index i of an SU(2) constant named ``lbar<i>`` or ``l<i>``; None otherwise."""
    for prefix in ("lbar", "lr", "l"):
        if name.startswith(prefix) and name[len(prefix):].isdigit():
            i = int(name[len(prefix):])
            return i if i in GAMMA_SU2 else None
    return None


def su2_scalar_map(index: int, source: Convention, target: Convention) -> tuple[float, float]:
    """Scale a and shift c with target = a * source + c for the SU(2) constant l_index.

    Goes through the mass-independent l^r(mu) of Gasser & Leutwyler (1984), Eq. (9.6).
    """
    gamma = GAMMA_SU2[index]
    # source -> l^r at the source's own scale, written as lr = a1 * x + c1
    if source.name == "lbar":
        assert source.pion_mass_mev is not None  # guaranteed by the loaders
        a1 = gamma / (32 * math.pi**2)
        ref_mu = DEFAULT_MU_MEV
        c1 = a1 * math.log(source.pion_mass_mev**2 / ref_mu**2)
    elif source.name == "lr":
        assert source.mu_mev is not None
        a1, c1, ref_mu = 1.0, 0.0, source.mu_mev
    else:
        raise ValueError(f"no map from convention '{source.name}' for l{index}")
    # l^r(mu) -> l^r(mu'): l^r(mu') = l^r(mu) + gamma/(32 pi^2) ln(mu^2/mu'^2)
    if target.name == "lbar":
        assert target.pion_mass_mev is not None
        a2 = 32 * math.pi**2 / gamma
        c2 = -math.log(target.pion_mass_mev**2 / ref_mu**2)
        return a2 * a1, a2 * c1 + c2
    if target.name == "lr":
        assert target.mu_mev is not None
        run = gamma / (32 * math.pi**2) * math.log(ref_mu**2 / target.mu_mev**2)
        return a1, c1 + run
    raise ValueError(f"no map to convention '{target.name}' for l{index}")


def affine_map(
    names: tuple[str, ...], sources: tuple[Convention, ...], targets: tuple[Convention, ...]
) -> AffineMap:
    """The diagonal affine map that moves each parameter from its source convention to its target.

    Parameters whose source or target convention is ``none`` are passed through unchanged.
    """
    n = len(names)
    jac = np.eye(n)
    shift = np.zeros(n)
    for k, (name, src, tgt) in enumerate(zip(names, sources, targets, strict=True)):
        if src.name == "none" or tgt.name == "none" or src == tgt:
            continue
        index = lec_index(name)
        if index is None:
            raise ValueError(f"parameter '{name}' has no SU(2) convention map")
        jac[k, k], shift[k] = su2_scalar_map(index, src, tgt)
    return AffineMap(jac, shift, names, names)
