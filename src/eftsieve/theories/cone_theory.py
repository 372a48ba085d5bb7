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
    setting_names: tuple[str, ...] = ("families", "family", "shell_target", "seed",
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
        st = ConeSettings(family=fams[0], shell_target=float(settings.get("shell_target", 1e-3)),
                          seed=int(settings.get("seed", 0)))
        red = self.reduction() if fams[0] == "elastic" else None
        build = build_cone(self.problem(), st, reduction=red)
        conv = {"name": "none", "units": "all coefficients in one common unit (e.g. TeV^-4)",
                "basis": self.basis}
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
