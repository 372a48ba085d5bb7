"""Shared adapter from a dimension-8 operator set to the current Theory interface.

Each dimension-8 theory package (``photon_quartic``, ``higgs_quartic``, ``ew_chiral``,
``transverse_w``) holds its physics in ``operators.py`` (modes, operator densities,
bases) and a thin ``theory.py`` that fills in a :class:`ConeTheory`.  The cone engine
(:mod:`eftsieve.bounds.cone_build`, :mod:`eftsieve.bounds.cone_region`) does the rest.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.bounds.cones import ConeProblem
from eftsieve.bounds.contact import AnyModes, Density, forward_tensor
from eftsieve.errors import InputError
from eftsieve.executors import Executor, serial
from eftsieve.fit.conventions import ConventionSpec
from eftsieve.theories.base import CoordinateMap, Theory

if TYPE_CHECKING:
    from eftsieve.bounds.elastic import StateReduction
    from eftsieve.fit.model import Fit
    from eftsieve.region.model import Region

CONE_FAMILIES = ("extremal", "elastic")
CONE_CAUTIONS = (
    "tree-level, forward-limit (t = 0), massless bounds from twice-subtracted dispersion "
    "relations (analyticity, crossing, unitarity, Lorentz invariance)",
    "they neglect loops of light particles, the squares of dimension-6 operators, and the "
    "running between the matching scale and the fit's scale, which can move coefficients "
    "across the boundary (Chala & Santiago, arXiv:2110.01624)",
    "a fit that clipped the dimension-8 amplitude for unitarity is a different object",
    "all coefficients must be in the same units (a cone is unchanged by a common positive "
    "rescaling, not by rescaling one coefficient)",
)


def parse_names(raw: Any, allowed: tuple[str, ...], flag: str,
                exclude: tuple[str, ...] = ()) -> tuple[str, ...]:
    """Coefficient names from a setting (``all``, a list or a comma-separated string), in
    the order of ``allowed``; ``all`` means every allowed name not in ``exclude``.
    InputError (naming ``flag``) for unknown, duplicate or excluded names."""
    if raw is None or raw == [] or raw == "":
        return ()
    items = [str(x).strip() for x in (raw.split(",") if isinstance(raw, str) else raw)]
    if items == ["all"]:
        rest = tuple(c for c in allowed if c not in exclude)
        if not rest:
            raise InputError(None, flag, "'all' leaves no coefficient: every one is already "
                             "in --coordinates", "keep one or two coefficients, e.g. "
                             f"--coordinates {allowed[0]} --free all")
        return rest
    for name in items:
        if name not in allowed:
            raise InputError(None, flag, f"'{name}' is not a coefficient of the cone",
                             f"choose among {','.join(allowed)}, or all")
        if name in exclude:
            raise InputError(None, flag, f"'{name}' is also in --coordinates",
                             "a coefficient is either a coordinate or free")
    if len(set(items)) != len(items):
        raise InputError(None, flag, "duplicate coefficient names", "name each once")
    return tuple(c for c in allowed if c in items)


def build_projection(theory: str, problem: ConeProblem, keep: tuple[str, ...],
                     free: tuple[str, ...], family: str, convention: dict[str, Any],
                     notes: tuple[str, ...]) -> Region:
    """The region of the cone of ``problem`` restricted to keep + free (the rest fixed to
    zero) and projected onto ``keep`` (:mod:`eftsieve.bounds.projection`); InputError
    with the answer when positivity constrains nothing there, or when the request cannot
    be built (more than two kept coefficients, a failed projection)."""
    from eftsieve.bounds.projection import project_cone, project_elastic, projection_region
    from eftsieve.errors import SolverError

    if family not in ("extremal", "elastic"):
        raise InputError(None, "--family", f"unknown family '{family}'",
                         "use --family extremal or --family elastic")
    if not 1 <= len(keep) <= 2:
        raise InputError(None, "--coordinates", f"a projection is built onto one or two "
                         f"coefficients, got {len(keep)}", "give one or two names, "
                         "e.g. --coordinates fT0,fT1 --free all")
    names = tuple(c for c in problem.coefficients if c in keep or c in free)
    idx = [problem.coefficients.index(c) for c in names]
    sub = ConeProblem(names, problem.modes, problem.tensors[idx])
    try:
        pc = project_cone(sub, keep) if family == "extremal" else project_elastic(sub, keep)
    except SolverError as err:
        raise InputError(None, "--free", f"the projection of the cone of {','.join(names)} "
                         f"onto {','.join(keep)} failed ({err})",
                         "free more coefficients, or --free all") from err
    if not len(pc.normals):
        what = "line" if len(keep) == 1 else "plane"
        whole = not len(pc.inner_normals())
        raise InputError(None, "--free", (
            f"positivity leaves {','.join(keep)} unconstrained when {len(free)} "
            f"coefficients are free: the projection is the whole {what} (proven points "
            f"in every direction)") if whole else (
            f"the projection onto {','.join(keep)} has no verified outer facet (its "
            f"boundary shots failed)"), "fix some of them to zero (a shorter --free "
            "list), or build the cone itself without --free")
    fixed = [c for c in problem.coefficients if c not in names]
    conv = dict(convention)
    if fixed:
        conv["fixed_to_zero"] = fixed
    return projection_region(theory, pc, conv, notes=notes, family=family)


def problem_from_operators(coefficients: tuple[str, ...], modes: AnyModes,
                           operators: Mapping[str, Density], info: dict[str, Any],
                           ) -> ConeProblem:
    """The ConeProblem with each M_a computed from its operator's density."""
    tensors = np.stack([forward_tensor(operators[c], modes) for c in coefficients])
    return ConeProblem(coefficients, modes.labels, tensors,
                       {**info, "modes": modes.to_dict()})


