"""Threshold parameters a_l^I, b_l^I of pi-pi scattering from the one-loop amplitude.

Normalisation (the one of Gasser & Leutwyler, Ann. Phys. 158 (1984) 142; also used in
Bijnens et al., arXiv:hep-ph/9707291), everything in units of the pion mass M = M_pi:

    t_l^I(s) = (1 / (64 pi)) int_{-1}^{1} dz P_l(z) T^I(s, t(z)),
    s = 4 (M^2 + q^2),   t(z) = -2 q^2 (1 - z),
    Re t_l^I(s) = q^{2l} (a_l^I + b_l^I q^2 + O(q^4)),

so a_l is given in M_pi^{-2l} and b_l in M_pi^{-2l-2} (a_0 is dimensionless).  With
this normalisation Weinberg's leading order (Phys. Rev. Lett. 17 (1966) 616) reads
a_0^0 = 7 M^2 / (32 pi F^2), a_0^2 = -M^2 / (16 pi F^2).  T^I is the one-loop SU(2)
ChPT amplitude of :func:`eftsieve.theories.chpt_su2.amplitude.full_amplitude` (Gasser & Leutwyler
1984, Eq. (17.5)).

Observable names are ``f"{kind}_I{I}_l{l}"``: the kind (``a`` or ``b``), the isospin I
and the angular momentum l, both labelled, so that no one reads the I = 0 D wave a_2^0
(``"a_I0_l2"``) as the I = 2 S-wave length a_0^2 (``"a_I2_l0"``); ``"b_I1_l1"`` is
b_1^1.  The old unlabelled spelling (``a0_2``) is refused with the new name.
Bose symmetry allows (I, l) = (0, 0), (0, 2), (1, 1), (2, 0), (2, 2) only.

Method.  For fixed q^2 the projection is done by Gauss-Legendre quadrature in z (the
integrand is analytic in z: its nearest singularity, Jbar(t) at t = 4 M^2, lies at
|z| = 1 + 2/|q^2|).  The function g(q^2) = Re t_l / q^{2l} is analytic in q^2 on the
disc |q^2| < M^2: the t- and u-channel loops are analytic for |t|, |u| < 4 M^2, and the
s-channel loop enters through Re Jbar(s) = (2 - 2 sigma artanh sigma) / (16 pi^2),
sigma^2 = q^2 / (M^2 + q^2), which is even in sigma; its sqrt(q^2) piece i pi sigma is
purely imaginary above threshold and dropped by taking the real part.  Below threshold
(q^2 < 0, where t_l is real) that piece becomes -pi tau, tau^2 = -q^2 / (M^2 + q^2);
its polynomial coefficient is Im t_l / sigma, a quadratic in q^2 read off above
threshold, so g is known on both sides of q^2 = 0.  g is then fitted (least squares,
``N_BASIS`` Chebyshev polynomials on ``N_POINTS`` Chebyshev points of [-h, h],
h = ``Q2_HALF_WIDTH``) and a_l = g(0), b_l = g'(0) are read off at the centre of the
interval, where the fit is best conditioned; the truncation error falls like
(1/h + sqrt(1/h^2 - 1))^{-N_BASIS} ~ 1e-14.  Working on both sides of threshold avoids
dividing by tiny q^{2l} (one-sided extrapolation lost ~1e-7 on the D waves), and the
projection weights are corrected so that they annihilate z^k, k < l, to rounding.

Accuracy verified (tests/observables/test_threshold.py and the development checks
behind it): a_2^0 and a_2^2 agree with the closed forms of Gasser & Leutwyler (1984) to
<= 1e-11 relative; a_0^0, b_0^0, a_0^2, b_0^2, a_1^1, b_1^1 agree with closed forms
derived from Gasser & Leutwyler (1984) Eq. (17.5) at threshold to <= 1e-12 relative;
b_2^0 and b_2^2 (no closed form used) change by < 5e-11 relative under other grids
(h = 0.3 ... 0.6, 32 ... 64 points, 16 ... 30 polynomials, 16 ... 40 z points).  The
cached affine form agrees with the direct projection to ~5e-11 relative (the rounding
of the O(1) tree part, which carries no D wave, sets this floor).

Speed.  The amplitude is exactly tree / F^2 + (P0 + sum_i lbar_i P_i) / F^4 (F in units
of M), so each parameter is c_tree / F^2 + (c_0 + c . lbar) / F^4 with six constants
that do not depend on lbar, F or M; they are computed once per (I, l) and cached
(< 0.1 s each), and :func:`threshold_parameters` is a single matrix product (10^4 points
x 10 names in ~1 ms).  :func:`affine_coefficients` returns the map itself.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from dataclasses import dataclass
from functools import cache
from pathlib import Path
from typing import Any

import numpy as np

from eftsieve.errors import InputError
from eftsieve.fit.card import read_card
from eftsieve.fit.model import Fit, check_covariance
from eftsieve.theories.chpt_su2.amplitude import full_amplitude
from eftsieve.theories.chpt_su2.conventions import affine_map, convention, lec_index

#: The allowed (isospin, l) pairs (Bose symmetry: even l for I = 0, 2, odd l for I = 1).
ALLOWED_WAVES: tuple[tuple[int, int], ...] = ((0, 0), (1, 1), (0, 2), (2, 0), (2, 2))

#: Every observable name, ``f"{kind}_I{I}_l{l}"`` (kind ``a`` or ``b``, isospin I, wave l).
OBSERVABLES: tuple[str, ...] = tuple(
    f"{kind}_I{iso}_l{ell}" for iso, ell in ALLOWED_WAVES for kind in ("a", "b"))

#: Half-width h of the q^2 interval [-h, h] (units M^2), number of Chebyshev points on
#: it, and number of Chebyshev polynomials fitted to Re t_l / q^{2l}.
Q2_HALF_WIDTH = 0.5
N_POINTS = 48
N_BASIS = 24
#: Gauss-Legendre points in z = cos(theta).
N_Z = 24

_NAME = re.compile(r"^([ab])_I(\d)_l(\d)$")
#: the old spelling, isospin and wave unlabelled (``a0_2``), refused with the new name
_OLD_NAME = re.compile(r"^([ab])(\d)_(\d)$")


def parse_name(name: str) -> tuple[str, int, int]:
    """Split an observable name into (kind, isospin, l).

    Parameters
    ----------
    name
        ``f"{kind}_I{I}_l{l}"``, e.g. ``"a_I0_l0"`` (a_0^0) or ``"b_I2_l2"`` (b_2^2).

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
    old = _OLD_NAME.match(name) if isinstance(name, str) else None
    if old is not None:
        k, i, ell = old.groups()
        raise ValueError(f"observable name {name!r} is the old spelling, which reads both "
                         f"ways: for I = {i}, l = {ell} write '{k}_I{i}_l{ell}' "
                         f"(the I = {ell}, l = {i} one is '{k}_I{ell}_l{i}')")
    if match is None:
        raise ValueError(f"observable name {name!r} is not of the form '<a|b>_I<I>_l<l>', "
                         f"e.g. 'a_I0_l0'; known names: {', '.join(OBSERVABLES)}")
    kind, iso, ell = match.group(1), int(match.group(2)), int(match.group(3))
    if (iso, ell) not in ALLOWED_WAVES:
        bose = iso <= 2 and (iso + ell) % 2 == 1
        why = ("forbidden by Bose symmetry (I = 0, 2 need even l, I = 1 needs odd l)"
               if bose else "not provided (only I = 0, 1, 2 and l = 0, 1, 2)")
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


