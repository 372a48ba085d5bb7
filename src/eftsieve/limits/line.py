"""The allowed part of a straight line through a region, computed exactly.

A published one-coefficient interval lives on the line ``c(x) = c0 + x e_i`` (the other
coefficients held at their stated values ``c0``, normally 0).  For a region given by
facets ``a . y >= b`` the outer facets cut the line in an interval, found in closed
form: each facet with ``a . v != 0`` bounds ``x`` from one side.  The inner facets (where
a region has them) give the sub-interval that is allowed for sure.  Where the two
differ and the region carries an exact membership test (a positivity cone's
``settings["cone_problem"]``, :func:`eftsieve.bounds.cone_region.shell_membership`), each
endpoint is settled by bisection between the sure and the outer value; a solve that does
not decide (``marginal``) stops the bisection there and the bracket is reported as it
is.  A failed solve never moves an endpoint.

Use :func:`line_cut` for one line, :func:`sign_rule` for what positivity says about one
coefficient alone.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from eftsieve.region.model import Region
from eftsieve.tolerances import LIMITS_BOUNDARY_RTOL, LIMITS_PARALLEL_TOL, LIMITS_SETTLE_RTOL

#: verdict codes of the exact membership (those of eftsieve.check and eftsieve.bounds.cones)
INSIDE, MARGINAL, OUTSIDE = 0, 1, 2
#: how the endpoints of a cut were decided
FACETS, BISECTION, BOUNDARY, UNDECIDED = "facets", "bisection", "boundary", "undecided"
#: the start of the note of an end that stopped on the boundary
ON_BOUNDARY = "on the boundary"
#: inner facets are kept unless a component is at rounding level (dropping one would
#: enlarge the surely allowed set)
INNER_PARALLEL_TOL = 1e-12
#: largest number of membership solves spent on one endpoint
MAX_STEPS = 60

Interval = tuple[float, float]
Member = Callable[[np.ndarray], tuple[int, str]]


@dataclass(frozen=True)
class LineCut:
    """The allowed part of the line ``p0 + x v`` (region coordinates), as intervals in x.

    Attributes
    ----------
    allowed
        What positivity cannot exclude: the outer interval, tightened by the settled
        endpoints (None: the line misses the region).  Ends may be infinite.
    sure
        What positivity certainly allows: the inner interval, widened by the settled
        endpoints (None: no point of the line is proven allowed).
    method
        ``facets`` (inner and outer facets agree on the line: exact in closed form),
        ``bisection`` (endpoints settled by exact membership to
        :data:`~eftsieve.tolerances.LIMITS_SETTLE_RTOL`) or ``undecided`` (a gap
        between ``sure`` and ``allowed`` remains: no exact test, or a solve undecided).
    notes
        One sentence per endpoint that needed more than the facets.
    solves
        How many exact membership solves were spent.
    """

    allowed: Interval | None
    sure: Interval | None
    method: str
    notes: tuple[str, ...] = ()
    solves: int = 0

    def to_dict(self) -> dict[str, Any]:
        """JSON-able: an empty interval is null, an unbounded end is null."""
        def ends(iv: Interval | None) -> list[float | None] | None:
            return None if iv is None else [None if np.isinf(v) else float(v) for v in iv]
        return {"allowed": ends(self.allowed), "sure": ends(self.sure),
                "method": self.method, "notes": list(self.notes), "solves": self.solves}


def facet_interval(a: np.ndarray, b: np.ndarray, p0: np.ndarray, v: np.ndarray,
                   parallel_tol: float = LIMITS_PARALLEL_TOL) -> Interval | None:
    """{x : a (p0 + x v) >= b} for unit-norm rows ``a``; None when empty.

    A facet with ``|a . v| <= parallel_tol |v|`` that ``p0`` satisfies (to rounding) is
    taken as parallel to the line and dropped: it cannot cut it within the range that
    matters, and its tiny component along ``v`` is solver noise.  One that ``p0``
    violates still bounds x (far away), so dropping is never used to exclude a point.
    """
    s = a @ v
    r = b - a @ p0
    scale = max(1.0, float(np.abs(p0).max()), float(np.abs(b).max(initial=0.0)))
    satisfied = r <= 1e-12 * scale
    keep = ~((np.abs(s) <= parallel_tol * float(np.linalg.norm(v))) & satisfied)
    s, r, satisfied = s[keep], r[keep], satisfied[keep]
    if np.any((s == 0) & ~satisfied):
        return None
    up, down = s > 0, s < 0
    lo = float(np.max(r[up] / s[up])) if up.any() else -np.inf
    hi = float(np.min(r[down] / s[down])) if down.any() else np.inf
    return (lo, hi) if lo <= hi else None


def exact_member(region: Region) -> Member | None:
    """A function point -> (code, status) deciding membership exactly, or None when the
    region has no exact test (not a positivity cone)."""
    from eftsieve.bounds.cone_region import problem_of, shell_membership

    try:
        problem_of(region)
    except ValueError:
        return None

    def member(point: np.ndarray) -> tuple[int, str]:
        codes, why = shell_membership(region, np.asarray(point, dtype=float)[None, :])
        return int(codes[0]), why[0]
    return member


def _is_cone(region: Region) -> bool:
    return all(f.offset == 0 for f in region.facets + region.inner_facets)


class _Settler:
    """Exact settling of the ends of one line's cut (module docstring)."""

    def __init__(self, region: Region, member: Member, p0: np.ndarray, v: np.ndarray) -> None:
        self.member, self.p0, self.v = member, p0, v
        self.a, self.b = region.arrays()
        self.cone = _is_cone(region)
        self.scale = float(np.linalg.norm(p0) / np.linalg.norm(v))
        self.solves = 0

    def at(self, x: float) -> np.ndarray:
        return self.p0 + x * self.v

    def ask(self, point: np.ndarray) -> tuple[int, str]:
        """The exact verdict; an undecided point on the outer boundary says so."""
        self.solves += 1
        code, why = self.member(point)
        if code == MARGINAL:
            rel = float((self.a @ point - self.b).min() / max(np.linalg.norm(point), 1e-300))
            if abs(rel) <= LIMITS_BOUNDARY_RTOL:
                return code, f"{ON_BOUNDARY} (outer margin {rel:.2g}; {why})"
        return code, why

    def bisect(self, sure: float, limit: float) -> tuple[float, float, str]:
        """Shrink [sure, limit] (sure allowed, limit excluded) around the boundary."""
        for _ in range(MAX_STEPS):
            width = max(abs(sure), abs(limit), self.scale)
            if abs(limit - sure) <= LIMITS_SETTLE_RTOL * width:
                break
            mid = 0.5 * (sure + limit)
            code, why = self.ask(self.at(mid))
            if code == INSIDE:
                sure = mid
            elif code == OUTSIDE:
                limit = mid
            else:
                return sure, limit, f"{why} between {sure:.9g} and {limit:.9g}"
        return sure, limit, ""

    def far_point(self, sure: float, sign: float) -> tuple[float | None, str]:
        """A finite excluded x beyond ``sure`` (doubling the step), or None with why."""
        step = max(1.0, abs(sure), self.scale)
        for k in range(MAX_STEPS):
            x = sure + sign * step * 2.0 ** k
            code, why = self.ask(self.at(x))
            if code == OUTSIDE:
                return x, ""
            if code == MARGINAL:
                return None, f"{why} at {x:.9g}"
        return None, "no excluded point found along the line"

    def end(self, sure: float, limit: float, sign: float) -> tuple[float, float, str]:
        """Settle one end: (sure, limit, note)."""
        if np.isinf(limit):
            if not self.cone:
                return sure, limit, "no exact test of the line's direction"
            code, why = self.ask(sign * self.v)
            if code == INSIDE:  # a cone holds sure + t v for every t >= 0
                return sign * np.inf, limit, ""
            if code == MARGINAL:
                return sure, limit, f"direction at infinity: {why}"
            far, why = self.far_point(sure, sign)
            if far is None:
                return sure, limit, why
            limit = far
        return self.bisect(sure, limit)


