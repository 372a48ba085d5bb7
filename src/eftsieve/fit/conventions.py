"""Parameter conventions: how a parameter is defined, and exact affine maps between them.

A :class:`Convention` is a name (declared by a theory, see
:attr:`eftsieve.theories.base.Theory.convention_specs`) with the kinematic values it
needs (a mass, a scale, ...).  The convention ``none`` marks parameters that no theory
constrains (nuisance parameters, spectators); they are carried through untouched.
Theories declare their conventions as :class:`ConventionSpec` entries; this module
knows none of them by name.

:class:`AffineMap` holds an exact map y = J x + c between two coordinate systems, for
samples (:meth:`AffineMap.apply_points`) and covariances (:meth:`AffineMap.apply_cov`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

#: the convention of parameters that no theory constrains
NONE = "none"


@dataclass(frozen=True)
class ConventionSpec:
    """A convention that a theory offers.

    Attributes
    ----------
    name
        The convention's name in fit cards and on the command line.
    needs
        (kinematic key, meaning) pairs the convention needs, e.g.
        ``(("mu_mev", "its renormalisation scale"),)``.
    text
        A format string describing a parameter in this convention, filled with the
        kinematic values (``"l^r(mu) at mu = {mu_mev:g} MeV"``).
    """

    name: str
    needs: tuple[tuple[str, str], ...] = ()
    text: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "needs": [k for k, _ in self.needs], "text": self.text}


@dataclass(frozen=True, init=False)
class Convention:
    """How one parameter is defined: a convention name and its kinematic values.

    Attributes
    ----------
    name
        The convention's name (``none`` for untransformed nuisance parameters).
    values
        The kinematic values it is defined at, as sorted (key, value) pairs in MeV.
    text
        A description of the convention with its values (from its :class:`ConventionSpec`).
    """

    name: str
    values: tuple[tuple[str, float], ...]
    text: str

    def __init__(self, name: str, text: str = "", **values: float | None) -> None:
        object.__setattr__(self, "name", name)
        object.__setattr__(self, "values", tuple(sorted(
            (k, float(v)) for k, v in values.items() if v is not None)))
        object.__setattr__(self, "text", text)

    def get(self, key: str) -> float | None:
        """The kinematic value ``key`` (MeV), or None when the convention has none."""
        return dict(self.values).get(key)

    def __getattr__(self, key: str) -> float | None:
        # kinematic values read as attributes (conv.mu_mev); other names are errors
        if key.endswith("_mev"):
            return dict(object.__getattribute__(self, "values")).get(key)
        raise AttributeError(key)

    def __eq__(self, other: object) -> bool:
        return (isinstance(other, Convention) and self.name == other.name
                and self.values == other.values)

    def __hash__(self) -> int:
        return hash((self.name, self.values))

    def to_dict(self) -> dict[str, object]:
        return {"name": self.name, **dict(self.values)}

    def describe(self) -> str:
        if self.text:
            return self.text.format(**dict(self.values))
        return "untransformed" if self.name == NONE else self.name


def make_convention(spec: ConventionSpec, **values: float | None) -> Convention:
    """A convention of ``spec`` with its kinematic values."""
    return Convention(spec.name, spec.text, **values)


@dataclass(frozen=True)
class AffineMap:
    """The map y = J x + c between two coordinate systems.

    Attributes
    ----------
    jacobian
        J, shape (n_out, n_in).
    shift
        c, shape (n_out,).
    names_in, names_out
        Parameter names of the source and target coordinates.
    """

    jacobian: np.ndarray
    shift: np.ndarray
    names_in: tuple[str, ...]
    names_out: tuple[str, ...] = field(default=())

    def apply_points(self, x: np.ndarray) -> np.ndarray:
        """Map points of shape (n, n_in) (or a single point of shape (n_in,))."""
        x = np.asarray(x, dtype=float)
        return x @ self.jacobian.T + self.shift

    def apply_cov(self, cov: np.ndarray) -> np.ndarray:
        """Map a covariance: J C J^T (exact for an affine map)."""
        return self.jacobian @ np.asarray(cov, dtype=float) @ self.jacobian.T

    def inverse(self) -> AffineMap:
        jinv = np.linalg.inv(self.jacobian)
        return AffineMap(jinv, -jinv @ self.shift, self.names_out, self.names_in)

    def to_dict(self) -> dict[str, object]:
        return {
            "jacobian": self.jacobian.tolist(),
            "shift": self.shift.tolist(),
            "names_in": list(self.names_in),
            "names_out": list(self.names_out),
        }
