"""Threshold parameters a_l^I, b_l^I of pi-pi scattering from the one-loop amplitude.

Normalisation (the one of Gasser & Leutwyler, Ann. Phys. 158 (1984) 142; also used in
Bijnens et al., arXiv:hep-ph/9707291), everything in units of the pion mass M = M_pi:

    t_l^I(s) = (1 / (64 pi)) int_{-1}^{1} dz P_l(z) T^I(s, t(z)),
    s = 4 (M^2 + q^2),   t(z) = -2 q^2 (1 - z),
    Re t_l^I(s) = q^{2l} (a_l^I + b_l^I q^2 + O(q^4)),

so a_l is given in M_pi^{-2l} and b_l in M_pi^{-2l-2} (a_0 is dimensionless).  With
this normalisation Weinberg's leading order (Phys. Rev. Lett. 17 (1966) 616) reads
a_0^0 = 7 M^2 / (32 pi F^2), a_0^2 = -M^2 / (16 pi F^2).  T^I is the one-loop SU(2)
ChPT amplitude of :func:`eftsieve.theories.pipi.full_amplitude` (Gasser & Leutwyler
1984, Eq. (17.5)).

Observable names are ``f"{kind}{I}_{l}"``: the kind (``a`` or ``b``), then the isospin
I, then the angular momentum l; ``"a0_2"`` is a_2^0 (I = 0, D wave), ``"b1_1"`` is
b_1^1.  Bose symmetry allows (I, l) = (0, 0), (0, 2), (1, 1), (2, 0), (2, 2) only.

Method.  For fixed q^2 the projection is done by Gauss-Legendre quadrature in z (the
integrand is analytic in z: its nearest singularity, Jbar(t) at t = 4 M^2, lies at
z = 1 + 2/q^2).  The function g(q^2) = Re t_l / q^{2l} is analytic in q^2 on the disc
|q^2| < M^2: the t- and u-channel loops are analytic for |t|, |u| < 4 M^2, and the
s-channel loop enters as Re Jbar(s) = (2 - 2 sigma artanh sigma) / (16 pi^2),
sigma^2 = q^2 / (M^2 + q^2), which is even in sigma; its sqrt(q^2) piece i pi sigma is
purely imaginary and dropped by taking the real part.  The values g(q_k^2) at
``N_Q`` Chebyshev points on (0, Q2_MAX] are interpolated by a polynomial, and a_l, b_l
are its value and slope at q^2 = 0 (fixed linear weights).  The extrapolation error
falls like rho^{-N_Q}, rho = 9 + sqrt(80) ~ 17.9 for Q2_MAX = 0.25 M^2; with the
defaults it is far below the rounding floor.  Verified accuracy (see the tests and
the module report): a_2^0 and a_2^2 agree with the closed forms of Gasser & Leutwyler
(1984) to <= 1e-10 relative, a_0 and a_1 with the threshold values / t-derivatives of
the amplitude to ~1e-11, and every a, b is stable to < 1e-9 relative (b_2: < 1e-8)
under changes of the grid.

Speed.  The amplitude is exactly tree / F^2 + (P0 + sum_i lbar_i P_i) / F^4 (F in units
of M), so each parameter is c_tree / F^2 + (c_0 + c . lbar) / F^4 with six constants
that do not depend on lbar, F or M; they are computed once per name and cached, and
:func:`threshold_parameters` is a single matrix product.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from eftsieve.theories.pipi import full_amplitude

#: The allowed (isospin, l) pairs (Bose symmetry: even l for I = 0, 2, odd l for I = 1).
ALLOWED_WAVES: tuple[tuple[int, int], ...] = ((0, 0), (0, 2), (1, 1), (2, 0), (2, 2))

#: Every observable name, ``f"{kind}{I}_{l}"`` (kind ``a`` or ``b``, isospin I, wave l).
OBSERVABLES: tuple[str, ...] = tuple(
    f"{kind}{iso}_{ell}" for iso, ell in ALLOWED_WAVES for kind in ("a", "b"))

#: Upper end of the q^2 interval (units M^2) and number of Chebyshev points on it.
Q2_MAX = 0.25
N_Q = 12
#: Gauss-Legendre points in z = cos(theta).
N_Z = 24

_NAME = re.compile(r"^([ab])(\d)_(\d)$")


def parse_name(name: str) -> tuple[str, int, int]:
    """Split an observable name into (kind, isospin, l).

    Parameters
    ----------
    name
        ``f"{kind}{I}_{l}"``, e.g. ``"a0_0"`` (a_0^0) or ``"b2_2"`` (b_2^2).

    Returns
    -------
    tuple
        ``(kind, isospin, l)`` with kind ``"a"`` or ``"b"``.

    Raises
    ------
    ValueError
        If the name is malformed or (I, l) is forbidden by Bose symmetry or not
        provided (l > 2).
    """
    match = _NAME.match(name) if isinstance(name, str) else None
    if match is None:
        raise ValueError(f"observable name {name!r} is not of the form '<a|b><I>_<l>', "
                         f"e.g. 'a0_0'; known names: {', '.join(OBSERVABLES)}")
    kind, iso, ell = match.group(1), int(match.group(2)), int(match.group(3))
    if (iso, ell) not in ALLOWED_WAVES:
        why = ("forbidden by Bose symmetry (I = 0, 2 need even l, I = 1 needs odd l)"
               if iso <= 2 and (iso + ell) % 2 == 1 else "not provided (I <= 2, l <= 2)")
        raise ValueError(f"observable {name!r} (I = {iso}, l = {ell}) is {why}; "
                         f"known names: {', '.join(OBSERVABLES)}")
    return kind, iso, ell


def units(name: str) -> str:
    """The unit of an observable: M_pi^{-2l} for a_l, M_pi^{-2l-2} for b_l."""
    kind, _, ell = parse_name(name)
    power = 2 * ell + (2 if kind == "b" else 0)
    return "1" if power == 0 else f"M_pi^-{power}"


@dataclass(frozen=True)
class ThresholdParameter:
    """One threshold parameter at one parameter point.

    Attributes
    ----------
    name
        ``f"{kind}{I}_{l}"``.
    isospin, l
        Isospin I and angular momentum l of the partial wave.
    kind
        ``"a"`` (scattering length / volume) or ``"b"`` (slope).
    value
        The value in units of M_pi (see ``units``).
    units
        ``"1"`` or ``"M_pi^-n"``.
    """

    name: str
    isospin: int
    l: int  # noqa: E741 - the conventional symbol of the partial wave
    kind: str
    value: float
    units: str

    def to_dict(self) -> dict[str, object]:
        """Plain-type dictionary (JSON-ready)."""
        return {"name": self.name, "isospin": self.isospin, "l": self.l,
                "kind": self.kind, "value": float(self.value), "units": self.units}


@lru_cache(maxsize=None)
def _grid(q2_max: float = Q2_MAX, n_q: int = N_Q,
          n_z: int = N_Z) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Chebyshev q^2 points, Gauss-Legendre (z, w), and the (2, n_q) value/slope weights.

    The weights map g(q_k^2) to (p(0), p'(0)) of the interpolating polynomial p.
    """
    k = np.arange(n_q)
    xi = np.cos(np.pi * (2 * k + 1) / (2 * n_q))          # Chebyshev points in (-1, 1)
    q2 = 0.5 * q2_max * (xi + 1.0)
    vander = np.polynomial.chebyshev.chebvander(xi, n_q - 1)   # (n_q, n_q)
    j = np.arange(n_q)
    at_zero = (-1.0) ** j                                   # T_j(-1)
    slope = (-1.0) ** (j + 1) * j**2 * (2.0 / q2_max)       # d T_j / d q^2 at xi = -1
    weights = np.linalg.solve(vander.T, np.stack([at_zero, slope], axis=1)).T
    z, w = np.polynomial.legendre.leggauss(n_z)
    return q2, z, w, weights


