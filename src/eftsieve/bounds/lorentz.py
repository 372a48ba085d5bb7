"""Lorentz contractions used by operator densities (metric mostly minus, eps^{0123} = +1).

Densities receive contravariant tensors with any leading batch axes; these helpers
contract the trailing Lorentz axes so that operator files read like the Lagrangian.
"""

from __future__ import annotations

from itertools import permutations

import numpy as np

from eftsieve.bounds.contact import METRIC, lower


def _levi_civita() -> np.ndarray:
    eps = np.zeros((4, 4, 4, 4))
    for perm in permutations(range(4)):
        inv = sum(1 for a in range(4) for b in range(a + 1, 4) if perm[a] > perm[b])
        eps[perm] = (-1) ** inv
    return eps


#: eps^{mu nu rho sigma} with eps^{0123} = +1 (common practice)
LEVI_CIVITA = _levi_civita()


def ff(f1: np.ndarray, f2: np.ndarray) -> np.ndarray:
    """F1_{mu nu} F2^{mu nu} of (..., 4, 4) field strengths."""
    return np.einsum("...mn,...mn->...", lower(f1, (-2, -1)), f2)


def dual(f: np.ndarray) -> np.ndarray:
    """Ftilde^{mu nu} = (1/2) eps^{mu nu rho sigma} F_{rho sigma}."""
    return 0.5 * np.einsum("mnrs,...rs->...mn", LEVI_CIVITA, lower(f, (-2, -1)))


def chain(f1: np.ndarray, f2: np.ndarray) -> np.ndarray:
    """(F1 F2)_mu^rho = F1_{mu nu} F2^{nu rho}, a mixed tensor (..., 4, 4)."""
    return np.einsum("...mn,...nr->...mr", lower(f1, (-2, -1)), f2)


def trace_chain(*fs: np.ndarray) -> np.ndarray:
    """F1_{mu nu} F2^{nu rho} F3_{rho lambda} F4^{lambda mu} ... for an even number of F."""
    if len(fs) % 2:
        raise ValueError("an even number of field strengths is needed")
    out = chain(fs[0], fs[1])
    for k in range(2, len(fs), 2):
        out = np.einsum("...mr,...rl->...ml", out, chain(fs[k], fs[k + 1]))
    return np.einsum("...mm->...", out)


def vv(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """a_mu b^mu of (..., 4) vectors."""
    return np.einsum("...m,m,...m->...", a, METRIC, b)
