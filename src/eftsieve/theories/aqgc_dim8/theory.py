"""Theory ``aqgc-dim8``: the 18 dimension-8 quartic gauge couplings (operators.py).

Region settings besides the cone engine's: ``coordinates`` (any subset of the 18
coefficients; the others are fixed to zero; CLI ``--coordinates fT0,fT1``) and
``sin2_theta_w`` (the weak angle of the hatted field strengths; it changes the forward
tensors but not the cone, see operators.py).  Without ``coordinates`` the region is
fS0..fS2, fT0..fT2 (about 2 s: without M-type coefficients the cone is the product of
its S-type and T-type sectors, built one by one); ``all`` names the 18.  Subsets of more than six
coefficients (every subset with M-type coefficients and an interior) are built with the
LP geometry of :mod:`eftsieve.bounds.cone_build`: verified outer facets, a small inner set,
and the exact solves of the check for the points between (docs/physics_aqgc.md).  The
region is stated in the convention ``hat-i``; a fit must declare its own convention
(conventions.py), which is mapped exactly onto the region's coordinates.
"""

from __future__ import annotations

from collections.abc import Sequence
from functools import lru_cache
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.bounds.cones import ConeProblem
from eftsieve.bounds.contact import forward_tensor
from eftsieve.errors import InputError, SolverError
from eftsieve.executors import Executor, serial
from eftsieve.theories.aqgc_dim8 import conventions as conv
from eftsieve.theories.aqgc_dim8 import operators as ops
from eftsieve.theories.aqgc_dim8.references import REFERENCES
from eftsieve.theories.base import CoordinateMap
from eftsieve.theories.cone_theory import (
    CONE_CAUTIONS,
    ConeTheory,
    build_projection,
    parse_names,
)

if TYPE_CHECKING:
    from eftsieve.fit.model import Fit
    from eftsieve.region.model import Region

#: on-shell sin^2(theta_W) = 1 - m_W^2/m_Z^2 with m_W = 80.377 GeV, m_Z = 91.1876 GeV
#: (Particle Data Group, Review of Particle Physics 2022, from memory)
DEFAULT_SIN2_THETA_W = 1.0 - (80.377 / 91.1876) ** 2
#: the sign each coefficient must have when it is the only non-zero one (convention hat-i):
#: +1 (>= 0) or -1 (<= 0); coefficients not listed cannot be non-zero alone.  Derived with
#: a certificate for every excluded sign and checked by
#: tests/theories/test_aqgc_dim8.py::test_single_coefficient_signs (docs/physics_aqgc.md)
SINGLE_COEFFICIENT_SIGNS = {"fS0": 1, "fS1": 1, "fS2": 1, "fM1": -1, "fM3": -1, "fT0": 1,
                            "fT1": 1, "fT2": 1, "fT6": 1, "fT8": 1, "fT9": 1}
#: the region of ``eftsieve region --theory aqgc-dim8`` without --coordinates: a build that
#: finishes in seconds (two sectors, built one by one; docs/physics_aqgc.md)
DEFAULT_COORDINATES = ("fS0", "fS1", "fS2", "fT0", "fT1", "fT2")
AQGC_CAUTIONS = CONE_CAUTIONS + (
    "interval limits quoted with all other coefficients at zero are not a fit: each is one "
    "line through the 18-dimensional space",
    "the massless, unbroken phase: the bounds ignore m_W, m_Z, m_h and the vacuum "
    "expectation value",
)


#: relative size below which a forward-tensor entry is rounding dust (they sit at 1e-17
#: and below; true entries are O(1) combinations of the weak angle's sines and cosines)
ROUNDING_DUST = 1e-13


def _convention(used: Sequence[str], sin2: float) -> dict[str, Any]:
    """The region convention: hat-i at the weak angle, and the coefficients held at zero
    (those not in ``used``)."""
    out: dict[str, Any] = {"name": conv.CANONICAL, "sin2_theta_w": sin2,
                           "units": "all coefficients in one common unit (e.g. TeV^-4)"}
    fixed = [c for c in ops.COEFFICIENTS if c not in used]
    if fixed:
        out["fixed_to_zero"] = fixed
    return out


def _refuse_m6(raw: Any, flag: str) -> None:
    items = raw.split(",") if isinstance(raw, str) else (raw or [])
    if any(str(x).strip() == "fM6" for x in items):
        raise InputError(None, flag, "fM6 is redundant (O_M6 = O_M0/2)",
                         "use fM0; a card's fM6 is folded into fM0 + fM6/2")


