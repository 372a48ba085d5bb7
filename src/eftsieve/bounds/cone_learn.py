"""Facets learned from earlier points' certificates, reused on later points.

When the points of a cone's shell are decided one by one in a fixed order
(:meth:`eftsieve.bounds.cone_region.ConeShell.decide_in_order`), every ``outside``
verdict comes with a verified separating facet n . c >= 0 of the whole cone: an
extremal dual certificate (:func:`eftsieve.bounds.cones.facet_from_dual`) or an elastic
violating product state (:func:`eftsieve.bounds.cones.facet_from_states`).  Such a facet
is valid whatever point it was found at, so it decides every later point with
n . c/|c| < -CONE_BOUNDARY_TOL without a solve.  This module holds the learned set
(:class:`LearnedFacets`), the bit-reproducible forms n . c/|c| (:func:`unit_rows`,
:func:`facet_forms`) and the per-point record of a run (:class:`ShellDecisions`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np


class LearnedFacets:
    """Verified outer facets n . c >= 0 collected while deciding points in order (mutable).

    Each comes from the certificate that put an earlier point ``outside``: an extremal dual
    certificate (:func:`eftsieve.bounds.cones.facet_from_dual`, exact for what it stores,
    with its repair) or an elastic violating product state
    (:func:`eftsieve.bounds.cones.facet_from_states`, exact), embedded with zeros in the
    other sectors' coordinates for a product of independent cones (a facet of one factor
    holds on the product).  Every member of the cone satisfies each one, so a point with
    n . c/|c| < -CONE_BOUNDARY_TOL (the threshold at which a solve calls a point outside)
    is outside, exactly and without a solve.

    Attributes
    ----------
    normals
        (L, k) unit normals, in the order found.
    sources
        The id (row) of the point whose certificate gave each normal.
    kinds
        ``dual certificate`` or ``product state``, per normal.
    """

    def __init__(self, k: int) -> None:
        self._buf = np.zeros((16, k))           # grown by doubling: O(L) copies in all
        self.sources: list[int] = []
        self.kinds: list[str] = []

    @property
    def normals(self) -> np.ndarray:
        """(L, k) unit normals, in the order found (a view; do not modify)."""
        return self._buf[:len(self.sources)]

    def __len__(self) -> int:
        return len(self.sources)

    def add(self, normal: np.ndarray, source: int, kind: str) -> None:
        """Keep one more verified facet (found at point ``source``)."""
        n = np.asarray(normal, dtype=float)
        at = len(self.sources)
        if at == len(self._buf):
            self._buf = np.vstack([self._buf, np.zeros_like(self._buf)])
        self._buf[at] = n / np.linalg.norm(n)
        self.sources.append(int(source))
        self.kinds.append(kind)

    def to_dict(self) -> dict[str, Any]:
        return {"normals": self.normals.tolist(), "sources": list(self.sources),
                "kinds": list(self.kinds)}


def unit_rows(points: np.ndarray) -> np.ndarray:
    """Each row over its Euclidean norm, NaN where the row is non-finite or zero.

    Computed column by column (elementwise operations only), so that a row gives the same
    bits whatever the other rows are: learned verdicts do not depend on the chunk size.
    """
    sq = points[:, 0] * points[:, 0]
    for j in range(1, points.shape[1]):
        sq += points[:, j] * points[:, j]
    norm = np.sqrt(sq)
    ok = np.isfinite(norm) & (norm > 0)
    out = np.full(points.shape, np.nan)
    out[ok] = points[ok] / norm[ok, None]
    return out


def facet_forms(units: np.ndarray, normals: np.ndarray) -> np.ndarray:
    """(m, L) values n_l . u_i, summed column by column in a fixed order (elementwise
    operations, no BLAS), so that each entry has the same bits however the points and
    facets are batched."""
    acc = units[:, :1] * normals[None, :, 0]
    for j in range(1, units.shape[1]):
        acc += units[:, j:j + 1] * normals[None, :, j]
    return acc


@dataclass(frozen=True)
class ShellDecisions:
    """What :meth:`ConeShell.decide_in_order` did for each point.

    Attributes
    ----------
    codes
        int8: 0 inside, 1 marginal, 2 outside.
    statuses, reasons
        Status line and short reason per point ('' for a point left unsolved because
        ``max_solves`` was reached).
    solved
        Points given their own exact solve.
    learned
        Points decided ``outside`` by a facet learned from an earlier point (no solve).
    """

    codes: np.ndarray
    statuses: tuple[str, ...]
    reasons: tuple[str, ...]
    solved: np.ndarray
    learned: np.ndarray

    @property
    def n_solves(self) -> int:
        return int(np.count_nonzero(self.solved))

    @property
    def n_learned(self) -> int:
        return int(np.count_nonzero(self.learned))

    def to_dict(self) -> dict[str, Any]:
        return {"codes": self.codes.tolist(), "statuses": list(self.statuses),
                "reasons": list(self.reasons), "solved": self.solved.tolist(),
                "learned": self.learned.tolist()}


#: the short reason of a point decided by a learned facet
LEARNED_REASON = "facet learned from an earlier point"
