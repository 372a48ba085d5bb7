"""Tree-level four-point amplitudes of massless bosons, evaluated from a Lagrangian density.

A theory writes each operator as a plain function of a field configuration (its
*density*), exactly as it stands in the Lagrangian, and this module turns it into the
four-point amplitude.  Nothing is typed in by hand:

* Each external leg is a plane wave.  For scalars it is the jet ``(phi, dphi)`` with
  ``phi_a = e_a`` and ``d_mu phi_a = -i p_mu e_a`` (all momenta incoming); for vectors it
  is ``(A, F)`` with ``A^mu_a = e_a eps^mu`` and ``F^{mu nu}_a = -i (p^mu eps^nu - p^nu
  eps^mu) e_a`` (the abelian part; commutator terms carry more fields and do not enter a
  four-point contact).  Outgoing legs take ``p -> -p`` and the conjugate polarisation; we
  use a real (linear) polarisation basis, where conjugation does nothing.
* For a density f homogeneous of degree 4 in the fields, the contact amplitude is the sum
  over the 4! assignments of legs to field slots, i.e. the coefficient of t1 t2 t3 t4 in
  f(sum_a t_a X_a).  The polarisation identity gives it exactly from 15 evaluations,
  ``A = sum_{S subset {1..4}} (-1)^(4 - |S|) f(sum_{a in S} X_a)`` (common practice).
* The forward tensor ``M^{ijkl} = (1/2) d^2/ds^2 A(ij -> kl)(s, t = 0)`` is the s^2
  coefficient of the forward amplitude, read off by a discrete Cauchy integral on a
  circle in the complex s plane (exact for polynomials of degree < ``CAUCHY_POINTS``).

Several kinds of fields at once (vectors and scalars together, e.g. the gauge bosons and
the Higgs doublet) form a :class:`ModeGroups`: a tuple of named :class:`ModeSet` groups.
Its density receives one jet per group, ``f((A_W, F_W), (A_B, F_B), (phi, dphi))``; a leg
of group g has zero components in every other group.  The single-kind API is unchanged.

Heavy exchanges (rule-in models) are evaluated from the same legs:
:func:`exchange_forward_tensor` sums the s-, t- and u-channel trees of a heavy scalar or
vector coupled linearly to a current J that is quadratic in the light fields, from
L_eff = (1/2) J G(q) J with G = 1/(m^2 - q^2) (scalar) or
G^{mu nu} = -(g^{mu nu} - q^mu q^nu / m^2)/(m^2 - q^2) (Proca vector).

Metric: mostly minus, g = diag(1, -1, -1, -1).  Particle 1 moves along +z, particle 2
along -z; the linear polarisations x, y are transverse to both.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from itertools import combinations
from typing import Any

import numpy as np

METRIC = np.array([1.0, -1.0, -1.0, -1.0])
#: points of the discrete Cauchy integral that extracts s^n coefficients
CAUCHY_POINTS = 8
#: relative size of s^0, s^1 terms above which a "contact" density is rejected
CONTACT_PURITY_TOL = 1e-9

Density = Callable[..., Any]


def dot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Minkowski product of the last axes, a^mu g_{mu nu} b^nu."""
    return np.einsum("...m,m,...m->...", a, METRIC, b)


def lower(t: np.ndarray, axes: tuple[int, ...]) -> np.ndarray:
    """Lower the given Lorentz axes of a contravariant tensor with the metric."""
    out = t
    for ax in axes:
        shape = [1] * out.ndim
        shape[ax] = 4
        out = out * METRIC.reshape(shape)
    return out


