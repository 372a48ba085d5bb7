"""Exact verdicts for the shell of a region, inside the one check kernel.

Some regions know more than their facets: a positivity cone stores its forward tensors
(``settings["cone_problem"]``), so a point between its inner cone (hull of verified
rays) and its outer facets (verified dual certificates) can be decided exactly, one
solve per point (:class:`eftsieve.bounds.cone_region.ConeShell`).  This module does that
for :func:`eftsieve.check.engine.process_block`, so every engine and every source
(samples files, Gaussian draws) gets the same exact verdicts:

* the **shell** of a block is its points that are ``marginal`` after the facet test, and
  those outside an outer facet by no more than rounding (relative margin above
  ``-FACET_TEST_BAND``: the outer facets lie on the cone's boundary, so such a point is
  numerically on it); they are decided in row order
  (:meth:`ConeShell.decide_in_order`): each is first tested against the **learned
  facets** of its partition, the verified separating facets (extremal dual certificates,
  elastic violating product states) that earlier rows' ``outside`` solves produced; one
  of them with n . c/|c| < -CONE_BOUNDARY_TOL makes it ``outside`` with no solve (a valid
  facet of the cone excludes it exactly); otherwise it gets its own solve while the
  partition's budget lasts, and its facet, if it is solved outside, is learned;
* ``inside`` only with a verified rho (or elastic proof), ``outside`` only with a
  verified certificate; a failed or inaccurate solve stays ``marginal`` with its reason;
* the **budget** ``CheckSettings.shell_solves`` counts solves per partition (one file of
  a samples source, or the whole of a Gaussian summary's draws), in canonical row
  order, so verdicts do not depend on the chunk size or the engine (the learned facets
  too are advanced in row order, and their forms are computed with the same bits in
  any batch: a point's outcome depends only on the rows before it in its partition);
  beyond it, shell points are still tested against the learned facets, and the rest
  stay ``marginal`` with the reason :data:`BUDGET_REASON`; points decided by a learned
  facet use no budget (``n_learned``);
* ``satisfies`` (the indicator behind p_inside) follows the exact verdict: a shell point
  solved outside no longer counts as inside the region, one solved inside does; a point
  left ``marginal`` keeps the facet test's answer (inside the outer facets).

:class:`ShellSums` are a block's counts and weight sums; :class:`ShellTally` adds them in
row order and gives the :class:`ShellSummary` of a check.
"""

from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.check.verdicts import INSIDE, MARGINAL, OUTSIDE, Verdicts
from eftsieve.region.model import Region

if TYPE_CHECKING:
    from eftsieve.bounds.cone_learn import LearnedFacets

#: the reason of shell points left ``marginal`` because the budget was used up
BUDGET_REASON = "shell-solve budget reached"
#: reasons of shell points that are never solved (no budget used)
NONFINITE_REASON, APEX_REASON = "non-finite point", "the cone's apex c = 0"
#: how many of the most common reasons a summary keeps
N_REASONS = 5


def has_shell_solver(region: Region) -> bool:
    """Whether the region can decide its shell exactly (it stores a cone problem)."""
    return isinstance(region.settings, dict) and "cone_problem" in region.settings


def shell_solver(region: Region) -> Any:
    """The region's exact solver (:class:`eftsieve.bounds.cone_region.ConeShell`), or None.

    For the ``elastic`` family the theory's product-state reduction is used when the
    theory offers one (a ``reduction()`` method); it is checked against the tensors.
    """
    if not has_shell_solver(region):
        return None
    from eftsieve.bounds.cone_region import ConeShell

    reduction = None
    if region.settings.get("family") == "elastic":
        from eftsieve.theories import get_theory

        try:
            make = getattr(get_theory(region.theory), "reduction", None)
        except KeyError:
            make = None
        reduction = make() if callable(make) else None
    return ConeShell.from_region(region, reduction=reduction)