class ConeTheory(Theory):
    """A dimension-8 theory on the positivity-cone engine (subclasses set the attributes)."""

    convention_specs: dict[str, ConventionSpec] = {}
    setting_names: tuple[str, ...] = ("families", "family", "shell_target", "seed", "free",
                                      "coordinates",
                                      "convention")
    cautions: tuple[str, ...] = CONE_CAUTIONS
    kinematic_inputs: dict[str, tuple[str, float | None]] = {}
    families = CONE_FAMILIES
    #: a cone is unchanged by a common rescaling, so a window about the apex shows it all
    coordinate_unit = "common unit, e.g. TeV$^{-4}$"
    #: the operators' modes and densities, coefficient name -> density
    modes: AnyModes
    operators: Mapping[str, Density] = {}
    basis: str = ""
    #: other bases a fit may use: name -> (parameter names, J) with coordinates = J @ params
    alt_bases: dict[str, tuple[tuple[str, ...], np.ndarray]] = {}
    reduction_factory: Callable[[], StateReduction] | None = None

    def problem(self) -> ConeProblem:
        return problem_from_operators(self.coordinates, self.modes, self.operators,
                                      {"basis": self.basis})

    def describe(self) -> dict[str, Any]:
        out = super().describe()
        out.update({"modes": list(self.modes.labels), "basis": self.basis,
                    "other_bases": {k: list(v[0]) for k, v in self.alt_bases.items()},
                    "cautions": list(CONE_CAUTIONS)})
        return out

    def reduction(self) -> StateReduction | None:
        factory = type(self).reduction_factory
        return None if factory is None else factory()

    def build_region(self, settings: dict[str, Any], executor: Executor = serial) -> Region:
        from eftsieve.bounds.cone_build import ConeSettings, build_cone
        from eftsieve.bounds.cone_region import cone_region

        fams = list(settings.get("families", [settings.get("family", "extremal")]))
        if len(fams) != 1 or fams[0] not in CONE_FAMILIES:
            raise InputError(None, "--family", f"theory '{self.name}' takes one family, got "
                             f"{fams}", "use --family extremal or --family elastic")
        self.check_settings(settings)
        conv = {"name": "none", "units": "all coefficients in one common unit (e.g. TeV^-4)",
                "basis": self.basis}
        problem = self.problem()
        if settings.get("free") or settings.get("coordinates"):
            keep = parse_names(settings.get("coordinates"), problem.coefficients,
                               "--coordinates")
            free = parse_names(settings.get("free"), problem.coefficients, "--free", keep)
            if not free or not keep:               # one of the two was not given
                raise InputError(None, "--free" if keep else "--coordinates",
                                 f"{self.name} takes --coordinates only with --free (its "
                                 "region is always on all its coefficients)", "give both, "
                                 "e.g. --coordinates X --free all, or neither")
            return build_projection(self.name, problem, keep, free, fams[0], conv,
                                    CONE_CAUTIONS)
        st = ConeSettings(family=fams[0], shell_target=float(settings.get("shell_target", 1e-3)),
                          seed=int(settings.get("seed", 0)))
        red = self.reduction() if fams[0] == "elastic" else None
        build = build_cone(problem, st, reduction=red)
        return cone_region(self.name, build, conv, notes=CONE_CAUTIONS)

    def region_settings_for_fit(self, fit: Fit) -> dict[str, Any]:
        return {"families": ["extremal"]}

    def marginal_band(self, region: Region) -> float:
        """0: cones have no natural scale; the shell between the inner and outer cones is
        settled by exact solves (eftsieve.bounds.cone_region.shell_membership)."""
        return 0.0

    def coordinate_map(self, fit: Fit, region: Region) -> CoordinateMap:
        names = list(fit.names)
        if all(c in names for c in region.coordinates):
            jac = np.zeros((len(region.coordinates), len(names)))
            for k, c in enumerate(region.coordinates):
                jac[k, names.index(c)] = 1.0
            return CoordinateMap(jac, np.zeros(len(region.coordinates)),
                                 tuple(f"{c} = {c}" for c in region.coordinates))
        for basis, (params, j) in self.alt_bases.items():
            if all(p in names for p in params):
                jac = np.zeros((len(region.coordinates), len(names)))
                for col, p in enumerate(params):
                    jac[:, names.index(p)] = j[:, col]
                desc = tuple(f"{c} from the {basis} basis" for c in region.coordinates)
                return CoordinateMap(jac, np.zeros(len(region.coordinates)), desc)
        raise InputError(fit.source, "parameters", f"the region needs "
                         f"{', '.join(region.coordinates)} (or another basis of "
                         f"'{self.name}')", "name the fit's parameters after the basis")