@dataclass(frozen=True)
class ModeSet:
    """The low-energy modes of a theory.

    Attributes
    ----------
    kind
        ``scalar`` (one mode per real field) or ``vector`` (one mode per real field
        component and linear polarisation x or y).
    n_fields
        Real scalar fields, or real components of the vector field (adjoint index, ...).
    field_labels
        A name per real field (``phi1``, ``W1``, ...).
    """

    kind: str
    n_fields: int
    field_labels: tuple[str, ...]

    def __post_init__(self) -> None:
        if self.kind not in ("scalar", "vector"):
            raise ValueError(f"unknown mode kind '{self.kind}'")
        if len(self.field_labels) != self.n_fields:
            raise ValueError("one label per field is needed")

    @property
    def n(self) -> int:
        """Number of modes."""
        return self.n_fields * (2 if self.kind == "vector" else 1)

    @property
    def labels(self) -> tuple[str, ...]:
        if self.kind == "scalar":
            return self.field_labels
        return tuple(f"{f} {p}" for f in self.field_labels for p in ("x", "y"))

    def components(self) -> tuple[np.ndarray, np.ndarray]:
        """Field-component vector e_a (n, n_fields) and polarisation eps^mu (n, 4) of each mode.

        Vector modes are ordered (field, polarisation): mode 2a is field a along x, 2a+1
        along y.  Scalars have eps = 0 (unused).
        """
        if self.kind == "scalar":
            return np.eye(self.n_fields), np.zeros((self.n, 4))
        e = np.repeat(np.eye(self.n_fields), 2, axis=0)
        eps = np.tile(np.array([[0.0, 1.0, 0.0, 0.0], [0.0, 0.0, 1.0, 0.0]]), (self.n_fields, 1))
        return e, eps

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "fields": list(self.field_labels), "modes": list(self.labels),
                "polarisation_basis": "real linear (x, y), particle 1 along +z" if
                self.kind == "vector" else "real field components"}


@dataclass(frozen=True)
class ModeGroups:
    """Modes of several field groups (scalars and vectors together).

    Attributes
    ----------
    groups
        (name, ModeSet) pairs; the modes are those of the groups in this order, and a
        density receives one jet per group in this order.
    """

    groups: tuple[tuple[str, ModeSet], ...]

    def __post_init__(self) -> None:
        names = [g for g, _ in self.groups]
        if not names or len(set(names)) != len(names):
            raise ValueError("mode groups need distinct names")

    kind = "mixed"

    @property
    def n(self) -> int:
        """Number of modes."""
        return sum(m.n for _, m in self.groups)

    @property
    def labels(self) -> tuple[str, ...]:
        return tuple(lab for _, m in self.groups for lab in m.labels)

    def offsets(self) -> dict[str, tuple[int, int]]:
        """Group name -> (first mode, number of modes)."""
        out, o = {}, 0
        for g, m in self.groups:
            out[g] = (o, m.n)
            o += m.n
        return out

    def group_components(self) -> list[tuple[str, np.ndarray, np.ndarray]]:
        """Per group: kind, field components (n, n_fields_g) and polarisations (n, 4) of
        every mode (zero outside the group)."""
        out = []
        for (_, m), (o, k) in zip(self.groups, self.offsets().values(), strict=True):
            e_loc, eps_loc = m.components()
            e = np.zeros((self.n, m.n_fields))
            eps = np.zeros((self.n, 4))
            e[o:o + k], eps[o:o + k] = e_loc, eps_loc
            out.append((m.kind, e, eps))
        return out

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "groups": {g: m.to_dict() for g, m in self.groups},
                "modes": list(self.labels)}


#: either kind of mode set
AnyModes = ModeSet | ModeGroups
Jet = Any  # (value, derivative), or a tuple of those (one per group of a ModeGroups)


def _jet_sum(items: list[Jet]) -> Jet:
    """Sum of jets of the same structure (arrays, or nested tuples of arrays)."""
    first = items[0]
    if isinstance(first, tuple):
        return tuple(_jet_sum([it[k] for it in items]) for k in range(len(first)))
    return sum(items[1:], start=first)


def legs(kind: str, field: np.ndarray, mom: np.ndarray, eps: np.ndarray,
         ) -> tuple[np.ndarray, np.ndarray]:
    """Plane-wave jets of legs with incoming momenta (batched over leading axes).

    Parameters
    ----------
    kind
        ``scalar`` or ``vector``.
    field
        Field components e (..., n_fields), complex allowed.
    mom
        Incoming momenta p^mu (..., 4), complex allowed (for the Cauchy integral).
    eps
        Polarisations eps^mu (..., 4) (vectors only; already conjugated for outgoing legs).

    Returns
    -------
    (value, derivative)
        Scalars: phi (..., n_fields), d_mu phi as contravariant (..., n_fields, 4).
        Vectors: A^mu (..., n_fields, 4), F^{mu nu} (..., n_fields, 4, 4).
    """
    field = np.asarray(field, dtype=complex)
    mom = np.asarray(mom, dtype=complex)
    if kind == "scalar":
        return field, -1j * field[..., :, None] * mom[..., None, :]
    eps = np.asarray(eps, dtype=complex)
    a = field[..., :, None] * eps[..., None, :]
    wedge = mom[..., :, None] * eps[..., None, :] - eps[..., :, None] * mom[..., None, :]
    return a, -1j * field[..., :, None, None] * wedge[..., None, :, :]