@dataclass(frozen=True)
class _Grid:
    """Quadrature and extraction weights for one partial wave l.

    Attributes
    ----------
    q2
        The q^2 points (M^2 units), Chebyshev points of [-h, h].
    z
        Gauss-Legendre points in z.
    proj
        w_i P_l(z_i) / (64 pi), with the moments of z^k, k < l, removed (see
        :func:`_projection_weights`).
    re_rows, im_rows
        (2, n) weights: (a, b) = re_rows @ Re t_l(q2) + im_rows @ Im t_l(q2).
    """

    q2: np.ndarray
    z: np.ndarray
    proj: np.ndarray
    re_rows: np.ndarray
    im_rows: np.ndarray


def _legendre(ell: int, z: np.ndarray) -> np.ndarray:
    """Legendre polynomial P_l(z) for l = 0, 1, 2."""
    return (np.ones_like(z), z, 0.5 * (3 * z**2 - 1))[ell]


def _projection_weights(ell: int, n_z: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre points and weights v_i = w_i P_l(z_i) / (64 pi).

    In floating point sum_i w_i P_l(z_i) z_i^k (k < l) is ~1e-15 rather than 0, which
    would leak the O(1) constant part of T into the O(q^4) D wave; the component of v
    along z^k, k < l, is therefore projected out (a change of ~1e-16 per weight).
    """
    z, w = np.polynomial.legendre.leggauss(n_z)
    v = w * _legendre(ell, z)
    if ell > 0:
        powers = np.vander(z, ell, increasing=True)
        v = v - powers @ np.linalg.solve(powers.T @ powers, powers.T @ v)
    return z, v / (64 * math.pi)


def _extraction_rows(ell: int, h: float, n_points: int,
                     n_basis: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """q^2 points and the linear maps (Re t_l, Im t_l) -> (a_l, b_l).

    Above threshold (q^2 > 0) g = Re t_l / q^{2l}.  Below (q^2 < 0) t_l is real and
    equals g q^{2l} - tau Pi(q^2), tau = sqrt(-q^2 / (1 + q^2)), where
    Pi(q^2) = Im t_l / sigma (q^2 > 0) is a polynomial of degree <= 2 (the s-channel
    polynomial times pi / (16 pi^2)), fitted on the points above threshold.  Then
    q^{2l} g is fitted by least squares with q^{2l} T_j(q^2 / h), j < n_basis, and
    a_l = g(0), b_l = g'(0) are read off at the centre of the interval.
    """
    k = np.arange(n_points)
    xi = np.cos(np.pi * (2 * k + 1) / (2 * n_points))
    q2 = h * xi
    pos, neg = q2 > 0, q2 < 0
    sigma = np.sqrt(q2[pos] / (1 + q2[pos]))
    tau = np.sqrt(-q2[neg] / (1 + q2[neg]))
    cheb2 = np.polynomial.chebyshev.chebvander
    # Im t_l (pos) -> tau Pi (neg): quadratic least-squares fit of Pi = Im t_l / sigma
    extend = cheb2(xi[neg], 2) @ np.linalg.pinv(cheb2(xi[pos], 2)) / sigma[None, :]
    correction = np.zeros((n_points, n_points))
    correction[np.ix_(neg, pos)] = tau[:, None] * extend
    design = cheb2(xi, n_basis - 1) * (q2**ell)[:, None]
    j = np.arange(n_basis)
    at_centre = np.stack([np.cos(j * np.pi / 2), j * np.sin(j * np.pi / 2) / h])
    re_rows = at_centre @ np.linalg.pinv(design)
    return q2, re_rows, re_rows @ correction


@cache
def _grid(ell: int, h: float = Q2_HALF_WIDTH, n_points: int = N_POINTS,
          n_basis: int = N_BASIS, n_z: int = N_Z) -> _Grid:
    """The (cached) quadrature and extraction weights of partial wave l."""
    z, proj = _projection_weights(ell, n_z)
    q2, re_rows, im_rows = _extraction_rows(ell, h, n_points, n_basis)
    return _Grid(q2=q2, z=z, proj=proj, re_rows=re_rows, im_rows=im_rows)


def _projected(iso: int, ell: int, lbar: tuple[float, float, float, float],
               f: float, grid: _Grid | None = None) -> np.ndarray:
    """(a_l, b_l) of the full amplitude T^I at one lbar and F/M."""
    grid = _grid(ell) if grid is None else grid
    s = np.broadcast_to(4.0 * (1.0 + grid.q2)[:, None], (grid.q2.size, grid.z.size))
    t = -2.0 * grid.q2[:, None] * (1.0 - grid.z[None, :])
    wave = full_amplitude(s, t, lbar, f, isospin=iso) @ grid.proj
    return grid.re_rows @ wave.real + grid.im_rows @ wave.imag


def _split(iso: int, ell: int,
           lbar: tuple[float, float, float, float]) -> tuple[np.ndarray, np.ndarray]:
    """(a, b) of T_tree and of T_loop, where T = T_tree / F^2 + T_loop / F^4 (units M = 1).

    With F = 2^k (so that every rescaling is exact), F^2 T = T_tree + T_loop / F^2 at
    F^2 = 2^20, 2^22 gives T_tree, and F^4 T = T_loop + F^2 T_tree at F^2 = 2^-20, 2^-22
    gives T_loop, each free of the rounding of the other (a split at F ~ 1 would mix
    the O(1) tree rounding into the small D waves).
    """
    big = [4.0**k * _projected(iso, ell, lbar, 2.0**k) for k in (10, 11)]
    small = [4.0**(-2 * k) * _projected(iso, ell, lbar, 2.0**-k) for k in (10, 11)]
    return (4 * big[1] - big[0]) / 3, (4 * small[1] - small[0]) / 3


@cache
def _affine(iso: int, ell: int) -> np.ndarray:
    """Coefficients (2, 6): rows (a, b); columns (c_tree, c_0, c_1..c_4).

    x = c_tree / F^2 + (c_0 + sum_i c_i lbar_i) / F^4 with F = F_pi / M_pi; the six
    constants depend on nothing else.
    """
    zero = (0.0, 0.0, 0.0, 0.0)
    tree, loop0 = _split(iso, ell, zero)
    slopes = []
    for k in range(4):
        unit = tuple(float(i == k) for i in range(4))
        slopes.append(_split(iso, ell, unit)[1] - loop0)  # type: ignore[arg-type]
    coef = np.column_stack([tree, loop0, *slopes])
    coef.setflags(write=False)
    return coef


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
    ab = _projected(iso, ell, _as_lbar(lbar), f)
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
        Sequence of observable names (see :data:`OBSERVABLES`); a single string is one
        name.
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
    names = (names,) if isinstance(names, str) else tuple(names)
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


# ---- observables files: Gaussian data on threshold parameters, for refits -----------------
@dataclass(frozen=True)
class ObservableData:
    """Gaussian observables: values, covariance, and where each was measured.

    Attributes
    ----------
    names
        Observable names of the built-in library (``a_I2_l0`` ...).
    pion_mass_mev, fpi_mev
        The M_pi and F_pi of each observable.
    values, cov
        The measured values and their covariance.
    source
        The data file.
    """

    names: tuple[str, ...]
    pion_mass_mev: np.ndarray
    fpi_mev: np.ndarray
    values: np.ndarray
    cov: np.ndarray
    source: Path

    def to_dict(self) -> dict[str, Any]:
        return {"names": list(self.names), "pion_mass_mev": self.pion_mass_mev.tolist(),
                "fpi_mev": self.fpi_mev.tolist(), "values": self.values.tolist(),
                "source": str(self.source)}


def load_observables(path: str | Path) -> ObservableData:
    """Read an observables file (YAML/JSON, ``format_version: 1``)."""
    p = Path(path)
    card = read_card(p)
    if card.get("format_version") != 1:
        raise InputError(p, "format_version", "missing or unsupported", "use format_version: 1")
    obs = card.get("observables")
    if not isinstance(obs, list) or not obs:
        raise InputError(p, "observables", "must be a non-empty list", "see docs/formats.md")
    names, ms, fs = [], [], []
    for i, o in enumerate(obs):
        if not isinstance(o, dict) or o.get("name") not in OBSERVABLES:
            name = o.get("name") if isinstance(o, dict) else None
            if isinstance(name, str) and _OLD_NAME.match(name):
                try:
                    parse_name(name)
                except ValueError as err:
                    raise InputError(p, f"observables[{i}].name", str(err).split(": ")[0],
                                     str(err).split(": ", 1)[1]) from err
            raise InputError(p, f"observables[{i}].name", f"unknown observable {o!r}",
                             f"accepted: {', '.join(OBSERVABLES)}")
        for key in ("pion_mass_mev", "fpi_mev"):
            if not isinstance(o.get(key), (int, float)) or o[key] <= 0:
                raise InputError(p, f"observables[{i}].{key}", "missing or not positive",
                                 "give the value in MeV")
        names.append(o["name"])
        ms.append(float(o["pion_mass_mev"]))
        fs.append(float(o["fpi_mev"]))
    n = len(names)
    values = np.asarray(card.get("values", []), dtype=float)
    if values.shape != (n,):
        raise InputError(p, "values", f"needs {n} numbers, one per observable", "")
    cov = np.asarray(card.get("covariance", []), dtype=float)
    check_covariance(cov, n, p, "covariance")
    if np.linalg.eigvalsh(cov)[0] <= 0:
        raise InputError(p, "covariance", "must be positive definite for a likelihood",
                         "give a full-rank covariance")
    return ObservableData(tuple(names), np.array(ms), np.array(fs), values, cov, p)


def observables_loglike(data: ObservableData, fit: Fit) -> Callable[[np.ndarray], np.ndarray]:
    """Vectorised Gaussian log-likelihood of the observables as functions of lbar1..lbar4.

    The fit's constants (in its conventions) are mapped to lbar at each observable's own
    pion mass (exact affine maps of :mod:`eftsieve.theories.chpt_su2.conventions`).
    """
    idx = {}
    for i, p in enumerate(fit.parameters):
        k = lec_index(p.name)
        if k is not None and p.convention.name in ("lbar", "lr"):
            idx[k] = i
    if sorted(idx) != [1, 2, 3, 4]:
        raise InputError(fit.source, "parameters", "the observables need lbar1..lbar4",
                         "fit all four constants (lbar3, lbar4 may be spectators)")
    cols = [idx[k] for k in (1, 2, 3, 4)]
    convs = tuple(fit.parameters[c].convention for c in cols)
    names4 = tuple(fit.parameters[c].name for c in cols)
    groups: dict[tuple[float, float], list[int]] = {}
    for j, key in enumerate(zip(data.pion_mass_mev, data.fpi_mev, strict=True)):
        groups.setdefault(key, []).append(j)
    maps = {key: affine_map(names4, convs, tuple(convention("lbar", pion_mass_mev=key[0])
                                                 for _ in range(4))) for key in groups}
    prec = np.linalg.inv(data.cov)

    def loglike(x: np.ndarray) -> np.ndarray:
        pred = np.empty((len(x), len(data.names)))
        for key, js in groups.items():
            lb = maps[key].apply_points(x[:, cols])
            pred[:, js] = threshold_parameters([data.names[j] for j in js], lb, key[0], key[1])
        r = pred - data.values
        return -0.5 * np.einsum("ni,ij,nj->n", r, prec, r)

    return loglike


def observable_likelihood(path: str | Path | ObservableData, fit: Fit
                          ) -> tuple[Callable[[np.ndarray], np.ndarray], str]:
    """The refit log-likelihood of an observables file (or its data), and its label."""
    data = path if isinstance(path, ObservableData) else load_observables(path)
    return observables_loglike(data, fit), f"observables {data.source}"
