"""One run of ``eftsieve limits``: an interval card or a HEPData record against regions.

:func:`limits_from_card` truncates every row of an interval card and states the
single-coefficient signs of each theory involved; :func:`limits_from_record` turns the
tables of a HEPData record into truncated scans, contour fractions and (central values
with a covariance) a Gaussian check.  Both return a frozen :class:`LimitsResult`.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.errors import InputError
from eftsieve.limits.contours import ContourResult, contour_fraction
from eftsieve.limits.intervals import (
    SignRule,
    TruncatedInterval,
    sign_rules,
    truncate_rows,
    with_free_signs,
)
from eftsieve.limits.mapping import affine_into
from eftsieve.limits.scans import ScanResult, scan_1d, scan_2d

if TYPE_CHECKING:
    from eftsieve.fit.conventions import Convention
    from eftsieve.fit.formats.hepdata import HepTable
    from eftsieve.fit.formats.interval_card import IntervalRow
    from eftsieve.region.model import Region

#: theory name -> its region (given, or built with the theory's defaults) and its file
#: the region of a theory (and its file), given the coefficients the input moves
RegionSource = Callable[[str, Sequence[str]], "tuple[Region, str | None]"]


@dataclass(frozen=True)
class LimitsResult:
    """What positivity does to a set of published results.

    Attributes
    ----------
    source
        The interval card or submission.yaml.
    kind
        ``interval-card`` or ``hepdata``.
    regions
        Theory -> a short description of the region used (hash, facets, family).
    intervals
        Truncated one-coefficient intervals (card rows, in order).
    signs
        Theory -> the sign positivity requires of each coefficient alone.
    scans, contours
        Truncated likelihood scans and contour fractions (HEPData).
    gaussian
        The check of central values with a covariance (HEPData), or None.
    notes
        Sentences every report repeats (the prior, what others are held at).
    """

    source: str
    kind: str
    regions: dict[str, dict[str, Any]]
    intervals: tuple[TruncatedInterval, ...] = ()
    signs: dict[str, tuple[SignRule, ...]] = field(default_factory=dict)
    scans: tuple[ScanResult, ...] = ()
    contours: tuple[ContourResult, ...] = ()
    gaussian: dict[str, Any] | None = None
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {"source": self.source, "kind": self.kind, "regions": self.regions,
                "intervals": [t.to_dict() for t in self.intervals],
                "signs": {k: [s.to_dict() for s in v] for k, v in self.signs.items()},
                "scans": [s.to_dict() for s in self.scans],
                "contours": [c.to_dict() for c in self.contours],
                "gaussian": self.gaussian, "notes": list(self.notes)}


def region_info(region: Region, path: str | None) -> dict[str, Any]:
    proj = region.settings.get("projection") if isinstance(region.settings, dict) else None
    return {"theory": region.theory, "coordinates": list(region.coordinates),
            "hash": region.hash, "n_facets": len(region.facets),
            "n_inner_facets": len(region.inner_facets),
            "family": region.settings.get("family", ", ".join(sorted(
                {f.family for f in region.facets}))), "file": path,
            "free": list(proj["free"]) if proj else []}


CARD_NOTES = ("A one-coefficient interval holds the other coefficients at fixed values "
              "(normally zero): it is a slice, not a fit, and its truncation says nothing "
              "about directions the analysis did not vary.",)
#: added when a row's other coefficients were free
FREE_NOTE = ("A row with others 'free' (profiled or marginalised) is checked against the "
             "projection of the whole cone onto its coefficient: the sign positivity requires "
             "of it whatever the other coefficients are (extremal family; its facet holds up "
             "to the stated residual, docs/physics_cones.md).")


def limits_from_card(path: str | Path, regions: RegionSource, *, exact: bool = True,
                     rows: Sequence[IntervalRow] | None = None) -> LimitsResult:
    """Every row of an interval card against the region of its theory (``rows``: the
    card's rows when the caller has read them already)."""
    from eftsieve.fit.formats.interval_card import read_interval_card
    from eftsieve.theories import get_theory

    if rows is None:
        rows = read_interval_card(path, get_theory)
    theories = list(dict.fromkeys(r.theory for r in rows))
    # rows with the others free need no region coordinate of theirs (their projection is
    # of the theory's whole cone), so they do not widen the region
    names = {t: list(dict.fromkeys(n for r in rows if r.theory == t and not r.others_free
                                   for n in (r.coefficient, *r.others)))
             for t in theories}
    got = {t: regions(t, names[t]) for t in theories}
    regs = {t: r for t, (r, _) in got.items()}
    try:
        out = truncate_rows(tuple(rows), regs, exact=exact)
    except InputError as err:
        if err.path is None and (err.field or "").startswith("line "):
            # a row's own problem (e.g. 'others = free' under --family elastic): name the card
            raise InputError(path, err.field, err.problem, err.hint) from err
        raise
    card = {t: [r.coefficient for r in rows if r.theory == t] for t in theories}
    signs = {t: with_free_signs(rules, regs[t], names[t] + card[t]) for t in theories
             if (rules := sign_rules(regs[t], exact=exact))}
    info = {t: region_info(r, p) for t, (r, p) in got.items()}
    notes = CARD_NOTES + ((FREE_NOTE,) if any(r.others_free for r in rows) else ()) + tuple(
        r.notes[0] for r in regs.values()
        if isinstance(r.settings, dict) and "projection" in r.settings and r.notes)
    return LimitsResult(str(path), "interval-card", info, out, signs, notes=notes)


def _factor(t: HepTable, k: int) -> float:
    return float(t.extra.get("factors", [t.factor] * len(t.dependent))[k])


def _grid_1d(t: HepTable, k: int = 0) -> tuple[np.ndarray, np.ndarray]:
    x, q = t.independent[0].values, t.dependent[k].values * _factor(t, k)
    order = np.argsort(x, kind="stable")
    x, q = x[order], q[order]
    twice = x[1:][np.diff(x) <= 0]
    if twice.size:
        raise InputError(t.path, f"{t.independent[0].where}.values", f"the grid point "
                         f"{twice[0]:g} appears twice", "give each grid point once")
    if len(x) < 3:
        raise InputError(t.path, f"{t.independent[0].where}.values", f"a scan needs at least "
                         f"3 points, got {len(x)}", "give the whole scanned grid")
    return x, q


def _grid_2d(t: HepTable, k: int = 0) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    xs, ys = t.independent[0].values, t.independent[1].values
    ux, uy = np.unique(xs), np.unique(ys)
    if len(ux) < 3 or len(uy) < 3 or len(xs) != len(ux) * len(uy):
        raise InputError(t.path, "independent_variables", f"{len(xs)} points do not form a "
                         f"full {len(ux)} x {len(uy)} grid (at least 3 x 3)",
                         "give every (x, y) grid point exactly once")
    q = np.full((len(ux), len(uy)), np.nan)
    q[np.searchsorted(ux, xs), np.searchsorted(uy, ys)] = t.dependent[k].values * _factor(t, k)
    if np.isnan(q).any():
        raise InputError(t.path, "independent_variables", "a grid point appears twice and "
                         "another is missing", "give every (x, y) grid point exactly once")
    return ux, uy, q


def _label(v: Any) -> str:
    return "; ".join(f"{k}: {val}" for k, val in v.qualifiers.items()) or v.name


def limits_from_record(path: str | Path, theory: str, convention: Convention,
                       region: Region, region_path: str | None = None, *,
                       tables: Sequence[str] | None = None,
                       exact: bool = True, draws: int = 200_000, seed: int = 0
                       ) -> LimitsResult:
    """The tables of a HEPData record against one region (module docstring)."""
    from eftsieve.fit.formats.hepdata import classify, read_record
    from eftsieve.limits.line import line_cut
    from eftsieve.limits.plane import plane_cut
    from eftsieve.theories import get_theory

    th = get_theory(theory)
    found = [classify(t, th.parameter_names) for t in read_record(path, tables)]
    scans: list[ScanResult] = []
    contours: list[ContourResult] = []
    for t in found:
        if t.layout in ("central", "covariance", "correlation"):
            continue
        jac, shift = affine_into(region, theory, convention, t.coefficients)
        names = [t.name if len(t.dependent) == 1 else f"{t.name} ({_label(v)})"
                 for v in t.dependent]
        if t.layout == "scan-1d":
            line = line_cut(region, shift, jac[:, 0], exact=exact)
            for k, name in enumerate(names):
                x, q = _grid_1d(t, k)
                scans.append(scan_1d(name, t.coefficients[0], x, q, line))
            continue
        cut = plane_cut(region, shift, jac[:, 0], jac[:, 1], exact=exact)
        if t.layout == "scan-2d":
            for k, name in enumerate(names):
                x, y, q = _grid_2d(t, k)
                scans.append(scan_2d(name, (t.coefficients[0], t.coefficients[1]), x, y, q,
                                     cut))
        else:
            for v in t.dependent:
                poly = np.column_stack([t.independent[0].values, v.values])
                contours.append(contour_fraction(t.name, _label(v),
                                                 (t.coefficients[0], t.coefficients[1]),
                                                 poly, cut))
    gauss = _gaussian_check(path, found, th, convention, region, draws, seed)
    proj = region.settings.get("projection") if isinstance(region.settings, dict) else None
    held = ("Every coefficient a table does not vary is held at zero." if not proj else
            f"The region is a projection with {', '.join(proj['free'])} free (any value, "
            "not zero); the other coefficients a table does not vary are held at zero. "
            + (region.notes[0] if region.notes else ""))
    notes = (held,
             "Scans become posteriors with a prior flat in the scanned coefficients over "
             "the scanned range (zero outside); contour fractions are fractions of area, "
             "not probabilities.")
    return LimitsResult(str(path), "hepdata", {theory: region_info(region, region_path)},
                        scans=tuple(scans), contours=tuple(contours), gaussian=gauss,
                        notes=notes)


def _gaussian_check(path: str | Path, found: list[HepTable], th: Any, convention: Convention,
                    region: Region, draws: int, seed: int) -> dict[str, Any] | None:
    from eftsieve.check.run import run_check
    from eftsieve.check.verdicts import CheckSettings
    from eftsieve.fit.formats.hepdata import gaussian_fit, held_at_zero

    if not any(t.layout == "central" for t in found):
        return None
    fit = held_at_zero(gaussian_fit(Path(path), found, th, convention),
                       region.coordinates)
    res = run_check(fit, region, CheckSettings(draws=draws, seed=seed), None, None, None)
    v = res.verdict
    return {"fit": fit.name, "parameters": list(fit.names),
            "mean": np.asarray(fit.mean).tolist(), "covariance": np.asarray(fit.cov).tolist(),
            "verdict": v.label, "reason": v.reason, "p_inside": res.p_inside,
            "p_inside_err": res.summary.get("p_inside_err"),
            "tension_sigma": res.summary.get("tension_sigma"),
            "held_at_zero": fit.extra.get("held_at_zero", [])}