def parse_coordinates(raw: Any) -> tuple[str, ...]:
    """The region's coordinates from a setting (``all``, a list or a comma-separated
    string), in the canonical order (:func:`eftsieve.theories.cone_theory.parse_names`);
    InputError for unknown, duplicate or redundant (fM6) names and for none at all."""
    if raw is None:
        return ops.COEFFICIENTS
    _refuse_m6(raw, "--coordinates")
    names = parse_names(raw, ops.COEFFICIENTS, "--coordinates")
    if not names:
        raise InputError(None, "--coordinates", "no coefficient named",
                         "name each coefficient once, or all")
    return names


def parse_free(raw: Any, coords: tuple[str, ...]) -> tuple[str, ...]:
    """The free coefficients from a setting (``all``, a list or a comma-separated string),
    in the canonical order (:func:`eftsieve.theories.cone_theory.parse_names`); fM6 is
    refused as redundant."""
    _refuse_m6(raw, "--free")
    return parse_names(raw, ops.COEFFICIENTS, "--free", coords)


def _covering(used: Sequence[str]) -> list[str] | str:
    """Coordinates of a region that decides points moving ``used``: those themselves; all
    T-type coefficients once a mixed W-B one (fT5, fT6, fT7) is among them; all 18 once an
    M-type coefficient is.  Subsets with M-type coefficients, and S + fT0..fT2 with fT5,
    fT6 or fT7 (even all three) but without fT8 and fT9, have no point with a
    certificate of positive margin (measured: the centre program's rho fails
    verification; the cone is flat or lies on a face where every certificate is
    singular), while the larger cone meets every subspace in that subspace's own cone."""
    if any(c.startswith("fM") for c in used):
        return "all"
    if any(c in ("fT5", "fT6", "fT7") for c in used):
        return list(dict.fromkeys([*used, *(c for c in ops.COEFFICIENTS
                                            if c.startswith("fT"))]))
    return list(used)


def _independent_sectors(problem: ConeProblem) -> list[Any]:
    """The independent sectors of a problem (:func:`eftsieve.bounds.cone_sectors.sectors`)
    when each has at least two coefficients, else the problem as one sector.  Without
    M-type coefficients the Higgs and the gauge modes do not talk, and the cone is the
    product of its S-type and T-type cones: each is built on its own (fewer coordinates,
    an inner set of its own), and the region is their product."""
    from eftsieve.bounds.cone_sectors import Sector, sectors

    secs = sectors(problem)
    if len(secs) > 1 and all(s.problem.k >= 2 for s in secs):
        return list(secs)
    return [Sector(tuple(range(problem.k)), tuple(range(problem.n)), problem)]


def _product(name: str, problem: ConeProblem, regions: list[Region],
             convention: dict[str, Any]) -> Region:
    """The product of the sectors' regions, with its coordinates (and the facets' and
    inner rays' components) in the problem's order; settings keep each sector's build."""
    from dataclasses import replace

    from eftsieve.bounds.cone_sectors import product_region
    from eftsieve.region.model import Region as RegionType

    prod = product_region(name, regions)
    order = [prod.coordinates.index(c) for c in problem.coefficients]

    def perm(f: Any) -> Any:
        return replace(f, normal=tuple(f.normal[i] for i in order))

    settings = dict(prod.settings)
    settings["sectors"] = [{"coordinates": list(r.coordinates),
                            "shell_fraction": r.settings.get("shell_fraction"),
                            "build": r.settings.get("build")} for r in regions]
    extra = tuple(n for r in regions for n in r.notes if n not in AQGC_CAUTIONS)
    return RegionType(name, problem.coefficients, convention,
                      tuple(perm(f) for f in prod.facets), _reorder_problem(settings, order),
                      tuple(perm(f) for f in prod.inner_facets), (),
                      notes=AQGC_CAUTIONS + tuple(dict.fromkeys(extra)))


def _reorder_problem(settings: dict[str, Any], order: list[int]) -> dict[str, Any]:
    """The stored cone problem with its coefficients in ``order`` (the region's)."""
    cp = ConeProblem.from_dict(settings["cone_problem"])
    re = ConeProblem(tuple(cp.coefficients[i] for i in order), cp.modes,
                     np.ascontiguousarray(cp.tensors[order]), dict(cp.info))
    return {**settings, "cone_problem": re.to_dict()}


def parse_sin2(raw: Any) -> float:
    """sin^2(theta_W) from a setting; InputError unless 0 < x < 1."""
    try:
        x = DEFAULT_SIN2_THETA_W if raw is None else float(raw)
    except (TypeError, ValueError) as err:
        raise InputError(None, "sin2_theta_w", f"not a number: {raw!r}",
                         "give a value between 0 and 1, e.g. 0.2230") from err
    if not 0.0 < x < 1.0:
        raise InputError(None, "sin2_theta_w", f"must lie in (0, 1), got {x}",
                         "give a value between 0 and 1, e.g. 0.2230")
    return x