def contact_amplitude(density: Density, jets: list[Jet], degree: int = 4) -> np.ndarray:
    """The contact amplitude of a density homogeneous of ``degree`` in the fields.

    Sum over all assignments of the legs to the field slots, by the polarisation
    identity ``sum_S (-1)^(d - |S|) f(sum_{a in S} X_a)`` (module docstring).  A jet is
    ``(value, derivative)`` (one field kind), or a tuple of those, one per group of a
    :class:`ModeGroups` (the density then takes one argument per group).
    """
    if len(jets) != degree:
        raise ValueError(f"{degree} legs are needed, got {len(jets)}")
    total: np.ndarray | complex = 0.0
    for size in range(1, degree + 1):
        sign = (-1) ** (degree - size)
        for subset in combinations(range(degree), size):
            total = total + sign * np.asarray(density(*_jet_sum([jets[a] for a in subset])))
    return np.asarray(total)


def forward_kinematics(s: complex) -> tuple[np.ndarray, np.ndarray]:
    """p1 = E(1, 0, 0, 1), p2 = E(1, 0, 0, -1) with s = 4 E^2 (complex s allowed)."""
    e = np.sqrt(complex(s)) / 2
    return (np.array([e, 0, 0, e], dtype=complex), np.array([e, 0, 0, -e], dtype=complex))


def _forward_jets(modes: AnyModes, s: complex) -> list[Jet]:
    """Jets of the four legs for every (i, j, k, l), broadcast on axes (i, j, k, l)."""
    p1, p2 = forward_kinematics(s)
    n = modes.n
    if isinstance(modes, ModeGroups):
        parts = modes.group_components()
    else:
        parts = [(modes.kind, *modes.components())]
    out: list[Jet] = []
    for pos, mom in enumerate((p1, p2, -p1, -p2)):  # legs 3, 4 are outgoing: p -> -p
        shape = [1, 1, 1, 1]
        shape[pos] = n
        jet = []
        for kind, e, eps in parts:
            v, d = legs(kind, e, np.broadcast_to(mom, (n, 4)), eps)
            jet.append((v.reshape(*shape, *v.shape[1:]), d.reshape(*shape, *d.shape[1:])))
        out.append(tuple(jet) if isinstance(modes, ModeGroups) else jet[0])
    return out


def s_coefficients(amplitude_of_s: Callable[[complex], np.ndarray], radius: float = 1.0,
                   points: int = CAUCHY_POINTS) -> np.ndarray:
    """Taylor coefficients a_0 .. a_(points - 1) in s of an analytic function, by a
    discrete Cauchy integral on |s| = radius (trapezoid rule, exact for polynomials of
    degree < points)."""
    nodes = radius * np.exp(2j * np.pi * (np.arange(points) + 0.5) / points)
    vals = np.stack([amplitude_of_s(z) for z in nodes])
    return np.stack([np.mean(vals * (nodes ** (-m)).reshape(-1, *([1] * (vals.ndim - 1))),
                             axis=0) for m in range(points)])


def forward_tensor(density: Density, modes: AnyModes) -> np.ndarray:
    """M^{ijkl} = (1/2) d^2/ds^2 A(ij -> kl) at s = 0, t = 0 of a contact density (real, n^4).

    Raises ValueError when the density is not a pure four-derivative contact (s^0 or s^1
    terms, or an imaginary part, above :data:`CONTACT_PURITY_TOL`).
    """
    def amp(s: complex) -> np.ndarray:
        return contact_amplitude(density, _forward_jets(modes, s))

    a = s_coefficients(amp)
    scale = max(float(np.abs(a[2]).max()), 1e-300)
    if np.abs(a[:2]).max() > CONTACT_PURITY_TOL * scale or np.abs(a[3:]).max() > (
            CONTACT_PURITY_TOL * scale):
        raise ValueError("the density is not a pure s^2 contact in the forward limit")
    if np.abs(a[2].imag).max() > CONTACT_PURITY_TOL * scale:
        raise ValueError("the forward tensor came out complex: check the density is real")
    return np.ascontiguousarray(a[2].real)