@dataclass(frozen=True)
class ShellSums:
    """The shell of one block.

    Attributes
    ----------
    n_shell
        Points marginal after the facet test or outside by no more than rounding;
        non-finite points and the apex c = 0 are among them but are never solved (they
        stay marginal with their reason).
    n_inside, n_outside, n_marginal
        Shell points solved inside, solved outside, and left marginal.
    n_solves
        Points handed to the exact solver (counted against the budget).
    n_learned
        Points decided ``outside`` by a facet learned from an earlier point's certificate
        (no solve, not counted against the budget; among ``n_outside``).
    sw_shell, sw_marginal
        Sum of the weights of the shell points, and of those left marginal.
    sw_d, sw2_d, sw2_d2
        Sums of w d, w^2 d and w^2 d^2, where d = (satisfies after the solve) - (satisfies
        by the facet test), in {-1, 0, 1}: the correction to p_inside.
    reasons
        Points left marginal per short reason, as sorted (reason, count) pairs.
    """

    n_shell: int = 0
    n_inside: int = 0
    n_outside: int = 0
    n_marginal: int = 0
    n_solves: int = 0
    n_learned: int = 0
    sw_shell: float = 0.0
    sw_marginal: float = 0.0
    sw_d: float = 0.0
    sw2_d: float = 0.0
    sw2_d2: float = 0.0
    reasons: tuple[tuple[str, int], ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {"n_shell": self.n_shell, "n_inside": self.n_inside,
                "n_outside": self.n_outside, "n_marginal": self.n_marginal,
                "n_solves": self.n_solves, "n_learned": self.n_learned,
                "sw_shell": self.sw_shell,
                "sw_marginal": self.sw_marginal, "sw_d": self.sw_d,
                "sw2_d": self.sw2_d, "sw2_d2": self.sw2_d2,
                "reasons": [list(r) for r in self.reasons]}


@dataclass
class ShellBudget:
    """The exact solver of a partition, the solves it has left and the facets it has
    learned (mutable, one per partition, advanced block by block in row order).

    Attributes
    ----------
    solver
        A :class:`eftsieve.bounds.cone_region.ConeShell`.
    left
        Solves left in this partition.
    seed
        The check's seed (each point's product-state search is seeded by it and its row).
    learned
        The verified facets of the partition's ``outside`` solves so far
        (:class:`eftsieve.bounds.cone_learn.LearnedFacets`), tried on every later shell
        point before a solve; None: no learning (one solve per point).
    """

    solver: Any
    left: int
    seed: int = 0
    learned: LearnedFacets | None = None

    def to_dict(self) -> dict[str, Any]:
        return {"left": self.left, "seed": self.seed,
                "learned": None if self.learned is None else len(self.learned)}


def shell_budget(region: Region, settings: Any) -> ShellBudget | None:
    """The exact solver of a partition with its full budget (``settings.shell_solves``,
    seeded by ``settings.seed``) and an empty set of learned facets, or None when the
    region has no exact solver."""
    solver = shell_solver(region)
    if solver is None:
        return None
    from eftsieve.bounds.cone_learn import LearnedFacets

    return ShellBudget(solver, int(settings.shell_solves), int(settings.seed),
                       LearnedFacets(solver.problem.k))


def resolve_shell(v: Verdicts, y: np.ndarray, rows: np.ndarray, weights: np.ndarray | None,
                  budget: ShellBudget) -> tuple[Verdicts, ShellSums]:
    """Decide a block's shell exactly, within the budget (module docstring).

    Returns the updated verdicts (``verdict`` and ``satisfies``; margins unchanged: they
    stay the distances to the outer facets) and the block's :class:`ShellSums`.
    """
    from eftsieve.bounds.cone_region import FACET_TEST_BAND

    # the shell: marginal after the facet test, or outside an outer facet by no more than
    # rounding (relative to the point's size; the outer facets lie on the boundary)
    scale = np.abs(y).max(axis=1) if len(y) else np.zeros(0)
    near = (v.verdict == OUTSIDE) & (v.min_margin >= -FACET_TEST_BAND * scale)
    shell = np.flatnonzero((v.verdict == MARGINAL) | near)
    if not len(shell):
        return v, ShellSums()
    ys = y[shell]
    finite = np.isfinite(ys).all(axis=1)
    apex = finite & ~ys.any(axis=1)
    reasons = np.where(~finite, NONFINITE_REASON, np.where(apex, APEX_REASON,
                                                            BUDGET_REASON)).astype(object)
    solvable = np.flatnonzero(finite & ~apex)
    codes = np.full(len(shell), MARGINAL, dtype=np.int8)
    n_solves = n_learned = 0
    if len(solvable) and (budget.left > 0 or budget.learned):
        got = budget.solver.decide_in_order(ys[solvable], rows[shell[solvable]], budget.seed,
                                            budget.learned, max_solves=budget.left)
        codes[solvable] = got.codes
        done = got.solved | got.learned
        reasons[solvable[done]] = np.array(got.reasons, dtype=object)[done]
        n_solves, n_learned = got.n_solves, got.n_learned
        budget.left -= n_solves
    verdict, satisfies = v.verdict.copy(), v.satisfies.copy()
    decided = codes != MARGINAL
    verdict[shell] = codes
    satisfies[shell[decided]] = codes[decided] == INSIDE
    d = satisfies[shell].astype(float) - v.satisfies[shell].astype(float)
    w = np.ones(len(shell)) if weights is None else np.asarray(weights, dtype=float)[shell]
    left = Counter(r for r, c in zip(reasons, codes, strict=True) if c == MARGINAL)
    sums = ShellSums(len(shell), int(np.count_nonzero(codes == INSIDE)),
                     int(np.count_nonzero(codes == OUTSIDE)),
                     int(np.count_nonzero(codes == MARGINAL)), n_solves, n_learned,
                     float(w.sum()), float(w[codes == MARGINAL].sum()), float((w * d).sum()),
                     float((w * w * d).sum()),
                     float((w * w * d * d).sum()), tuple(sorted(left.items())))
    return Verdicts(verdict, v.min_margin, v.worst, satisfies), sums


@dataclass(frozen=True)
class ShellSummary:
    """The exact decisions of a check's shell (regions with an exact solver only).

    Attributes
    ----------
    n_shell
        Points marginal after the facet test (between the inner and outer sets).
    n_inside, n_outside, n_marginal
        Of those: solved inside, solved outside, left marginal.
    n_solves
        Exact solves run.
    n_learned
        Shell points decided ``outside`` by a facet learned from an earlier point of their
        partition (no solve; among ``n_outside``).
    budget
        ``CheckSettings.shell_solves``: solves allowed per partition.
    shell_fraction
        The (weighted) fraction of all points in the shell.
    marginal_fraction
        The (weighted) fraction of all points left marginal in the shell: p_inside counts
        them as inside, so the probability inside the cone may be lower by up to this.
    reasons
        The most common reasons of the points left marginal, most common first.
    p_correction, p_correction_err
        The change of p_inside that the exact verdicts make (weighted fraction of points
        whose verdict moved across the boundary, signed) and its Monte-Carlo error.
    """

    n_shell: int
    n_inside: int
    n_outside: int
    n_marginal: int
    n_solves: int
    n_learned: int
    budget: int
    shell_fraction: float
    marginal_fraction: float
    reasons: tuple[tuple[str, int], ...]
    p_correction: float
    p_correction_err: float

    def to_dict(self) -> dict[str, Any]:
        return {"n_shell": self.n_shell, "n_inside": self.n_inside,
                "n_outside": self.n_outside, "n_marginal": self.n_marginal,
                "n_solves": self.n_solves, "n_learned": self.n_learned,
                "budget_per_partition": self.budget,
                "shell_fraction": self.shell_fraction,
                "marginal_fraction": self.marginal_fraction,
                "reasons": [{"reason": r, "n": n} for r, n in self.reasons],
                "p_correction": self.p_correction, "p_correction_err": self.p_correction_err}


@dataclass
class ShellTally:
    """The shell sums of a check, added block by block in row order."""

    n: np.ndarray = field(default_factory=lambda: np.zeros(6, dtype=np.int64))
    sw: np.ndarray = field(default_factory=lambda: np.zeros(5))
    reasons: Counter = field(default_factory=Counter)

    def absorb(self, s: ShellSums) -> None:
        """Add one block's sums (blocks in row order, so the float sums have the same
        bits in every engine)."""
        self.n += (s.n_shell, s.n_inside, s.n_outside, s.n_marginal, s.n_solves, s.n_learned)
        self.sw += (s.sw_shell, s.sw_marginal, s.sw_d, s.sw2_d, s.sw2_d2)
        self.reasons.update(dict(s.reasons))

    def summary(self, sw: float, sw2: float, budget: int) -> ShellSummary:
        """The summary, given the sums of all weights ``sw`` and squared weights ``sw2``."""
        n_shell, n_in, n_out, n_marg, n_solves, n_learned = (int(x) for x in self.n)
        sw_shell, sw_marg, sw_d, sw2_d, sw2_d2 = (float(x) for x in self.sw)
        corr = sw_d / sw if sw > 0 else 0.0
        # Monte-Carlo error of the ratio estimator sum w d / sum w (delta method)
        var = max(sw2_d2 - 2 * corr * sw2_d + corr * corr * sw2, 0.0)
        err = math.sqrt(var) / sw if sw > 0 else 0.0
        top = tuple(sorted(self.reasons.items(), key=lambda kv: (-kv[1], kv[0]))[:N_REASONS])
        frac = (sw_shell / sw, sw_marg / sw) if sw > 0 else (0.0, 0.0)
        return ShellSummary(n_shell, n_in, n_out, n_marg, n_solves, n_learned, budget, *frac,
                            top, corr, err)

    def to_dict(self) -> dict[str, Any]:
        return {"n": self.n.tolist(), "sw": self.sw.tolist(), "reasons": dict(self.reasons)}
