"""The interface every theory implements, and the map from a fit to region coordinates.

A theory knows its physics: its parameters and conventions, how to build its region,
and how to move a fit's parameters into the region's coordinates.  It never reaches
into the statistics of ``check`` or ``impose``.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.executors import Executor, serial
from eftsieve.fit.conventions import ConventionSpec
from eftsieve.tolerances import MARGINAL_BAND

if TYPE_CHECKING:
    from eftsieve.fit.model import Fit
    from eftsieve.region.model import Region


@dataclass(frozen=True)
class CoordinateMap:
    """Map fit parameters (n, p) to region coordinates (n, k).

    For affine maps, ``jacobian`` (k, p) and ``shift`` (k,) hold y = J x + c exactly, so
    that a region's facets can be pulled back to the fit's own coordinates.

    Attributes
    ----------
    jacobian
        J, shape (k, p), or None for a nonlinear map.
    shift
        c, shape (k,), or None.
    description
        One line per coordinate saying where it came from.
    """

    jacobian: np.ndarray | None
    shift: np.ndarray | None
    description: tuple[str, ...] = ()
    nonlinear: Any = None

    @property
    def is_affine(self) -> bool:
        return self.jacobian is not None

    def __call__(self, x: np.ndarray) -> np.ndarray:
        if self.jacobian is not None and self.shift is not None:
            return np.asarray(x, dtype=float) @ self.jacobian.T + self.shift
        return np.asarray(self.nonlinear(np.asarray(x, dtype=float)))

    def pull_back(self, a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Facets A y >= b in region coordinates as A' x >= b' in fit coordinates."""
        if self.jacobian is None or self.shift is None:
            raise ValueError("facets can be pulled back only through an affine map")
        return a @ self.jacobian, b - a @ self.shift

    def to_dict(self) -> dict[str, Any]:
        return {"affine": self.is_affine, "description": list(self.description),
                "jacobian": None if self.jacobian is None else self.jacobian.tolist(),
                "shift": None if self.shift is None else self.shift.tolist()}


