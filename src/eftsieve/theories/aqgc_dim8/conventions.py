"""Conventions of the quartic-gauge-coupling coefficients, as exact linear maps.

The region's coordinates are the 18 coefficients in the convention ``hat-i`` (below).
A published result states its coefficients in one of these conventions; a fit card or
the ``--convention`` flag must say which (no convention is guessed).  Each convention is
a linear map from the card's parameters (any subset of ``fS0 .. fT9`` and the redundant
``fM6``) to the 18 coordinates, as an :class:`eftsieve.fit.conventions.AffineMap`:

``hat-i``
    W_mn = i g (sigma^a/2) W^a_mn, B_mn = i (g'/2) B_mn, O_M5 with its hermitian
    conjugate, O_S0 and O_S2 separate: Eboli, Gonzalez-Garcia & Mizukoshi,
    hep-ph/0606118, and the update by Eboli & Gonzalez-Garcia, arXiv:1604.03555 (from
    memory).  The identity on the 18 coordinates; fM6 enters as fM0 += fM6/2.
``hat-real``
    W_mn = g (sigma^a/2) W^a_mn, B_mn = (g'/2) B_mn (no factor i), as in some
    implementations and experimental papers (from memory; the conversion is stated in
    arXiv:1604.03555, from memory).  Every M-type operator holds two hatted field
    strengths, so every f_M flips sign; S (none) and T (four) are unchanged.
``hat-i-s02-tied`` and ``hat-real-s02-tied``
    Results obtained when O_S0 and O_S2 were implemented as one structure (before the
    update arXiv:1604.03555 separated them; e.g. the 8 TeV same-sign WW analysis, CMS,
    arXiv:1410.6315, from memory): the quoted f_S0 multiplies O_S0 + O_S2, so
    fS0 = fS2 = (quoted fS0).  A card in these conventions may not name fS2.  The map is
    not invertible; converting *to* a tied convention is refused.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np

from eftsieve.errors import InputError
from eftsieve.fit.conventions import AffineMap, ConventionSpec
from eftsieve.theories.aqgc_dim8.operators import COEFFICIENTS, M_COEFFICIENTS, PARAMETERS

CANONICAL = "hat-i"
_TEXT = {
    "hat-i": "f_i/Lambda^4 with W = i g sigma^a W^a/2, B = i g' B/2 (hep-ph/0606118, "
             "arXiv:1604.03555)",
    "hat-real": "f_i/Lambda^4 with W = g sigma^a W^a/2, B = g' B/2 (every f_M sign-flipped "
                "relative to hat-i)",
    "hat-i-s02-tied": "as hat-i, with O_S0 and O_S2 as one structure (fS0 = fS2)",
    "hat-real-s02-tied": "as hat-real, with O_S0 and O_S2 as one structure (fS0 = fS2)",
}
CONVENTIONS = {name: ConventionSpec(name, (), text) for name, text in _TEXT.items()}
#: the sign of each of the 18 coordinates under hat-real -> hat-i
_M_SIGN = np.array([-1.0 if c in M_COEFFICIENTS else 1.0 for c in COEFFICIENTS])


def to_canonical(convention: str, names: Sequence[str], path: str | Path | None = None,
                 field: str = "convention") -> AffineMap:
    """The map from parameters ``names`` stated in ``convention`` to the 18 coordinates.

    Raises InputError naming ``field`` for an unknown convention, an unknown parameter,
    or fS2 in a tied convention.
    """
    if convention not in CONVENTIONS:
        raise InputError(path, field, f"unknown convention '{convention}' of aqgc-dim8",
                         f"state one of {', '.join(CONVENTIONS)}")
    names = tuple(names)
    tied = convention.endswith("-s02-tied")
    sign = _M_SIGN if convention.startswith("hat-real") else np.ones(len(COEFFICIENTS))
    jac = np.zeros((len(COEFFICIENTS), len(names)))
    for col, name in enumerate(names):
        if name not in PARAMETERS:
            raise InputError(path, field, f"'{name}' is not a coefficient of aqgc-dim8",
                             f"use {', '.join(PARAMETERS)}")
        if tied and name == "fS2":
            raise InputError(path, field, f"convention '{convention}' ties fS2 to fS0, so a "
                             "result in it has no separate fS2", "drop fS2, or state the "
                             "untied convention if fS2 was fitted on its own")
        if name == "fM6":        # O_M6 = O_M0 / 2 (operators module docstring)
            jac[COEFFICIENTS.index("fM0"), col] = 0.5
        else:
            jac[COEFFICIENTS.index(name), col] = 1.0
        if tied and name == "fS0":
            jac[COEFFICIENTS.index("fS2"), col] = 1.0
    jac = jac * sign[:, None]
    return AffineMap(jac, np.zeros(len(COEFFICIENTS)), names, COEFFICIENTS)


def convert(values: np.ndarray, names: Sequence[str], source: str, target: str,
            ) -> np.ndarray:
    """Coefficients ``names`` (columns of ``values``) from ``source`` to ``target``.

    Only between the untied conventions and only for parameters among the 18 (fM6 is
    folded into fM0 first with :func:`to_canonical`).
    """
    for conv in (source, target):
        if conv not in CONVENTIONS:
            raise InputError(None, "convention", f"unknown convention '{conv}'",
                             f"state one of {', '.join(CONVENTIONS)}")
    if target.endswith("-s02-tied"):
        raise InputError(None, "convention", f"'{target}' is not invertible (fS0 and fS2 "
                         "tied)", "convert to an untied convention")
    fwd = to_canonical(source, names)
    back = to_canonical(target, names)
    rows = [COEFFICIENTS.index(n) for n in names if n in COEFFICIENTS]
    if len(rows) != len(names) or source.endswith("-s02-tied"):
        raise InputError(None, "parameters", "conversion needs parameters among the 18 "
                         "coordinates and an untied source", "fold fM6 into fM0 first")
    j = np.linalg.solve(back.jacobian[rows], fwd.jacobian[rows])
    return np.asarray(values, dtype=float) @ j.T
