"""Independent sectors of a positivity cone: decomposition and products.

When the modes split into sectors that no coefficient couples (every nonzero entry
M_a^{ijkl} has all four indices in one sector, and each coefficient lives in one
sector), the cone is the product of the sectors' cones:

* ``extremal``: M^{ijij} = 2 rho^{(ij),(ij)} for i, j in different sectors (crossing maps
  (ij),(ij) to itself) and that entry of M vanishes, so the diagonal of rho on mixed
  pairs is zero and, rho being PSD, so are its mixed rows; rho is block-diagonal over
  the sectors' pair spaces and M(c) is in C iff every sector's M(c_s) is.  (The full
  program then has no strictly feasible point, t* = 0 at best, so a membership solve
  must be done sector by sector.)
* ``elastic``: E(u, v) = sum_s E_s(u_s, v_s) with each E_s homogeneous of degree 2 in u_s
  and in v_s, so E >= 0 for all u, v iff every E_s >= 0.

:func:`sectors` finds the decomposition (connected components of the modes that share a
nonzero entry); :func:`union_problem` and :func:`product_region` put independent cones
side by side (a block-diagonal problem and the region whose facets are the sectors'
facets), e.g. for several independent theories fitted at once.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from eftsieve.bounds.cones import ConeProblem
from eftsieve.region.model import Facet, Region


@dataclass(frozen=True)
class Sector:
    """One independent sector of a cone problem.

    Attributes
    ----------
    coefficients
        Indices of its coefficients in the full problem.
    modes
        Indices of its modes in the full problem.
    problem
        The sector's own ConeProblem.
    """

    coefficients: tuple[int, ...]
    modes: tuple[int, ...]
    problem: ConeProblem

    def to_dict(self) -> dict[str, Any]:
        return {"coefficients": list(self.coefficients), "modes": list(self.modes)}


def _components(n: int, links: np.ndarray) -> np.ndarray:
    """Component label of each of n nodes, given rows of nodes that belong together."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    heads = np.repeat(links[:, :1], links.shape[1] - 1, axis=1).ravel()
    tails = links[:, 1:].ravel()
    graph = coo_matrix((np.ones(len(heads)), (heads, tails)), shape=(n, n))
    return np.asarray(connected_components(graph, directed=False)[1])


def sectors(problem: ConeProblem) -> tuple[Sector, ...]:
    """The independent sectors of a problem (one sector when it does not split).

    Modes are joined when they appear in one nonzero entry; a coefficient whose tensor
    touches two sectors joins them too (then the split is not a product).
    """
    idx = np.argwhere(problem.tensors != 0)
    if not len(idx):
        return (Sector(tuple(range(problem.k)), tuple(range(problem.n)), problem),)
    # nodes: modes 0..n-1 and coefficients n..n+k-1
    links = np.column_stack([idx[:, 1:], problem.n + idx[:, :1]])
    label = _components(problem.n + problem.k, np.unique(links, axis=0))
    mode_lab, coef_lab = label[:problem.n], label[problem.n:]
    out = []
    for lab in np.unique(mode_lab):
        ms = tuple(int(i) for i in np.flatnonzero(mode_lab == lab))
        cs = tuple(int(a) for a in np.flatnonzero(coef_lab == lab))
        if not cs:
            continue
        sub = problem.tensors[np.ix_(cs, ms, ms, ms, ms)]
        out.append(Sector(cs, ms, ConeProblem(tuple(problem.coefficients[a] for a in cs),
                                              tuple(problem.modes[i] for i in ms), sub,
                                              dict(problem.info))))
    covered = sorted(a for s in out for a in s.coefficients)
    if covered != list(range(problem.k)):
        # a coefficient with an all-zero tensor: no split is claimed
        return (Sector(tuple(range(problem.k)), tuple(range(problem.n)), problem),)
    return tuple(out)


def union_problem(problems: list[ConeProblem]) -> ConeProblem:
    """The block-diagonal problem of independent cones side by side (coefficients and
    modes concatenated; no coefficient couples two of them)."""
    k = sum(p.k for p in problems)
    n = sum(p.n for p in problems)
    t = np.zeros((k, n, n, n, n))
    a0 = m0 = 0
    for p in problems:
        ms = slice(m0, m0 + p.n)
        t[a0:a0 + p.k, ms, ms, ms, ms] = p.tensors
        a0, m0 = a0 + p.k, m0 + p.n
    return ConeProblem(tuple(c for p in problems for c in p.coefficients),
                       tuple(m for p in problems for m in p.modes), t,
                       {"union_of": [dict(p.info) for p in problems]})


def product_region(name: str, regions: list[Region]) -> Region:
    """The region of independent cones side by side: each facet (outer and inner) of each
    region, embedded with zeros in the others' coordinates; the ``cone_problem`` is their
    :func:`union_problem`.  All regions must be of one family."""
    fams = {r.settings.get("family") for r in regions}
    if len(fams) != 1:
        raise ValueError(f"regions of different families {sorted(map(str, fams))}")
    k = sum(r.dim for r in regions)

    def embed(f: Facet, lo: int) -> Facet:
        normal = np.zeros(k)
        normal[lo:lo + len(f.normal)] = f.normal
        return replace(f, normal=tuple(float(x) for x in normal))

    outer, inner, lo = [], [], 0
    for r in regions:
        outer += [embed(f, lo) for f in r.facets]
        inner += [embed(f, lo) for f in (r.inner_facets or r.facets)]
        lo += r.dim
    problem = union_problem([ConeProblem.from_dict(r.settings["cone_problem"])
                             for r in regions])
    settings = {"family": fams.pop(), "cone_problem": problem.to_dict(),
                "product_of": [r.theory for r in regions]}
    return Region(name, problem.coefficients, {"name": "none"}, tuple(outer), settings,
                  tuple(inner), (), notes=regions[0].notes)