def aqgc_problem(coordinates: tuple[str, ...] = ops.COEFFICIENTS,
                 sin2_theta_w: float = DEFAULT_SIN2_THETA_W) -> ConeProblem:
    """The ConeProblem of the given coefficients (the others at zero) on the 12 modes."""
    tensors = _tensors(tuple(coordinates), float(sin2_theta_w))
    keep = support_modes(tensors)
    labels = tuple(ops.MODES.labels[i] for i in keep)
    return ConeProblem(tuple(coordinates), labels, tensors[np.ix_(range(len(tensors)), keep, keep,
                                                                   keep, keep)], {
        "basis": AqgcDim8.basis, "convention": conv.CANONICAL, "modes": ops.MODES.to_dict(),
        "modes_used": list(labels), "sin2_theta_w": sin2_theta_w, "g": 1.0})


def support_modes(tensors: np.ndarray, rel: float = 1e-12) -> list[int]:
    """The modes that some M_a involves.  Dropping a mode that no entry involves is exact:
    rho restricted to the remaining pairs is a principal submatrix (still PSD), and a rho of
    the remaining modes extends by zero."""
    t = np.abs(np.asarray(tensors))
    big = t > rel * t.max()
    used = big.any(axis=(0, 2, 3, 4)) | big.any(axis=(0, 1, 3, 4)) | big.any(
        axis=(0, 1, 2, 4)) | big.any(axis=(0, 1, 2, 3))
    return [int(i) for i in np.nonzero(used)[0]]


@lru_cache(maxsize=4)
def _tensors(coordinates: tuple[str, ...], sin2_theta_w: float) -> np.ndarray:
    """M_a of the coefficients (k, 12, 12, 12, 12), all in one forward-tensor pass."""
    t = forward_tensor(ops.stacked_density(coordinates, sin2_theta_w), ops.MODES)
    t = np.ascontiguousarray(np.moveaxis(t, -1, 0))
    # rounding dust (entries below 1e-13 of the largest, from vanishing terms)
    # would join sectors that no operator couples; they are set to zero
    t[np.abs(t) < ROUNDING_DUST * np.abs(t).max()] = 0.0
    t.setflags(write=False)
    return t


def _reduction(problem: ConeProblem, family: str) -> Any:
    """The product-state reduction of transverse-w when only the six W modes are involved
    (the elastic proofs are then fast); None otherwise (general branch and bound)."""
    from eftsieve.theories.transverse_w import operators as tw

    if family == "elastic" and problem.modes == tw.MODES.labels:
        return tw.state_reduction()
    return None


