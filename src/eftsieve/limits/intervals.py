"""Published one-coefficient intervals against a region: what positivity leaves of them.

A row of an interval card (:mod:`eftsieve.fit.formats.interval_card`) is the segment
``c = c0 + x e_i``, ``low <= x <= high``, with the other coefficients held at ``c0``.
The row's coefficients are mapped into the region's coordinates by the theory
(:func:`eftsieve.theories.coordinate_map`, which applies the row's declared
convention), the line is cut exactly (:func:`eftsieve.limits.line.line_cut`) and the
cut is intersected with the published interval.

Use :func:`truncate_rows` for the rows of a card and :func:`sign_rules` for what
positivity says about each coefficient alone.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from functools import lru_cache
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.limits.line import SIGN_TEXT, LineCut, line_cut, sign_rule
from eftsieve.limits.line import UNDECIDED as UNDECIDED_CUT

if TYPE_CHECKING:
    from eftsieve.fit.formats.interval_card import IntervalRow
    from eftsieve.region.model import Region

#: the status of a truncated interval
KEPT, TRUNCATED, EXCLUDED, UNDECIDED = "kept", "truncated", "excluded", "undecided"


@dataclass(frozen=True)
class TruncatedInterval:
    """One published interval and the part of it that positivity allows.

    Attributes
    ----------
    row
        The card's row.
    cut
        The allowed part of the whole line (x along the row's coefficient).
    allowed
        The published interval intersected with what positivity cannot exclude (None:
        entirely excluded).
    sure
        The published interval intersected with what positivity certainly allows.
    status
        ``kept`` (untouched), ``truncated``, ``excluded`` or ``undecided`` (the exact
        part could not be settled; ``allowed`` and ``sure`` bracket it).  Where the
        gap between ``sure`` and ``allowed`` runs along the cone's boundary (the cut's
        method ``boundary``), the status follows ``allowed``: the bounds are
        non-strict, and the boundary is allowed to within the solver's accuracy.
    fraction_allowed
        Length of ``allowed`` over the published length (the published interval's own
        measure; 0 for an excluded one).
    """

    row: IntervalRow
    cut: LineCut
    allowed: tuple[float, float] | None
    sure: tuple[float, float] | None
    status: str
    fraction_allowed: float

    def to_dict(self) -> dict[str, Any]:
        return {**self.row.to_dict(), "line_cut": self.cut.to_dict(),
                "allowed": None if self.allowed is None else list(self.allowed),
                "sure": None if self.sure is None else list(self.sure),
                "status": self.status, "fraction_allowed": self.fraction_allowed}


@dataclass(frozen=True)
class SignRule:
    """What positivity says about one coefficient alone (every other at zero).

    Attributes
    ----------
    coefficient
        The region coordinate.
    free_rule, free_residual
        The sign with every other coefficient of the theory free instead of zero (the
        projection of the extremal cone, :mod:`eftsieve.bounds.projection`), and the
        residual of the facet that proves it (None: not computed, or no facet).
    rule
        ``nonnegative``, ``nonpositive``, ``zero`` (both signs excluded), ``free``
        (unconstrained in sign) or ``undecided``.
    cut
        The cut of the line x e_i.
    """

    coefficient: str
    rule: str
    cut: LineCut
    free_rule: str | None = None
    free_residual: float | None = None

    @property
    def text(self) -> str:
        return f"{self.coefficient} {SIGN_TEXT[self.rule]}"

    @property
    def free_text(self) -> str:
        """The sign with every other coefficient free, with the facet's residual."""
        if self.free_rule is None:
            return "-"
        res = (f" (residual {self.free_residual:.0e})"
               if self.free_residual is not None else "")
        return SIGN_TEXT[self.free_rule] + res

    def to_dict(self) -> dict[str, Any]:
        return {"coefficient": self.coefficient, "rule": self.rule, "text": self.text,
                "line_cut": self.cut.to_dict(), "with_others_free": self.free_rule,
                "with_others_free_residual": self.free_residual}