class Theory(ABC):
    """A named amplitude model with its parameter space."""

    name: str = ""
    summary: str = ""
    #: every parameter name that a convention applies to
    parameter_names: tuple[str, ...] = ()
    #: the region's coordinates
    coordinates: tuple[str, ...] = ()
    #: the conventions its parameters may be stated in, by name
    convention_specs: dict[str, ConventionSpec] = {}
    #: kinematic inputs: key -> (meaning, default or None)
    kinematic_inputs: dict[str, tuple[str, float | None]] = {}
    families: tuple[str, ...] = ()
    #: the settings :meth:`build_region` accepts (unknown ones are an error)
    setting_names: tuple[str, ...] = ()
    #: what every report on this theory's regions must say besides the shared assumptions
    cautions: tuple[str, ...] = ()
    #: matchings onto other theories' regions: target theory -> "module:function", a
    #: function (fit, region) -> CoordinateMap (imported only when used)
    matchings: dict[str, str] = {}
    #: whether a region build can use an executor for independent solves
    parallel_build: bool = False
    #: a window of typical values per region coordinate (by name, in that coordinate's
    #: convention), shown by the region plot when no fit is given; each theory cites it
    typical_window: dict[str, tuple[float, float]] = {}
    #: the unit of the region coordinates on plot axes ("1": dimensionless; None: unstated)
    coordinate_unit: str | None = None

    @property
    def conventions(self) -> tuple[str, ...]:
        """The names of the conventions its parameters may be stated in."""
        return tuple(self.convention_specs)

    def check_settings(self, settings: dict[str, Any]) -> None:
        """Refuse settings this theory does not know, naming the ones it does."""
        unknown = sorted(set(settings) - set(self.setting_names))
        if unknown:
            from eftsieve.errors import InputError

            raise InputError(None, unknown[0], f"{self.name} has no region setting "
                             f"'{unknown[0]}'", f"known settings: {', '.join(self.setting_names)}")

    def matching_map(self, fit: Fit, region: Region) -> CoordinateMap:
        """The map of a fit of this theory onto a region of another theory (a matching)."""
        from importlib import import_module

        from eftsieve.errors import InputError

        target = self.matchings.get(region.theory)
        if target is None:
            raise InputError(None, "theory", f"region is for '{region.theory}' but the fit "
                             f"is '{self.name}', and no matching between them is known",
                             "build the region for the fit's theory")
        module, func = target.split(":")
        fn: Callable[[Fit, Region], CoordinateMap] = getattr(import_module(module), func)
        return fn(fit, region)
    #: the papers behind the theory (``eftsieve cite``): dicts with key, authors (a tuple),
    #: title, year and a journal (with volume, pages) and/or an arXiv eprint id
    references: tuple[dict[str, Any], ...] = ()

    def describe(self) -> dict[str, Any]:
        """What ``eftsieve theories`` prints."""
        return {"name": self.name, "summary": self.summary,
                "matchings": sorted(self.matchings),
                "parameters": list(self.parameter_names),
                "region_coordinates": list(self.coordinates),
                "conventions": list(self.conventions),
                "kinematic_inputs": {k: {"meaning": m, "default": d}
                                     for k, (m, d) in self.kinematic_inputs.items()},
                "bound_families": list(self.families)}

    def region_kinematics(self, region: Region) -> dict[str, Any]:
        """The kinematics a region was built at, as every verb prints them.

        The convention's inputs, the region settings in MeV, the convention name, the
        bound families and a truncation order where there is one.  Theories drop inputs
        their convention does not use.
        """
        out: dict[str, Any] = {k: v for k, v in region.convention.items() if k != "name"}
        for k, v in region.settings.items():
            single = k.replace("_masses_", "_mass_")
            if k.endswith("_mev") and k not in out and not (
                    single in out and isinstance(v, (list, tuple)) and list(v) == [out[single]]):
                out[k] = v
        if "order" in region.settings:
            out["order"] = region.settings["order"]
        if region.convention.get("name"):
            out["convention"] = region.convention["name"]
        out["families"] = list(region.settings.get("families")
                               or sorted({f.family for f in region.facets}))
        return out

    def infer_convention(self, names: tuple[str, ...]) -> str | None:
        """The convention that parameter (column) names imply unambiguously, or None.

        Used for bare samples files without ``--theory``/``--convention``; a theory that
        claims no names returns None (the default).
        """
        return None

    def convention_default(self, convention: str, key: str) -> float | None:
        """A default for a kinematic input ``key`` that ``convention`` needs, or None
        (no default: the user must give it).  Callers print a notice when they use it."""
        return None

    def with_convention_defaults(self, convention: str, kin: dict[str, float],
                                 label: str = "") -> dict[str, float]:
        """``kin`` plus this theory's defaults for the inputs ``convention`` needs and
        ``kin`` lacks, each with a printed notice (``label`` prefixes the key, e.g.
        ``kinematics.``); the inputs are not modified."""
        import warnings

        from eftsieve.errors import InputNotice

        out = dict(kin)
        spec = self.convention_specs.get(convention)
        for key, _ in (spec.needs if spec is not None else ()):
            default = self.convention_default(convention, key)
            if key not in out and default is not None:
                out[key] = default
                warnings.warn(InputNotice(f"convention '{convention}' without {label}{key}: "
                                          f"taken as {default:g} ({self.name} default)"),
                              stacklevel=3)
        return out

    def region_default_notices(self, fit: Fit) -> tuple[str, ...]:
        """Sentences naming the kinematic defaults a region built for ``fit`` takes
        because the fit does not state them (none by default)."""
        return ()

    def kinematics_mismatch(self, fit: Fit, region: Region) -> tuple[str, ...]:
        """Where a fit's stated kinematics disagree with the kinematics a region was
        built at: one sentence per input, naming both values.

        Compares each ``fit.kinematics`` entry with the region's convention and settings
        (a list of masses must contain the fit's); inputs the region does not record are
        not compared (a matching onto another theory's region drops them).
        """
        out = []
        for key, val in fit.kinematics.items():
            plural = key.replace("_mass_", "_masses_")
            have = region.convention.get(key, region.settings.get(key))
            if have is None and plural != key:
                have = region.settings.get(plural)
            if have is None:
                continue
            values = [float(v) for v in (have if isinstance(have, (list, tuple)) else [have])]
            if not any(abs(v - float(val)) <= 1e-9 * max(1.0, abs(v)) for v in values):
                shown = ", ".join(f"{v:g}" for v in values)
                out.append(f"{key}: the fit says {float(val):g}, the region was built at "
                           f"{shown}")
        return tuple(out)

    def validate_fit(self, fit: Fit) -> None:  # noqa: B027 - optional hook, default no-op
        """Theory-specific semantic checks of a fit (raise InputError); none by default."""

    @abstractmethod
    def build_region(self, settings: dict[str, Any], executor: Executor = serial) -> Region:
        """Build the region for the given settings; ``executor`` maps independent solves
        (it is the caller's choice and never enters the region)."""

    @abstractmethod
    def region_settings_for_fit(self, fit: Fit) -> dict[str, Any]:
        """Default region settings matching a fit's kinematics."""

    def region_settings_for_coefficients(self, names: Sequence[str]) -> dict[str, Any]:
        """Region settings whose coordinates cover these coefficients (the rows of an
        interval card); empty: the theory's default region."""
        return {}

    @abstractmethod
    def coordinate_map(self, fit: Fit, region: Region) -> CoordinateMap:
        """The map from the fit's parameters to the region's coordinates."""

    def observable_likelihood(self, path: Any, fit: Fit
                              ) -> tuple[Callable[[np.ndarray], np.ndarray], str]:
        """The refit log-likelihood of an observables file, and its label; theories
        without a library of observables raise InputError."""
        from eftsieve.errors import InputError

        raise InputError(path, None, f"theory '{self.name}' has no library of observables",
                         "give --likelihood MODULE:FUNCTION instead")

    def marginal_band(self, region: Region) -> float:
        """The default marginal band of ``check`` in the region's coordinates.

        :data:`eftsieve.tolerances.MARGINAL_BAND` for coordinates of order one; theories
        whose coordinates are small numbers (L_i^r, l_i^r ~ 1e-3) scale it down.
        """
        return MARGINAL_BAND

    def default_breakdown_mev(self, region: Region) -> float:
        """The breakdown scale of the power-counting model when none is given."""
        from eftsieve.errors import InputError

        raise InputError(None, "--breakdown", f"theory '{self.name}' has no default "
                         "breakdown scale", "give --breakdown MEV")

    def power_counting(self, region: Region,
                       breakdown_mev: float | None) -> tuple[np.ndarray, np.ndarray]:
        """Expansion parameter Q_j and the known expansion coefficients for each facet.

        Theories without a power-counting model raise InputError.
        """
        from eftsieve.errors import InputError

        raise InputError(None, "--theory-uncertainty", f"theory '{self.name}' has no "
                         "power-counting model", "use --theory-uncertainty fixed")