def line_cut(region: Region, p0: np.ndarray, v: np.ndarray, *, exact: bool = True) -> LineCut:
    """The allowed part of the line ``p0 + x v`` (region coordinates) through ``region``.

    Parameters
    ----------
    region
        Any region; positivity cones settle the gap between inner and outer facets.
    p0, v
        A point of the line and its direction, shape (dim,).
    exact
        Settle the gap between the inner and outer intervals by bisection where the
        region offers an exact membership test.

    Returns
    -------
    LineCut
        The allowed and the surely allowed intervals in x, and how they were decided.
    """
    p0, v = np.asarray(p0, dtype=float), np.asarray(v, dtype=float)
    outer = facet_interval(*region.arrays(), p0, v)
    inner = (None if outer is None else
             facet_interval(*region.arrays(inner=True), p0, v, INNER_PARALLEL_TOL))
    if outer is None:
        return LineCut(None, None, FACETS)
    if inner is not None and inner == outer:
        return LineCut(outer, inner, FACETS)
    member = exact_member(region) if exact else None
    if member is None:
        why = ("the region has no exact membership test" if exact else "exact solves off")
        return LineCut(outer, inner, UNDECIDED, (f"between the inner and outer facets: {why}",))
    return _settle(_Settler(region, member, p0, v), outer, inner)