def row_line(row: IntervalRow, region: Region) -> tuple[np.ndarray, np.ndarray]:
    """(p0, v): the row's line ``p0 + x v`` in the region's coordinates, through the
    theory's coordinate map with the row's convention."""
    from eftsieve.limits.mapping import affine_into

    names = [row.coefficient, *row.others]
    jac, shift = affine_into(region, row.theory, row.convention, names, row.kinematics,
                             row.label)
    x0 = np.array([0.0] + [row.others[n] for n in names[1:]])
    return jac @ x0 + shift, jac[:, 0]


def _intersect(a: tuple[float, float] | None, lo: float, hi: float
               ) -> tuple[float, float] | None:
    if a is None:
        return None
    low, high = max(a[0], lo), min(a[1], hi)
    return (float(low), float(high)) if low <= high else None


def truncate_row(row: IntervalRow, region: Region, *, exact: bool = True
                 ) -> TruncatedInterval:
    """The part of one published interval that positivity allows (a row with the others
    free: against the cone's projection onto its coefficient, :func:`free_cut`)."""
    if row.others_free:
        cut = free_cut(row, region)
    else:
        p0, v = row_line(row, region)
        cut = line_cut(region, p0, v, exact=exact)
    allowed = _intersect(cut.allowed, row.low, row.high)
    sure = _intersect(cut.sure, row.low, row.high)
    width = row.high - row.low
    frac = 0.0 if allowed is None else (
        (allowed[1] - allowed[0]) / width if width > 0 else 1.0)
    if allowed is None:
        status = EXCLUDED
    elif cut.method == UNDECIDED_CUT and sure != allowed:
        status = UNDECIDED
    elif allowed == (row.low, row.high):
        status = KEPT
    else:
        status = TRUNCATED
    return TruncatedInterval(row, cut, allowed, sure, status, float(frac))


def truncate_rows(rows: tuple[IntervalRow, ...], regions: dict[str, Region], *,
                  exact: bool = True) -> tuple[TruncatedInterval, ...]:
    """Every row against the region of its theory (``regions``: theory -> Region)."""
    return tuple(truncate_row(r, regions[r.theory], exact=exact) for r in rows)


def sign_rules(region: Region, *, exact: bool = True) -> tuple[SignRule, ...]:
    """For each region coordinate, the sign positivity requires of it alone; empty for a
    region that is not a cone (a facet with a non-zero offset), where a sign alone is
    not what the bounds say."""
    if any(f.offset != 0 for f in region.facets):
        return ()
    out = []
    for k, name in enumerate(region.coordinates):
        e = np.zeros(region.dim)
        e[k] = 1.0
        cut = line_cut(region, np.zeros(region.dim), e, exact=exact)
        out.append(SignRule(name, sign_rule(cut), cut))
    return tuple(out)


@lru_cache(maxsize=256)
def _free_sign(theory: str, name: str, family: str = "extremal") -> tuple[str, float | None]:
    from eftsieve.bounds.projection import project_cone, project_elastic, sign_with_others_free
    from eftsieve.errors import SolverError

    problem = _full_problem(theory)
    project = project_cone if family == "extremal" else project_elastic
    try:
        pc = project(problem, [name], sdp=_sdp_of(theory))
    except SolverError:
        return "undecided", None
    rule = sign_with_others_free(pc)
    return rule, (float(pc.residuals.max()) if len(pc.residuals) else None)


@lru_cache(maxsize=8)
def _full_problem(theory: str) -> Any:
    from eftsieve.theories import get_theory

    cone_theory: Any = get_theory(theory)        # a ConeTheory (checked by the caller)
    return cone_theory.problem()


@lru_cache(maxsize=8)
def _sdp_of(theory: str) -> Any:
    """The theory's full extremal programs, compiled once per process."""
    from eftsieve.bounds.sdp import ExtremalSDP

    return ExtremalSDP(_full_problem(theory))


