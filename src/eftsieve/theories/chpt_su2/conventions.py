"""SU(2) ChPT conventions: ``lbar`` at a pion mass and ``lr`` (l_i^r at a scale mu).

The relation is Eq. (9.6)-(9.7) of Gasser & Leutwyler, Ann. Phys. 158 (1984) 142:

    lbar_i = (32 pi^2 / gamma_i) l_i^r(mu) - ln(M^2 / mu^2),
    gamma = (1/3, 2/3, -1/2, 2).

Because l_i^r(mu) does not depend on the pion mass, lbar at one mass M maps to lbar at
another mass M' by lbar_i(M') = lbar_i(M) + ln(M^2 / M'^2).  Use :func:`affine_map` to
get the exact map between two sets of conventions.
"""

from __future__ import annotations

import math

import numpy as np

from eftsieve.errors import InputError
from eftsieve.fit.conventions import AffineMap, Convention, ConventionSpec, make_convention

#: Common-practice default kinematics in MeV (charged pion mass of the PDG, F_pi in the
#: 92 MeV normalisation, and the rho mass as renormalisation scale).  ``common practice``.
DEFAULT_PION_MASS_MEV = 139.57
DEFAULT_FPI_MEV = 92.07
DEFAULT_MU_MEV = 770.0

#: gamma_i of Gasser & Leutwyler, Ann. Phys. 158 (1984) 142, Eq. (9.7), for l_1..l_4.
GAMMA_SU2 = {1: 1.0 / 3.0, 2: 2.0 / 3.0, 3: -0.5, 4: 2.0}

#: the conventions of chpt-su2 parameters
CONVENTIONS = {
    "lbar": ConventionSpec("lbar", (("pion_mass_mev", "the pion mass it is defined at"),),
                           "lbar at M_pi = {pion_mass_mev:g} MeV"),
    "lr": ConventionSpec("lr", (("mu_mev", "its renormalisation scale"),),
                         "l^r(mu) at mu = {mu_mev:g} MeV"),
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
        a1 = gamma / (32 * math.pi**2)
        ref_mu = DEFAULT_MU_MEV
        c1 = a1 * math.log(_need(source, 'pion_mass_mev')**2 / ref_mu**2)
    elif source.name == "lr":
        a1, c1, ref_mu = 1.0, 0.0, _need(source, 'mu_mev')
    else:
        raise ValueError(f"no map from convention '{source.name}' for l{index}")
    # l^r(mu) -> l^r(mu'): l^r(mu') = l^r(mu) + gamma/(32 pi^2) ln(mu^2/mu'^2)
    if target.name == "lbar":
        a2 = 32 * math.pi**2 / gamma
        c2 = -math.log(_need(target, 'pion_mass_mev')**2 / ref_mu**2)
        return a2 * a1, a2 * c1 + c2
    if target.name == "lr":
        run = gamma / (32 * math.pi**2) * math.log(ref_mu**2 / _need(target, 'mu_mev')**2)
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


def _need(conv: Convention, key: str) -> float:
    """A convention's kinematic value, which the loaders guarantee; a typed error if not."""
    value = conv.get(key)
    if value is None:
        raise InputError(None, key, f"convention '{conv.name}' lacks {key}",
                         f"state {key} (MeV) with the convention")
    return value


def convention(name: str, **values: float | None) -> Convention:
    """A chpt-su2 convention by name, with its description (``lbar`` or ``lr``)."""
    return make_convention(CONVENTIONS[name], **values)