def _start(st: _Settler, outer: Interval) -> tuple[float | None, str]:
    """One x proven allowed inside the outer interval (its middle), or None with why."""
    lo, hi = outer
    x0 = (0.5 * (lo + hi) if np.isfinite(lo) and np.isfinite(hi) else
          lo + max(1.0, abs(lo)) if np.isfinite(lo) else
          hi - max(1.0, abs(hi)) if np.isfinite(hi) else 0.0)
    code, why = st.ask(st.at(x0))
    return (x0, "") if code == INSIDE else (None, f"no point of the line proven allowed; "
                                                  f"at x = {x0:.9g}: {why}")


def _settle(st: _Settler, outer: Interval, inner: Interval | None) -> LineCut:
    if inner is None:
        x0, why = _start(st, outer)
        if x0 is None:
            method = BOUNDARY if ON_BOUNDARY in why else UNDECIDED
            return LineCut(outer, None, method, (why,), st.solves)
        inner = (x0, x0)
    notes: list[str] = []
    ends = []
    for k, sign in ((0, -1.0), (1, 1.0)):
        if inner[k] == outer[k]:
            ends.append((inner[k], outer[k]))
            continue
        s, lim, note = st.end(inner[k], outer[k], sign)
        if note:
            notes.append(f"{'lower' if k == 0 else 'upper'} end: {note}")
        ends.append((s, lim))
    method = (BISECTION if not notes else
              BOUNDARY if all(ON_BOUNDARY in n for n in notes) else UNDECIDED)
    return LineCut((ends[0][1], ends[1][1]), (ends[0][0], ends[1][0]), method, tuple(notes),
                   st.solves)


#: what positivity says about one coefficient on its own (others zero)
SIGN_TEXT = {"nonnegative": ">= 0", "nonpositive": "<= 0", "zero": "excluded for either sign",
             "free": "unconstrained in sign", "undecided": "undecided"}


def sign_rule(cut: LineCut) -> str:
    """``nonnegative``, ``nonpositive``, ``zero``, ``free`` or ``undecided``, from the cut of
    the line x e_i through the apex of a cone (others at zero).

    A sign is excluded only by the outer facets (rigorous); ``free`` needs both signs
    proven allowed.  Whether the allowed side is interior or runs along the boundary is
    the cut's ``method``.
    """
    if cut.allowed is None:
        return "zero"
    lo, hi = cut.allowed
    if lo >= 0 and hi <= 0:
        return "zero"
    if lo >= 0:
        return "nonnegative"
    if hi <= 0:
        return "nonpositive"
    slo, shi = cut.sure if cut.sure is not None else (0.0, 0.0)
    return "free" if np.isinf(slo) and np.isinf(shi) else "undecided"
