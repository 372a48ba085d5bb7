"""The massless real scalar EFT: sum rules, null constraints and two-sided bounds (``scalar-eft``).

Low-energy amplitude (tree level in the light sector), in the normalisation of
S. Caron-Huot and V. Van Duong, "Extremal Effective Field Theories", arXiv:2011.02957,
Eq. (2.3) (equation number from memory):

    M_low(s, t) = -g^2 (1/s + 1/t + 1/u) - lambda + g2 S2 + g3 S3 + g4 S2^2 + g5 S2 S3
                  + g6 S2^3 + g6p S3^2 + ...,     S2 = s^2 + t^2 + u^2,  S3 = s t u,

with s + t + u = 0.  Couplings of Mandelstam degree D are named g{D}, g{D}p, g{D}pp for
S2^a S3^b (2a + 3b = D) with decreasing a.  Projective coordinates are
g{D}t = g{D} M^(2(D-2)) / g2 (``g3t`` = g3 M^2/g2, ``g4t`` = g4 M^4/g2).

Heavy states.  Above the gap, Im M(s, t) = sum_{J even} rho_J(s) P_J(1 + 2t/s) with
rho_J >= 0.  Writing x = -s u = s (s + t), a heavy state of mass m and spin J exchanged in
the s and u channels contributes, up to a function of t alone (the subtraction),

    a P_J(1 + 2t/m^2) [1/(m^2 - s) + 1/(m^2 - u)]
        = a P_J(1 + 2t/m^2) sum_{n >= 0} (2m^2 + t) x^n / (m^2 (m^2 + t))^(n+1).

A twice-subtracted fixed-t dispersion relation (M/s^2 -> 0 at fixed t) fixes every
coefficient of x^n, n >= 1, of M_low: expanding both sides in t at t = 0,

    [x^n t^q] M_low = < h_{n,q}(J) / m^(2(2n+q+1)) >,

where h_{n,q} is a polynomial in j = J(J+1) with rational coefficients, derived with
exact arithmetic in :mod:`eftsieve.theories.scalar_eft.sum_rules` (:func:`heavy_coefficient`,
re-exported here) from the hypergeometric form P_J(1 + 2t) = 2F1(-J, J+1; 1; -t).  M_low
is expanded in (x, t) from its S2, S3 form, so full s-t-u crossing is built in; at each
degree D = 2n + q there are floor(D/2) rows for fewer couplings, and the left null space
of that linear system gives the *null constraints* < v(j) / m^(2D+2) > = 0
(:func:`derive_sum_rules`).  The first one is <J(J+1)(J(J+1) - 8)/m^10> = 0 in this
normalisation, the lowest null constraint of arXiv:2011.02957 (Sec. 2).  The
cubic-coupling poles give t/x + 1/t at fixed t and drop out of every n >= 1 sum rule.

Physics cautions (what the bounds assume; also in docs/physics_scalar_eft.md):

* Lorentz invariance in d = 4 (Legendre polynomials, J even for identical scalars).
* Analyticity: the fixed-t dispersion relation holds for -M^2 < t <= 0 with two
  subtractions (M(s, t)/s^2 -> 0 at large |s|), and may be expanded at t = 0 under the
  heavy average.
* Unitarity: only positivity of the spectral densities (Im a_J >= 0) is used, not the
  upper bound |S_J| <= 1, so the heavy states are NOT assumed tree-level or weakly
  coupled; they may be strongly interacting.
* Crossing: full s-t-u symmetry of a single real scalar.
* Mass gap: no heavy state below M.  The light sector is taken at tree level (light
  loops, which add light cuts and modify the sum rules, are neglected).
* Truncation: sum rules and null constraints up to Mandelstam degree ``order`` are
  imposed.  The outer (dual) bounds stay valid at any order; the inner (primal) set is
  allowed only by the constraints up to that order, and higher null constraints can
  still shrink it.  The spin cut-off ``spins`` limits only the LP grid: outer facets are
  verified for all spins, J -> infinity at fixed m and at fixed impact parameter.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.bounds.sum_rules import SumRuleSolver, VerifySettings
from eftsieve.errors import InputError, SolverError
from eftsieve.executors import Executor, serial
from eftsieve.fit.conventions import ConventionSpec
from eftsieve.region.model import Facet, Region
from eftsieve.theories.base import CoordinateMap, Theory
from eftsieve.theories.scalar_eft.references import REFERENCES
from eftsieve.theories.scalar_eft.sum_rules import (
    Poly,
    SumRule,
    SumRules,
    coupling_names,
    derive_sum_rules,
    heavy_coefficient,
    legendre_forward_coefficient,
    low_energy_basis,
)

if TYPE_CHECKING:
    from eftsieve.fit.model import Fit

__all__ = ["DEFAULTS", "MAX_LISTED_DEGREE", "OUTSIDE", "REGION_COORDINATES", "THEORY", "Built",
           "Poly", "ScalarEFT", "SumRule", "SumRules", "coupling_names", "couplings_from_spectrum",
           "derive_sum_rules", "heavy_coefficient", "legendre_forward_coefficient",
           "low_energy_amplitude", "low_energy_basis", "null_residuals", "state_grid"]

#: Coordinates of points with g2 <= 0 (outside: g2 > 0 is a sum rule), far beyond every facet.
OUTSIDE = 1e30
MAX_LISTED_DEGREE = 12
#: coordinates a region can be built in (higher couplings: the verification of their dual
#: functionals does not converge reliably yet, see docs/physics_scalar_eft.md)
REGION_COORDINATES = ("g3t", "g4t")


# ---- discrete spectra and the low-energy amplitude ---------------------------------------------
def _averages(rules: tuple[SumRule, ...], masses: np.ndarray, spins: np.ndarray,
              weights: np.ndarray) -> dict[str, float]:
    m2 = np.asarray(masses, dtype=float) ** 2
    a = np.asarray(weights, dtype=float)
    return {r.name: float(np.sum(a * r.value(spins) / m2 ** (r.degree + 1))) for r in rules}


def couplings_from_spectrum(rules: SumRules, masses: np.ndarray, spins: np.ndarray,
                            weights: np.ndarray) -> dict[str, float]:
    """Dimensionful couplings of M = sum_i a_i P_J(1+2t/m_i^2)[1/(m_i^2-s) + 1/(m_i^2-u)] + f(t)."""
    return _averages(rules.couplings, masses, spins, weights)


def null_residuals(rules: SumRules, masses: np.ndarray, spins: np.ndarray,
                   weights: np.ndarray) -> dict[str, float]:
    """< v(j) / m^(2D+2) > of every null constraint for a discrete spectrum (0 if consistent)."""
    return _averages(rules.nulls, masses, spins, weights)


def low_energy_amplitude(couplings: dict[str, float], s: np.ndarray, t: np.ndarray
                         ) -> np.ndarray:
    """sum_c g_c S2^a S3^b at (s, t, u = -s - t), for couplings named as :func:`coupling_names`."""
    s, t = np.asarray(s, dtype=float), np.asarray(t, dtype=float)
    u = -s - t
    s2, s3 = s**2 + t**2 + u**2, s * t * u
    out = np.zeros(np.broadcast(s, t).shape)
    for name, g in couplings.items():
        deg = int(name[1:].rstrip("p"))
        a, b = low_energy_basis(deg)[len(name) - len(name.rstrip("p"))]
        out = out + g * s2**a * s3**b
    return out


# ---- regions --------------------------------------------------------------------------------
#: ``order`` None means 10 for one coordinate and 8 for two (fast, and reliable in double
#: precision for every direction; see docs/physics_scalar_eft.md).
DEFAULTS: dict[str, Any] = {
    "order": None, "spins": 40, "coordinates": ["g3t"], "directions": 64, "mass_points": 120,
    "y_min": 1e-4, "spin_exact_max": 2000, "verify_tol": 1e-6, "max_rounds": 25,
}


def state_grid(spins: int, mass_points: int, y_min: float, spin_max: int = 2000
               ) -> tuple[np.ndarray, np.ndarray]:
    """The LP grid: y = M^2/m^2 x even J <= spins, plus sparse spins up to ``spin_max``.

    y is dense near the gap and geometric towards ``y_min``.  The sparse spins carry
    states on a log grid of w = y J(J+1) = (b M/2)^2 from 0.1 up to y = 1; they resolve the
    fixed-impact-parameter regime, where extremal functionals also touch zero.
    """
    half = mass_points // 2
    near = 1.0 - 0.5 * (np.arange(half) / half) ** 2
    far = np.geomspace(0.5, y_min, mass_points - half + 1)[1:]
    ys = np.unique(np.r_[near, far])
    yy, jj = np.meshgrid(ys, np.arange(0, spins + 1, 2), indexing="ij")
    y_out, j_out = [yy.ravel()], [jj.ravel()]
    for spin in np.unique(2 * np.round(np.geomspace(spins + 2, spin_max, 12) / 2)).astype(int):
        w = np.geomspace(0.1, spin * (spin + 1.0), 48)
        y_out.append(w / (spin * (spin + 1.0)))
        j_out.append(np.full(w.size, spin))
    return np.concatenate(y_out), np.concatenate(j_out)


def _settings(settings: dict[str, Any]) -> dict[str, Any]:
    unknown = set(settings) - set(DEFAULTS)
    if unknown:
        raise InputError(None, "settings", f"unknown region settings {sorted(unknown)}",
                         f"accepted: {', '.join(DEFAULTS)}")
    s = {**DEFAULTS, **settings}
    s["coordinates"] = [str(c) for c in s["coordinates"]]
    if s["order"] is None:
        s["order"] = 10 if len(s["coordinates"]) == 1 else 8
    try:
        for key in ("order", "spins", "directions", "mass_points", "spin_exact_max",
                    "max_rounds"):
            s[key] = int(s[key])
        s["y_min"], s["verify_tol"] = float(s["y_min"]), float(s["verify_tol"])
    except (TypeError, ValueError) as err:
        raise InputError(None, "settings", f"a region setting is not a number ({err})",
                         "give integers for order/spins/directions/..., floats otherwise"
                         ) from err
    if not (0 < s["y_min"] < 1 and 0 < s["verify_tol"] < 1e-2):
        raise InputError(None, "settings", "need 0 < y_min < 1 and 0 < verify_tol < 1e-2")
    coords = s["coordinates"]
    if not 1 <= len(coords) <= 2 or len(set(coords)) != len(coords):
        raise InputError(None, "coordinates", f"{coords}: give one or two distinct coordinates")
    for c in coords:
        deg = _degree_of(c[:-1]) or 0
        if c not in REGION_COORDINATES:
            raise InputError(None, "coordinates", f"'{c}' is not a region coordinate",
                             f"use {' and/or '.join(REGION_COORDINATES)} (higher couplings "
                             "are not supported yet)")
        if deg > s["order"]:
            raise InputError(None, "order", f"order {s['order']} is below the degree {deg} "
                             f"of {c}", f"use order >= {deg}")
    if s["order"] < 4 or s["spins"] < 2 or s["directions"] < 8 or s["mass_points"] < 8:
        raise InputError(None, "settings", "need order >= 4, spins >= 2, directions >= 8, "
                         "mass_points >= 8")
    return s


def _degree_of(name: str) -> int | None:
    body = name[1:].rstrip("p") if name.startswith("g") else ""
    return int(body) if body.isdigit() else None


def _facet(b: Any, normal: tuple[float, ...], channel: str, point: dict[str, float]) -> Facet:
    nn = float(np.linalg.norm(normal))
    extra = {"certificate": b.certificate, "verification": b.verification.to_dict(),
             "lp_value": b.lp_value, "inner_value": b.inner, "rounds": b.rounds}
    return Facet(normal, b.outer, "null-constraints", channel, point, b.outer / nn,
                 "optimal", extra)


def _inner_facet(normal: tuple[float, ...], offset: float, channel: str,
                 spectra: list[dict[str, Any]]) -> Facet:
    nn = float(np.linalg.norm(normal))
    return Facet(normal, offset, "primal-spectrum", channel, {}, offset / nn, "optimal",
                 {"spectra": spectra})


Built = tuple[list[Facet], list[Facet], list[tuple[float, ...]]]


def _one_dim(solver: SumRuleSolver) -> Built:
    """The interval: outer facets x >= lo_out, -x >= -hi_out; inner vertices lo_in, hi_in."""
    lo, hi = solver.extremize(np.array([1.0])), solver.extremize(np.array([-1.0]))
    outer = [_facet(lo, (1.0,), "direction (+1)", {}), _facet(hi, (-1.0,), "direction (-1)", {})]
    inner = [_inner_facet((1.0,), lo.inner, "direction (+1)", [lo.spectrum]),
             _inner_facet((-1.0,), hi.inner, "direction (-1)", [hi.spectrum])]
    return outer, inner, [(lo.inner_point[0],), (hi.inner_point[0],)]


def _solve_direction(solver: SumRuleSolver, direction: np.ndarray) -> Any:
    """One support-function solve on a private copy of ``solver`` (for parallel builds)."""
    import copy

    return copy.deepcopy(solver).extremize(direction)


def _two_dim(solver: SumRuleSolver, n_dir: int, executor: Executor = serial) -> Built:
    """Support functions along the axes and ``n_dir`` directions (uniform in angle after
    scaling each axis by the width of the region); inner polygon = hull of the spectra."""
    from scipy.spatial import ConvexHull, QhullError

    bounds = []
    for k in range(2):  # the axes first: they fix the scale of the directions
        for sgn in (1.0, -1.0):
            d = np.zeros(2)
            d[k] = sgn
            bounds.append(solver.extremize(d))
    width = np.array([-bounds[1].outer - bounds[0].outer, -bounds[3].outer - bounds[2].outer])
    dirs = []
    for th in 2 * np.pi * np.arange(n_dir) / n_dir:
        d = np.array([np.cos(th), np.sin(th)]) / width
        dirs.append(d / np.linalg.norm(d))
    if executor is serial:
        for d in dirs:
            bounds.append(solver.extremize(d))
    else:
        # each direction on its own copy of the post-axes solver: independent LPs, each
        # verified on its own (the cutting-plane states are not shared between directions)
        names = [f"scalar-eft direction {k} of {n_dir}" for k in range(n_dir)]
        bounds += executor(_solve_direction, [(solver, d) for d in dirs], names)
    outer = [_facet(b, b.direction, f"direction ({b.direction[0]:.6f}, {b.direction[1]:.6f})",
                    {"angle": float(np.arctan2(b.direction[1], b.direction[0]))})
             for b in bounds]
    pts = np.array([b.inner_point for b in bounds])
    try:
        hull = ConvexHull(pts)
    except QhullError as err:
        raise SolverError("degenerate-inner", "convex hull of the primal points") from err
    verts = [tuple(float(v) for v in pts[i]) for i in hull.vertices]
    inner = []
    for k, (eq, simplex) in enumerate(zip(hull.equations, hull.simplices, strict=True)):
        inner.append(_inner_facet((float(-eq[0]), float(-eq[1])), float(eq[2]),
                                  f"inner hull edge {k}", [bounds[i].spectrum for i in simplex]))
    return outer, inner, verts


def _listed_names() -> tuple[tuple[str, ...], tuple[str, ...]]:
    dims = [n for d in range(2, MAX_LISTED_DEGREE + 1) for n in coupling_names(d)]
    return tuple(dims), tuple(n + "t" for n in dims if n != "g2")


#: cautions printed in every report on a scalar-eft region (docs/physics.md)
CAUTIONS = (
    "The scalar-eft bounds assume a mass gap M below which only the massless scalar "
    "propagates, and the low-energy expansion truncated at the stated order.",
    "Inner points come from explicit positive spectra on a discrete grid of heavy states; "
    "outer facets from dual functionals verified on a finer grid and asymptotically.",
    "The inner spectra satisfy every sum rule and null constraint up to the stated order "
    "only; higher null constraints can still exclude some of those points, so `inside` "
    "means consistent with the bounds to that order.",
    "The light sector is taken at tree level: loops of the massless scalar, which change "
    "the dispersion relations, are neglected.",
)


#: the conventions of scalar-eft couplings
CONVENTIONS = {
    "projective": ConventionSpec("projective", (),
                                 "projective dimensionless ratios (g_k M^(2k-4) / g2)"),
    "dimensionful": ConventionSpec("dimensionful", (("gap_mev", "the mass gap M"),),
                                   "dimensionful coefficients with mass gap M = {gap_mev:g} MeV"),
}


class ScalarEFT(Theory):
    """A massless real scalar with heavy states above a gap M (arXiv:2011.02957)."""

    name = "scalar-eft"
    summary = ("massless real scalar, crossing-symmetric 2->2 amplitude; two-sided bounds on "
               "g_k M^(2k-4)/g2 from twice-subtracted dispersion relations and null constraints")
    parameter_names = _listed_names()[0] + _listed_names()[1]
    coordinates = ("g3t", "g4t")
    #: -10.346 <= g3t <= 3 and 0 <= g4t <= 1 (Caron-Huot & Van Duong, arXiv:2011.02957;
    #: from memory), with room on both sides
    typical_window = {"g3t": (-12.0, 5.0), "g4t": (-0.2, 1.2)}
    convention_specs = CONVENTIONS
    kinematic_inputs = {"gap_mev": ("mass gap M of the heavy states (MeV); needed by the "
                                    "dimensionful convention", None)}
    families = ("null-constraints",)
    references = REFERENCES

    setting_names = tuple(DEFAULTS)
    cautions = CAUTIONS
    parallel_build = True

    def build_region(self, settings: dict[str, Any], executor: Executor = serial) -> Region:
        """Outer (verified dual) and inner (exact primal) sets; see :data:`DEFAULTS`."""
        s = _settings(settings)
        rules = derive_sum_rules(s["order"])
        y, spin = state_grid(s["spins"], s["mass_points"], float(s["y_min"]),
                             s["spin_exact_max"])
        ver = VerifySettings(spin_exact_max=s["spin_exact_max"], tol=float(s["verify_tol"]),
                             max_rounds=s["max_rounds"])
        solver = SumRuleSolver(tuple(rules.projective(c) for c in s["coordinates"]),
                               rules.null_polynomials(), y, spin, ver)
        if len(s["coordinates"]) == 1:
            outer, inner, verts = _one_dim(solver)
        else:
            outer, inner, verts = _two_dim(solver, s["directions"], executor)
        conv = {"name": "projective", "definition": "g{D}t = g{D} M^(2(D-2)) / g2",
                "amplitude": "Caron-Huot & Van Duong, arXiv:2011.02957, Eq. (2.3)",
                "units": "mass gap M = 1"}
        notes = (f"sum rules and null constraints up to Mandelstam degree {s['order']} "
                 f"({len(rules.nulls)} null constraints)",
                 "outer facets: dual functionals verified for every spin and mass >= M",
                 "inner set: positive spectra satisfying every imposed sum rule exactly; "
                 "higher-order null constraints are not imposed on it",
                 "assumes Lorentz invariance, analyticity with two subtractions, "
                 "positivity of Im a_J, crossing, a mass gap and a tree-level light sector")
        recorded = {**s, "n_null_constraints": len(rules.nulls),
                    "grid_states_final": int(solver.y.size),
                    "verification": ver.to_dict()}
        return Region(self.name, tuple(s["coordinates"]), conv, tuple(outer), recorded,
                      tuple(inner), tuple(verts), notes=notes)

    # ---- fits ------------------------------------------------------------------------------
    def _mappable(self, fit: Fit) -> list[tuple[str, str]]:
        """(region coordinate, fit parameter) pairs, by degree."""
        out = []
        for p in fit.parameters:
            if p.convention.name == "projective" and p.name in REGION_COORDINATES:
                out.append((p.name, p.name))
            elif p.convention.name == "dimensionful" and p.name + "t" in REGION_COORDINATES:
                out.append((p.name + "t", p.name))
        return sorted(out, key=lambda c: (_degree_of(c[0][:-1]) or 0, c[0]))

    def _gap(self, fit: Fit) -> float | None:
        for p in fit.parameters:
            if p.convention.name == "dimensionful" and p.convention.gap_mev is not None:
                return float(p.convention.gap_mev)
        gap = fit.kinematics.get("gap_mev")
        return None if gap is None else float(gap)

    def validate_fit(self, fit: Fit) -> None:
        """Known names per convention; the dimensionful convention needs g2 and gap_mev > 0."""
        src = fit.source
        for i, p in enumerate(fit.parameters):
            conv = p.convention.name
            if conv == "none":
                continue
            if conv not in self.conventions:
                raise InputError(src, f"parameters[{i}].convention", f"'{conv}' is not a "
                                 "scalar-eft convention", "use projective or dimensionful")
            names = _listed_names()[1] if conv == "projective" else _listed_names()[0]
            if p.name not in names:
                raise InputError(src, f"parameters[{i}].name", f"'{p.name}' is not a {conv} "
                                 "scalar-eft parameter", f"use one of {', '.join(names[:6])}, ...")
        dimful = [p.name for p in fit.parameters if p.convention.name == "dimensionful"]
        if dimful:
            gap = self._gap(fit)
            if gap is None or not gap > 0:
                raise InputError(src, "kinematics.gap_mev", "the dimensionful convention "
                                 "needs the mass gap M", "set gap_mev > 0")
            if "g2" not in dimful:
                raise InputError(src, "parameters", "dimensionful couplings need g2 (the "
                                 "projective coordinates are g_k M^(2k-4)/g2)", "add g2")
        if not self._mappable(fit):
            raise InputError(src, "parameters", "no parameter maps to a region coordinate",
                             "give g3t/g4t (projective) or g2 with g3/g4 (dimensionful)")

    def region_settings_for_fit(self, fit: Fit) -> dict[str, Any]:
        """The defaults with the coordinates of the fit (the two lowest-degree ones)."""
        coords = [c for c, _ in self._mappable(fit)][:2]
        auto = 10 if len(coords) == 1 else 8
        return {**DEFAULTS, "coordinates": coords,
                "order": max([auto] + [_degree_of(c[:-1]) or 0 for c in coords])}

    def coordinate_map(self, fit: Fit, region: Region) -> CoordinateMap:
        """Projective: a column selection (affine).  Dimensionful: g_k M^(2(D-2))/g2 (nonlinear).

        Rows with g2 <= 0 violate the g2 sum rule (g2 = <1/m^6> > 0): every coordinate is
        set to :data:`OUTSIDE` (+1e30), beyond every upper facet, so the verdict is outside.
        """
        pairs = dict(self._mappable(fit))
        missing = [c for c in region.coordinates if c not in pairs]
        if missing:
            raise InputError(fit.source, "parameters", f"the fit has no parameter for {missing}",
                             "build the region from region_settings_for_fit(fit)")
        names = list(fit.names)
        cols = [names.index(pairs[c]) for c in region.coordinates]
        if all(pairs[c] == c for c in region.coordinates):
            jac = np.zeros((len(cols), len(names)))
            jac[np.arange(len(cols)), cols] = 1.0
            return CoordinateMap(jac, np.zeros(len(cols)), tuple(
                f"{c} = fit parameter {c} (projective)" for c in region.coordinates))
        gap = float(self._gap(fit) or 0.0)
        i2 = names.index("g2") if "g2" in names else -1
        degs = [_degree_of(c[:-1]) or 0 for c in region.coordinates]
        projective = [pairs[c] == c for c in region.coordinates]

        def mapping(x: np.ndarray) -> np.ndarray:
            x = np.atleast_2d(x)
            g2 = x[:, i2] if i2 >= 0 else np.ones(len(x))
            ok = g2 > 0
            safe = np.where(ok, g2, 1.0)
            out = np.column_stack([x[:, k] if pr else x[:, k] * gap ** (2 * (d - 2)) / safe
                                   for k, d, pr in zip(cols, degs, projective, strict=True)])
            out[~ok] = OUTSIDE
            return out

        desc = tuple(f"{c} = {pairs[c]}" + ("" if pairs[c] == c else
                     f" * M^{2 * (d - 2)} / g2, M = {gap:g} MeV; g2 <= 0 -> {OUTSIDE:g} (outside)")
                     for c, d in zip(region.coordinates, degs, strict=True))
        return CoordinateMap(None, None, desc, nonlinear=mapping)


THEORY = ScalarEFT()