def with_free_signs(rules: tuple[SignRule, ...], region: Region, names: list[str]
                    ) -> tuple[SignRule, ...]:
    """The rules of ``names`` with their sign when every other coefficient of the theory
    is free (its whole cone projected onto the one coefficient); unchanged for regions
    that are not positivity cones of a theory with a full problem, and for
    coefficients not in ``names`` (computing one costs a few SDPs)."""
    from eftsieve.theories import get_theory

    family = region.settings.get("family")
    if family not in ("extremal", "elastic") or "cone_problem" not in region.settings:
        return rules
    try:
        theory = get_theory(region.theory)
    except KeyError:
        return rules
    if not callable(getattr(theory, "problem", None)):
        return rules
    full = _full_problem(region.theory).coefficients
    if len(full) < 2:
        return rules
    out = []
    for r in rules:
        if r.coefficient in names and r.coefficient in full:
            rule, res = _free_sign(region.theory, r.coefficient, str(family))
            r = replace(r, free_rule=rule, free_residual=res)
        out.append(r)
    return tuple(out)


#: the cut method of a row with the other coefficients free
PROJECTION_CUT = "projection"


def free_cut(row: IntervalRow, region: Region) -> LineCut:
    """The cut of a row whose other coefficients were free: the projection of the theory's
    whole cone (of the region's family) onto the row's coefficient
    (:mod:`eftsieve.bounds.projection`).

    The coefficient must map (with the row's convention) onto one coordinate of the
    theory, times a non-zero factor a; the allowed set of x is then the projection's sign
    rule applied to a x.  A side is "sure" when the projection has proven points there
    (every positive multiple of a point of a cone is in it).

    Raises
    ------
    InputError
        The theory is not a positivity cone with a full problem, the region's family is
        neither ``extremal`` nor ``elastic``, or the coefficient maps onto several
        coordinates.
    """
    from eftsieve.errors import InputError
    from eftsieve.limits.mapping import affine_into
    from eftsieve.theories import get_theory

    where = f"line {row.line}.others"
    theory = get_theory(row.theory)
    if not callable(getattr(theory, "problem", None)) or "cone_problem" not in region.settings:
        raise InputError(None, where, f"'free' needs a positivity cone; {row.theory} is not "
                         "one", "give the values the other coefficients were held at")
    family = str(region.settings.get("family"))
    if family not in ("extremal", "elastic"):
        raise InputError(None, where, f"a row with the others free needs the extremal or "
                         f"the elastic family, not '{family}'", "give --family extremal")
    full = _full_problem(row.theory).coefficients
    # the region's convention over all the theory's coefficients (only the map is used)
    whole = replace(region, coordinates=full, facets=(), inner_facets=(), inner_vertices=())
    jac, shift = affine_into(whole, row.theory, row.convention, [row.coefficient],
                             row.kinematics, row.label)
    v = jac[:, 0]
    nz = np.flatnonzero(v)
    if len(nz) != 1 or np.any(shift):
        raise InputError(None, where, f"{row.coefficient} maps onto "
                         f"{len(nz)} coordinates of {row.theory}, not one, in convention "
                         f"{row.convention.name}", "state the row in a convention where "
                         "the coefficient is one coordinate, or give the others' values")
    name, a = full[int(nz[0])], float(v[nz[0]])
    rule, res = _free_sign(row.theory, name, family)
    pos, neg = (rule in ("nonnegative", "free"), rule in ("nonpositive", "free"))
    if a < 0:
        pos, neg = neg, pos
    inf = float("inf")
    if rule == "undecided":
        allowed, sure, method = (-inf, inf), None, UNDECIDED_CUT
    else:
        allowed = (-inf if neg else 0.0, inf if pos else 0.0)
        sure, method = allowed, PROJECTION_CUT
    resid = f", facet residual {res:.0e}" if res is not None else ""
    note = (f"others free: {name} {SIGN_TEXT[rule]} with every other coefficient of "
            f"{row.theory} free (projection of the {family} cone{resid})")
    return LineCut(allowed, sure, method, (note,), 0)