class AqgcDim8(ConeTheory):

    references = REFERENCES
    name = "aqgc-dim8"
    summary = ("weak-boson and Higgs scattering at dimension 8; positivity cone of the 18 "
               "quartic gauge couplings f_S, f_M, f_T")
    parameter_names = ops.PARAMETERS
    coordinates = ops.COEFFICIENTS
    modes = ops.MODES
    operators = ops.make_operators(DEFAULT_SIN2_THETA_W)
    convention_specs = conv.CONVENTIONS
    cautions: tuple[str, ...] = AQGC_CAUTIONS
    setting_names: tuple[str, ...] = ConeTheory.setting_names + ("sin2_theta_w",)
    basis = ("f_S0..2, f_M0..5, f_M7, f_T0..2, f_T5..9 over Lambda^4 (hep-ph/0606118, "
             "arXiv:1604.03555), convention hat-i; fM6 folded into fM0")

    def problem(self) -> ConeProblem:
        return aqgc_problem()

    def build_region(self, settings: dict[str, Any], executor: Executor = serial) -> Region:
        from eftsieve.bounds.cone_build import ConeSettings, build_cone
        from eftsieve.bounds.cone_region import cone_region

        fams = list(settings.get("families", [settings.get("family", "extremal")]))
        if len(fams) != 1 or fams[0] not in ("extremal", "elastic"):
            raise InputError(None, "--family", f"theory '{self.name}' takes one family, got "
                             f"{fams}", "use --family extremal or --family elastic")
        self.check_settings(settings)
        if settings.get("convention", conv.CANONICAL) != conv.CANONICAL:
            raise InputError(None, "--convention", f"{self.name} regions are stated in "
                             f"{conv.CANONICAL}", "drop --convention; a fit's own convention "
                             "is mapped onto the region when it is checked")
        coords = parse_coordinates(settings.get("coordinates", DEFAULT_COORDINATES))
        sin2 = parse_sin2(settings.get("sin2_theta_w"))
        free = parse_free(settings.get("free"), coords)
        if free:
            return self._projection(coords, free, fams[0], sin2)
        st = ConeSettings(family=fams[0], shell_target=float(settings.get("shell_target", 1e-3)),
                          seed=int(settings.get("seed", 0)))
        problem = aqgc_problem(coords, sin2)
        try:
            parts = [(sec, build_cone(sec.problem, st, reduction=_reduction(sec.problem,
                                                                            fams[0])))
                     for sec in _independent_sectors(problem)]
        except SolverError as err:
            raise InputError(None, "--coordinates", f"the cone of {','.join(coords)} alone "
                             f"has no point with a certificate of positive margin ({err}): it "
                             "is flat, lies on a face where every certificate is singular, or "
                             "is a single coefficient", "use --coordinates all with M-type "
                             "coefficients, or add more (e.g. fS0,fS1,fS2 with fT0,fT1,fT2); "
                             "single coefficients: the sign table of docs/physics_aqgc.md"
                             ) from err
        convention = _convention(coords, sin2)
        if len(parts) == 1:
            return cone_region(self.name, parts[0][1], convention, notes=AQGC_CAUTIONS)
        return _product(self.name, problem, [cone_region(self.name, b, convention,
                                                         notes=AQGC_CAUTIONS)
                                             for _, b in parts], convention)

    def _projection(self, coords: tuple[str, ...], free: tuple[str, ...], family: str,
                    sin2: float) -> Region:
        """The cone on coords + free projected onto coords (eftsieve.bounds.projection)."""
        names = tuple(c for c in ops.COEFFICIENTS if c in coords or c in free)
        return build_projection(self.name, aqgc_problem(names, sin2), coords, free, family,
                                _convention(names, sin2), AQGC_CAUTIONS)

    def region_settings_for_fit(self, fit: Fit) -> dict[str, Any]:
        jac = self._fit_jacobian(fit)
        used = [c for c, row in zip(ops.COEFFICIENTS, jac, strict=True) if np.any(row)]
        return {"families": ["extremal"], "coordinates": _covering(used)}

    def region_settings_for_coefficients(self, names: Sequence[str]) -> dict[str, Any]:
        names = ["fM0" if n == "fM6" else n for n in names]
        if all(n in DEFAULT_COORDINATES for n in names):
            return {}
        return {"coordinates": _covering([c for c in ops.COEFFICIENTS
                                          if c in names or c in DEFAULT_COORDINATES])}

    def _fit_jacobian(self, fit: Fit) -> np.ndarray:
        """(18, p) map of the fit's parameters onto the 18 coordinates (zero columns for
        nuisance parameters); InputError when the fit mixes conventions."""
        names = list(fit.names)
        ours = [p for p in fit.parameters if p.convention.name != "none"]
        used = {p.convention.name for p in ours}
        if len(used) != 1:
            raise InputError(fit.source, "parameters[].convention", "the coefficients "
                             f"must share one convention, got {sorted(used) or 'none'}",
                             f"state one of {', '.join(conv.CONVENTIONS)} for all of them")
        cname = used.pop()
        amap = conv.to_canonical(cname, [p.name for p in ours], fit.source,
                                 "parameters[].convention")
        jac = np.zeros((len(ops.COEFFICIENTS), len(names)))
        for col, p in enumerate(ours):
            jac[:, names.index(p.name)] = amap.jacobian[:, col]
        return jac

    def coordinate_map(self, fit: Fit, region: Region) -> CoordinateMap:
        jac18 = self._fit_jacobian(fit)
        rows = [ops.COEFFICIENTS.index(c) for c in region.coordinates]
        free = list(region.convention.get("free", []))      # a projection's free coefficients
        dropped = [c for k, c in enumerate(ops.COEFFICIENTS)
                   if k not in rows and np.any(jac18[k]) and c not in free]
        if dropped:
            raise InputError(fit.source, "parameters", f"the fit moves {', '.join(dropped)} "
                             f"but the region fixes {'it' if len(dropped) == 1 else 'them'} "
                             "to zero", "rebuild the region with --coordinates "
                             + ",".join(c for c in ops.COEFFICIENTS
                                        if c in region.coordinates or c in dropped))
        jac = jac18[rows]
        cname = next(p.convention.name for p in fit.parameters if p.convention.name != "none")
        desc = tuple(f"{c} ({region.convention.get('name')}) from the fit's {cname} "
                     "coefficients"
                     if np.any(jac[k]) else f"{c} = 0 (not in the fit)"
                     for k, c in enumerate(region.coordinates))
        return CoordinateMap(jac, np.zeros(len(rows)), desc)


THEORY = AqgcDim8()