def _legendre(ell: int, z: np.ndarray) -> np.ndarray:
    if ell == 0:
        return np.ones_like(z)
    if ell == 1:
        return z
    if ell == 2:
        return 0.5 * (3 * z**2 - 1)
    raise ValueError(f"l = {ell} is not provided")


def _reduced_wave(values: np.ndarray, ell: int, q2: np.ndarray, z: np.ndarray,
                  w: np.ndarray) -> np.ndarray:
    """g(q^2) = Re t_l / q^{2l} from amplitude values on the (q^2, z) grid (..., n_q, n_z)."""
    proj = (np.real(values) * (w * _legendre(ell, z))).sum(axis=-1) / (64 * math.pi)
    return proj / q2**ell


def _mandelstam(q2: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    s = 4.0 * (1.0 + q2)[:, None] + 0.0 * z[None, :]
    t = -2.0 * q2[:, None] * (1.0 - z[None, :])
    return s, t


def _projected(iso: int, ell: int, lbar: tuple[float, float, float, float],
               f: float, grid: tuple[np.ndarray, ...]) -> np.ndarray:
    """(a, b) of the full amplitude at one lbar and F/M, by projection and extrapolation."""
    q2, z, w, weights = grid
    s, t = _mandelstam(q2, z)
    g = _reduced_wave(full_amplitude(s, t, lbar, f, isospin=iso), ell, q2, z, w)
    return weights @ g


@lru_cache(maxsize=None)
def _affine(iso: int, ell: int) -> np.ndarray:
    """Coefficients (2, 6): rows (a, b); columns (c_tree, c_0, c_1..c_4).

    x = c_tree / F^2 + (c_0 + sum_i c_i lbar_i) / F^4 with F = F_pi / M_pi.  The tree and
    loop parts are separated from the exact F dependence of the amplitude,
    T(F) = T_tree / F^2 + T_loop / F^4, evaluated at F^2 = 1 and F^2 = 2.
    """
    grid = _grid()
    points = [(0.0, 0.0, 0.0, 0.0)] + [tuple(float(i == k) for i in range(4))
                                       for k in range(4)]
    cols = []
    for lb in points:
        one = _projected(iso, ell, lb, 1.0, grid)
        two = _projected(iso, ell, lb, math.sqrt(2.0), grid)
        loop = 2.0 * (one - 2.0 * two)
        cols.append((one - loop, loop))
    tree = cols[0][0]
    loop0 = cols[0][1]
    slopes = [c[1] - loop0 for c in cols[1:]]
    return np.column_stack([tree, loop0, *slopes])


def _fpi_over_m(pion_mass_mev: float, fpi_mev: float) -> float:
    for label, v in (("pion_mass_mev", pion_mass_mev), ("fpi_mev", fpi_mev)):
        if not (np.isfinite(v) and v > 0):
            raise ValueError(f"{label} must be a positive finite number, not {v!r}")
    return float(fpi_mev) / float(pion_mass_mev)


def _as_lbar(lbar: object) -> tuple[float, float, float, float]:
    arr = np.asarray(lbar, dtype=float)
    if arr.shape != (4,) or not np.all(np.isfinite(arr)):
        raise ValueError(f"lbar must be four finite numbers (lbar1..lbar4), not {lbar!r}")
    return (float(arr[0]), float(arr[1]), float(arr[2]), float(arr[3]))


def threshold_parameter(name: str, lbar, pion_mass_mev: float, fpi_mev: float) -> float:
    """One threshold parameter by direct projection of the one-loop amplitude.

    Parameters
    ----------
    name
        ``f"{kind}{I}_{l}"``, one of :data:`OBSERVABLES`.
    lbar
        (lbar1, lbar2, lbar3, lbar4) at the pion mass ``pion_mass_mev``.
    pion_mass_mev, fpi_mev
        M_pi and F_pi in MeV (F_pi in the ~92 MeV normalisation).

    Returns
    -------
    float
        a_l^I in M_pi^{-2l} or b_l^I in M_pi^{-2l-2}.

    Notes
    -----
    This evaluates the amplitude at the given point (no cached decomposition); use
    :func:`threshold_parameters` for many points.
    """
    kind, iso, ell = parse_name(name)
    f = _fpi_over_m(pion_mass_mev, fpi_mev)
    ab = _projected(iso, ell, _as_lbar(lbar), f, _grid())
    return float(ab[0] if kind == "a" else ab[1])


def affine_coefficients(names, pion_mass_mev: float, fpi_mev: float) -> tuple[np.ndarray,
                                                                             np.ndarray]:
    """The affine map lbar -> threshold parameters at fixed M_pi, F_pi.

    Returns
    -------
    offset, matrix
        Arrays of shape (k,) and (k, 4): values = offset + matrix @ lbar.
    """
    f2 = _fpi_over_m(pion_mass_mev, fpi_mev) ** 2
    rows = []
    for name in names:
        kind, iso, ell = parse_name(name)
        rows.append(_affine(iso, ell)[0 if kind == "a" else 1])
    coef = np.array(rows, dtype=float).reshape(len(rows), 6)
    offset = coef[:, 0] / f2 + coef[:, 1] / f2**2
    return offset, coef[:, 2:] / f2**2


def threshold_parameters(names, lbar: np.ndarray, pion_mass_mev: float,
                         fpi_mev: float) -> np.ndarray:
    """Many threshold parameters at many lbar points (vectorised, cached).

    Parameters
    ----------
    names
        Sequence of observable names (see :data:`OBSERVABLES`).
    lbar
        Array (n, 4) of (lbar1..lbar4) at ``pion_mass_mev``; a single point (4,) gives a
        result of shape (len(names),).
    pion_mass_mev, fpi_mev
        M_pi and F_pi in MeV.

    Returns
    -------
    numpy.ndarray
        Shape (n, len(names)) (or (len(names),) for one point), units as in
        :func:`units`.
    """
    names = tuple(names)
    arr = np.asarray(lbar, dtype=float)
    if arr.ndim not in (1, 2) or arr.shape[-1] != 4:
        raise ValueError(f"lbar must have shape (n, 4) or (4,), not {arr.shape}")
    offset, matrix = affine_coefficients(names, pion_mass_mev, fpi_mev)
    return arr @ matrix.T + offset


def evaluate(name: str, lbar, pion_mass_mev: float, fpi_mev: float) -> ThresholdParameter:
    """One threshold parameter as a :class:`ThresholdParameter` record."""
    kind, iso, ell = parse_name(name)
    value = threshold_parameter(name, lbar, pion_mass_mev, fpi_mev)
    return ThresholdParameter(name=name, isospin=iso, l=ell, kind=kind, value=value,
                              units=units(name))