def bilinear(current: Density, ja: Jet, jb: Jet) -> np.ndarray:
    """B(a, b) = (J(a + b) - J(a) - J(b)) / 2 of a current quadratic in the fields."""
    both = _jet_sum([ja, jb])
    return (np.asarray(current(*both)) - np.asarray(current(*ja))
            - np.asarray(current(*jb))) / 2


def exchange_forward_tensor(current: Density, modes: AnyModes, mass: float, spin: int,
                            ) -> np.ndarray:
    """Forward tensor of the tree exchange of a heavy state coupled as ``X . J``.

    L = (kinetic) - m^2/2 X^2 + X J for spin 0 (J a scalar), or the Proca field with
    V_mu J^mu for spin 1 (J^mu contravariant, returned on the last axis).  Integrating X
    out gives L_eff = (1/2) J G(q) J; the amplitude is
    A = 4 sum over the three pairings {ab|cd} of B_ab G(q_ab) B_cd (module docstring).
    The s^2 coefficient is read off at |s| = m^2/4, inside the radius of convergence.
    """
    if spin not in (0, 1):
        raise ValueError("only spin 0 and spin 1 exchanges are provided")

    def amp(s: complex) -> np.ndarray:
        jets = _forward_jets(modes, s)
        p1, p2 = forward_kinematics(s)
        moms = (p1, p2, -p1, -p2)
        total: np.ndarray | complex = 0.0
        for (a, b), (c, d) in (((0, 1), (2, 3)), ((0, 2), (1, 3)), ((0, 3), (1, 2))):
            q = moms[a] + moms[b]
            q2 = dot(q, q)
            bab, bcd = bilinear(current, jets[a], jets[b]), bilinear(current, jets[c], jets[d])
            if spin == 0:
                total = total + 4 * bab * bcd / (mass**2 - q2)
            else:
                qb1 = np.einsum("...m,m,m->...", bab, METRIC, q)
                qb2 = np.einsum("...m,m,m->...", bcd, METRIC, q)
                gg = dot(bab, bcd) - qb1 * qb2 / mass**2
                total = total - 4 * gg / (mass**2 - q2)
        return np.asarray(total)

    a = s_coefficients(amp, radius=mass**2 / 4, points=32)
    return np.ascontiguousarray(a[2].real)


def random_kinematics(rng: np.random.Generator, energy: float = 1.0,
                      ) -> tuple[np.ndarray, np.ndarray]:
    """Random massless 2 -> 2 kinematics in the centre-of-mass frame, boosted and rotated.

    Returns all-incoming momenta (4, 4) and for each leg its two real transverse
    polarisation vectors (4, 2, 4) (orthonormal, eps.p = 0, eps^0 = 0 in the frame where
    they are built, then boosted with the momenta; gauge-equivalent to transverse ones).
    """
    n1 = rng.normal(size=3)
    n1 /= np.linalg.norm(n1)
    n3 = rng.normal(size=3)
    n3 /= np.linalg.norm(n3)
    dirs = [n1, -n1, n3, -n3]
    moms, pols = [], []
    for k, nv in enumerate(dirs):
        p = energy * np.concatenate([[1.0], nv])
        a = rng.normal(size=3)
        a -= (a @ nv) * nv
        a /= np.linalg.norm(a)
        b = np.cross(nv, a)
        sign = 1.0 if k < 2 else -1.0  # outgoing legs enter with -p
        moms.append(sign * p)
        pols.append([np.concatenate([[0.0], a]), np.concatenate([[0.0], b])])
    lam = _random_boost(rng)
    return np.array(moms) @ lam.T, np.array(pols) @ lam.T


def _random_boost(rng: np.random.Generator) -> np.ndarray:
    """A random proper Lorentz boost (rapidity below 1) as a 4x4 matrix."""
    n = rng.normal(size=3)
    n /= np.linalg.norm(n)
    eta = rng.uniform(0, 1)
    ch, sh = np.cosh(eta), np.sinh(eta)
    lam = np.eye(4)
    lam[0, 0] = ch
    lam[0, 1:] = lam[1:, 0] = sh * n
    lam[1:, 1:] += (ch - 1) * np.outer(n, n)
    return lam
