"""Theory ``chpt-su2``: one-loop SU(2) ChPT pi-pi scattering and its positivity region.

The amplitude is that of Gasser & Leutwyler, Ann. Phys. 158 (1984) 142 (see
:mod:`eftsieve.theories.chpt_su2.amplitude`).  Positivity is imposed on elastic processes
|a b> -> |a b> for every superposition of isospin states a, b in C^3.  Their amplitude is
x1 A(s,t,u) + A(t,s,u) + x2 A(u,t,s), x1 = |a.b|^2, x2 = |a.conj(b)|^2; the bounds are
linear in (x1, x2) and the achievable set lies in [0, 1]^2 and contains its four
corners, so the four corner channels are the extreme ones:

    (0, 0) pi+ pi0,   (1, 0) pi+ pi-,   (0, 1) pi+ pi+,   (1, 1) pi0 pi0.

Two bound families (docs/physics.md gives the derivations):

``second-derivative``
    d^2 T/ds^2 >= 0 at fixed t for 0 <= t < 4M^2, s < 4M^2, u < 4M^2
    (Manohar & Mateu, arXiv:0801.3222, Eq. (9)).
``t-derivative``
    For a direction in the Mandelstam plane that raises t by 1 while s falls by alpha and
    u by 1 - alpha (0 <= alpha <= 1), with S = d^2 T/ds^2,
    D_alpha S + 3 max(alpha/(4M^2 - s), (1 - alpha)/(4M^2 - u)) S >= 0,
    our derivation along the lines of de Rham, Melville, Tolley & Zhou, arXiv:1702.06134,
    Sec. 3, as applied to ChPT in Wang, Zhang & Zhou, arXiv:2004.03992.

Default (docs/physics.md, Sec. "Truncation study"): the ``second-derivative`` family
(``t-derivative`` on request: it is 2-3 times more sensitive to O(p^6) terms) with the
truncation model ``loop-consistent`` (:mod:`eftsieve.theories.chpt_su2.truncation`): the
one-loop facets form the inner set and the outer facets are relaxed by their truncation
shift at Lambda_h/M_pi, so points between them are ``uncertain``.

In units of M_pi the bounds on lbar1, lbar2 do not depend on M_pi or F_pi: F_pi drops out
because every O(p^4) term scales as 1/F^4 and the tree amplitude is linear in s and t.
lbar3 and lbar4 drop out (their terms are linear in s), which the tests check.
"""

from __future__ import annotations

import logging
import warnings
from collections.abc import Callable
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.bounds.fixed_t import (
    ScanSettings,
    best_facet,
    smallest_entry_one,
    t_derivative_combination,
)
from eftsieve.errors import InputError, KinematicsWarning
from eftsieve.executors import Executor, serial
from eftsieve.fit.conventions import Convention
from eftsieve.region.model import Facet, Region, irredundant
from eftsieve.theories.base import CoordinateMap, Theory
from eftsieve.theories.chpt_su2 import amplitude as pipi
from eftsieve.theories.chpt_su2.conventions import (
    CONVENTIONS,
    DEFAULT_FPI_MEV,
    DEFAULT_MU_MEV,
    DEFAULT_PION_MASS_MEV,
    affine_map,
    convention,
    lec_index,
)
from eftsieve.theories.chpt_su2.references import REFERENCES
from eftsieve.theories.chpt_su2.truncation import (
    HEAVY_SCALE_MEV,
    TRUNCATION_MODELS,
    max_pion_mass_mev,
    truncation_shift,
)
from eftsieve.tolerances import MARGINAL_BAND, SMALL_COORDINATE_BAND

if TYPE_CHECKING:
    from eftsieve.fit.model import Fit

log = logging.getLogger(__name__)

CHANNELS: dict[str, tuple[float, float]] = {
    "pi+ pi0": (0.0, 0.0), "pi+ pi-": (1.0, 0.0), "pi+ pi+": (0.0, 1.0), "pi0 pi0": (1.0, 1.0),
}
FAMILIES = ("second-derivative", "t-derivative")
#: the default family: the truncation study (docs/physics.md) finds the t-derivative
#: facets 2-3 times more sensitive to O(p^6) terms
DEFAULT_FAMILIES = ("second-derivative",)
#: Pion mass above which the tool warns, from the truncation study (docs/physics.md):
#: at M_pi = 300 MeV (Lambda_h/M_pi = 2.57) the truncation shift of the default facets
#: reaches 28% of the weakest one (lbar2 >= 27/20), and above about 320 MeV physical QCD
#: with l^r held fixed falls outside the relaxed facets, i.e. the calibrated estimate of
#: the O(p^6) terms is too small there.  (Below the 400 MeV upper end of NLO SU(2) chiral
#: fits in FLAG Review 2019, arXiv:1902.08191, Sec. 5.1, from memory.)
MAX_TRUSTED_PION_MASS_MEV = 300.0
#: distance in units of M^2 kept from the s- and u-channel thresholds in the scan
EDGE = 1e-3
_E_S = np.array([1.0, 0.0, -1.0])   # d/ds at fixed t


def _points(cube: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Unit square (c_s, c_t) -> (s, t, u) inside 0<=t<=4, s<4, u<4 (units M^2)."""
    t = 4.0 * cube[:, 1]
    s = -t + EDGE + cube[:, 0] * (4.0 + t - 2 * EDGE)
    return np.stack([s, t, 4.0 - s - t], axis=-1), t


class ChannelFunctionals:
    """The bound functionals of one channel, with the lbar-dependence precomputed.

    d^2T/ds^2 = K0(s, t) + K . (lbar1, lbar2) with K constant (the lbar enter through a
    quadratic polynomial); the t-derivative of d^2T/ds^2 does not depend on the lbar.
    """

    def __init__(self, x1: float, x2: float) -> None:
        self.amp0 = pipi.channel_amplitude((0.0, 0.0, 0.0, 0.0), x1, x2)
        d0 = self.amp0.poly.d2(_E_S, _E_S)
        self.k = np.array([
            pipi.channel_amplitude((1.0, 0.0, 0.0, 0.0), x1, x2).poly.d2(_E_S, _E_S) - d0,
            pipi.channel_amplitude((0.0, 1.0, 0.0, 0.0), x1, x2).poly.d2(_E_S, _E_S) - d0,
        ]) / pipi.CT
        for lb in ((0.0, 0.0, 1.0, 0.0), (0.0, 0.0, 0.0, 1.0)):  # lbar3, lbar4 drop out
            extra = pipi.channel_amplitude(lb, x1, x2).poly.d2(_E_S, _E_S) - d0
            if abs(extra) > 1e-14:
                raise RuntimeError("lbar3/lbar4 entered a second-derivative bound")

    def second_derivative(self, cube: np.ndarray):
        """Evaluator of d^2T/ds^2 >= 0 over the (s, t) domain (arXiv:0801.3222)."""
        x, t = _points(cube)
        k0 = pipi.second(self.amp0, x, _E_S, pipi.loop_jets(self.amp0, x, 2, skip=(1,)))
        return k0 / pipi.CT, np.broadcast_to(self.k, (len(x), 2)), {"s": x[:, 0], "t": t}

    def t_derivative(self, cube: np.ndarray):
        """Evaluator of the first t-derivative bound over (s, t), best alpha; module docstring.

        For fixed (s, t) the offset is monotonic in alpha on each side of the kink
        alpha* = (4 - s)/(8 - s - u) of max(alpha/(4 - s), (1 - alpha)/(4 - u)), so its
        maximum over [0, 1] is at alpha = 0, alpha* or 1; all three are evaluated.
        """
        x, t = _points(cube)
        jets = pipi.loop_jets(self.amp0, x, 3, skip=(1,))
        k0 = pipi.second(self.amp0, x, _E_S, jets)
        d_fixed_s = pipi.third_mixed(self.amp0, x, _E_S, np.array([0.0, 1.0, -1.0]), jets)
        d_s3 = pipi.third_mixed(self.amp0, x, _E_S, _E_S, jets)
        cand, alpha = t_derivative_combination(k0, d_fixed_s, d_s3, x[:, 0], x[:, 2])
        return (cand / pipi.CT, np.broadcast_to(self.k, (len(x), 2)),
                {"s": x[:, 0], "t": t, "alpha": alpha})


def lbar_facets(families: tuple[str, ...], scan: dict[str, ScanSettings]) -> list[Facet]:
    """All channel facets in (lbar1, lbar2) at the region's own pion mass."""
    facets = []
    for fam in families:
        for name, (x1, x2) in CHANNELS.items():
            fn = ChannelFunctionals(x1, x2)
            ev = fn.second_derivative if fam == "second-derivative" else fn.t_derivative
            facets.append(best_facet(ev, fam, name, scan[fam], smallest_entry_one))
    return facets


def _map_facets(facets: list[Facet], src: Convention, dst: Convention, pion_mass: float,
                ) -> list[Facet]:
    """Express facets stated in lbar(M) coordinates in another convention (exact, affine)."""
    names = ("lbar1", "lbar2")
    amap = affine_map(names, (dst, dst), (src, src))     # dst coordinates -> src (lbar at M)
    out = []
    for f in facets:
        n = np.asarray(f.normal)
        normal = n @ amap.jacobian
        offset = f.offset - n @ amap.shift
        unit = normal / np.linalg.norm(normal)
        k = float(np.linalg.norm(smallest_entry_one(unit)) / np.linalg.norm(normal))
        extra = dict(f.extra)
        if "truncation_shift" in extra:   # lbar units -> this facet's region units
            extra["truncation_shift_region"] = float(extra["truncation_shift"] * k)
        out.append(Facet(tuple(normal * k), float(offset * k), f.family, f.channel,
                         {**f.point, "pion_mass_mev": pion_mass}, f.value, f.status, extra))
    return out


DEFAULT_SCAN = {"second-derivative": ScanSettings((161, 81), 4),
                "t-derivative": ScanSettings((161, 81), 4)}
FINE_SCAN = {"second-derivative": ScanSettings((641, 321), 8),
             "t-derivative": ScanSettings((641, 321), 8)}


def region_settings(families: tuple[str, ...] = DEFAULT_FAMILIES,
                    pion_masses_mev: tuple[float, ...] = (DEFAULT_PION_MASS_MEV,),
                    fpi_mev: float = DEFAULT_FPI_MEV, convention: str = "lbar",
                    mu_mev: float = DEFAULT_MU_MEV, grid: str = "default",
                    truncation: str = "loop-consistent",
                    heavy_scale_mev: float = HEAVY_SCALE_MEV) -> dict[str, Any]:
    """Validated settings of a chpt-su2 region build (defaults: docs/physics.md)."""
    fams = tuple(families)
    for f in fams:
        if f not in FAMILIES:
            raise InputError(None, "--family", f"unknown bound family '{f}'",
                             f"use {', '.join(FAMILIES)}")
    masses = tuple(float(m) for m in pion_masses_mev)
    if not masses or any(not np.isfinite(m) or m <= 0 for m in masses):
        raise InputError(None, "--pion-mass", f"pion masses must be positive, got {masses}",
                         "give masses in MeV")
    if convention not in ("lbar", "lr"):
        raise InputError(None, "--convention", f"unknown convention '{convention}'",
                         "use lbar or lr")
    if len(masses) > 1 and convention != "lr":
        raise InputError(None, "--convention", "a list of pion masses needs the mass-independent"
                         " convention", "add --convention lr --scale MEV")
    if grid not in ("default", "fine"):
        raise InputError(None, "--grid", f"unknown grid '{grid}'", "use default or fine")
    _check_truncation(truncation, float(heavy_scale_mev), masses)
    return {"families": list(fams), "pion_masses_mev": list(masses), "fpi_mev": float(fpi_mev),
            "convention": convention, "mu_mev": float(mu_mev), "grid": grid,
            "truncation": truncation, "heavy_scale_mev": float(heavy_scale_mev)}


def _check_truncation(truncation: str, heavy: float, masses: tuple[float, ...]) -> None:
    if truncation not in TRUNCATION_MODELS:
        raise InputError(None, "truncation", f"unknown truncation model '{truncation}'",
                         f"use {' or '.join(TRUNCATION_MODELS)}")
    if truncation == "none":
        return
    if not np.isfinite(heavy) or heavy <= 0:
        raise InputError(None, "heavy_scale_mev", f"the heavy scale must be positive, got "
                         f"{heavy}", "give it in MeV (default 770)")


def relaxed_facets(facets: list[Facet], heavy_scale_mev: float, pion_mass_mev: float,
                   ) -> list[Facet]:
    """The facets with offsets lowered by their truncation shift (chpt_su2.truncation); each
    certificate's ``extra`` records the shift and the heavy scale."""
    out = []
    for f in facets:
        shift = truncation_shift(f.family, f.channel, pion_mass_mev, heavy_scale_mev)
        extra = {**f.extra, "truncation_shift": shift, "heavy_scale_mev": heavy_scale_mev,
                 "one_loop_offset": f.offset}
        out.append(Facet(f.normal, f.offset - shift, f.family, f.channel, f.point,
                         f.value - shift, f.status, extra))
    return out


#: cautions printed in every report on a chpt-su2 region (docs/physics.md)
CAUTIONS = (
    "The chpt-su2 bounds apply the exact inequalities to the one-loop (O(p^4)) amplitude: "
    "they hold up to O(p^6) corrections, which grow with the pion mass and towards the "
    "edge t -> 4 M_pi^2 of the kinematic domain.",
    "Isospin limit: m_u = m_d and no electromagnetism; the charged and neutral pion "
    "masses are equal.",
    "By default the outer facets are relaxed by a truncation shift calibrated on "
    "loop-consistent models (an estimate, not a bound); points that pass only the relaxed "
    "facets are uncertain. Above M_pi = 300 MeV the tool warns: the estimate no longer "
    "covers physical QCD there.",
    "A point outside is in tension with causality, unitarity and crossing only within "
    "the truncation; it is not a proof that the underlying theory is inconsistent.",
)


class ChptSU2(Theory):
    """One-loop SU(2) ChPT pi-pi scattering (Gasser & Leutwyler 1984)."""

    name = "chpt-su2"
    summary = "one-loop SU(2) ChPT pi-pi scattering; positivity bounds on lbar1, lbar2"
    parameter_names = ("lbar1", "lbar2", "lbar3", "lbar4", "l1", "l2", "l3", "l4")
    coordinates = ("lbar1", "lbar2")
    #: around lbar1 = -0.4 +- 0.6, lbar2 = 4.3 +- 0.1 (Colangelo, Gasser & Leutwyler,
    #: hep-ph/0103088; from memory) and l1r ~ -4e-3, l2r ~ 2e-3 at mu = 770 MeV
    #: (Bijnens & Ecker, arXiv:1405.6488; from memory), with room for the bounds
    typical_window = {"lbar1": (-3.0, 3.0), "lbar2": (0.0, 6.0), "l1": (-0.012, 0.006),
                      "l2": (-0.004, 0.008)}
    coordinate_unit = "1"
    convention_specs = CONVENTIONS
    setting_names = ("families", "pion_masses_mev", "pion_mass_mev", "fpi_mev",
                     "convention", "mu_mev", "grid", "truncation", "heavy_scale_mev")
    cautions = CAUTIONS
    kinematic_inputs = {
        "pion_mass_mev": ("pion mass M_pi in MeV (lbar convention; region kinematics)",
                          DEFAULT_PION_MASS_MEV),
        "fpi_mev": ("pion decay constant F_pi in MeV (92 MeV normalisation)", DEFAULT_FPI_MEV),
        "mu_mev": ("renormalisation scale mu in MeV (lr convention)", DEFAULT_MU_MEV),
    }
    families = FAMILIES
    references = REFERENCES

    def build_region(self, settings: dict[str, Any], executor: Executor = serial) -> Region:
        settings = dict(settings)
        if "pion_mass_mev" in settings:  # one mass, spelled as the fit card spells it
            if "pion_masses_mev" in settings:
                raise InputError(None, "pion_mass_mev", "give pion_mass_mev or "
                                 "pion_masses_mev, not both", "drop one")
            settings["pion_masses_mev"] = [settings.pop("pion_mass_mev")]
        self.check_settings(settings)
        st = region_settings(tuple(settings.get("families", DEFAULT_FAMILIES)),
                             tuple(settings.get("pion_masses_mev", (DEFAULT_PION_MASS_MEV,))),
                             settings.get("fpi_mev", DEFAULT_FPI_MEV),
                             settings.get("convention", "lbar"),
                             settings.get("mu_mev", DEFAULT_MU_MEV),
                             settings.get("grid", "default"),
                             settings.get("truncation", "loop-consistent"),
                             settings.get("heavy_scale_mev", HEAVY_SCALE_MEV))
        for m in st["pion_masses_mev"]:
            if m > MAX_TRUSTED_PION_MASS_MEV:
                extra = (f"; the truncation allowance is extrapolated above "
                         f"{max_pion_mass_mev(st['heavy_scale_mev']):.0f} MeV"
                         if st["truncation"] != "none" and
                         m > max_pion_mass_mev(st["heavy_scale_mev"]) else "")
                warnings.warn(f"pion mass {m:g} MeV is above {MAX_TRUSTED_PION_MASS_MEV:g} MeV, "
                              "where one-loop SU(2) ChPT is not trusted (docs/physics.md)"
                              + extra, KinematicsWarning, stacklevel=2)
        scan = FINE_SCAN if st["grid"] == "fine" else DEFAULT_SCAN
        base = lbar_facets(tuple(st["families"]), scan)
        one_loop: list[Facet] = []
        outer: list[Facet] = []
        if st["convention"] == "lbar":
            conv = convention("lbar", pion_mass_mev=st["pion_masses_mev"][0])
            coords = ("lbar1", "lbar2")
        else:
            conv = convention("lr", mu_mev=st["mu_mev"])
            coords = ("l1", "l2")
        for m in st["pion_masses_mev"]:
            at_m = _map_facets(base, convention("lbar", pion_mass_mev=m), conv, m)
            one_loop += at_m
            if st["truncation"] != "none":
                outer += _map_facets(relaxed_facets(base, st["heavy_scale_mev"], m),
                                     convention("lbar", pion_mass_mev=m), conv, m)
        conv_d = {**conv.to_dict(), "fpi_mev": st["fpi_mev"]}
        notes: tuple[str, ...] = (
            "F_pi does not enter the one-loop bounds on lbar1, lbar2 (it is recorded only)",
            "s, t in certificates are in units of M_pi^2 of the facet's pion mass")
        if st["truncation"] == "none":
            return Region(self.name, coords, conv_d, tuple(irredundant(one_loop)), st,
                          notes=notes)
        notes += ("inner facets: the one-loop bounds; outer facets: relaxed by the truncation "
                  "shift of loop-consistent models at Lambda_h/M_pi (docs/physics.md); "
                  "points between them are uncertain",)
        return Region(self.name, coords, conv_d, tuple(irredundant(outer)), st,
                      inner_facets=tuple(irredundant(one_loop)), notes=notes)

    def observable_likelihood(self, path: Any, fit: Fit
                              ) -> tuple[Callable[[np.ndarray], np.ndarray], str]:
        """The pi-pi threshold parameters of an observables file (docs/formats.md)."""
        from eftsieve.theories.chpt_su2.observables import observable_likelihood

        return observable_likelihood(path, fit)

    def marginal_band(self, region: Region) -> float:
        """1e-3 in lbar; 1e-6 in lr, whose l_i^r = gamma_i (lbar_i + ln(M^2/mu^2))/(32 pi^2)
        are O(1e-3) (the same band in lbar, to a factor gamma_i/(32 pi^2) ~ 2e-3)."""
        lr = str(region.convention.get("name")) == "lr"
        return SMALL_COORDINATE_BAND if lr else MARGINAL_BAND

    def default_breakdown_mev(self, region: Region) -> float:
        """4 pi F_pi (naive dimensional analysis; common practice)."""
        return 4 * np.pi * float(region.convention.get("fpi_mev", DEFAULT_FPI_MEV))

    def power_counting(self, region: Region,
                       breakdown_mev: float | None) -> tuple[np.ndarray, np.ndarray]:
        """Q_j and the one-loop coefficients c_2,j at each facet (see _power_counting)."""
        return _power_counting(region, breakdown_mev)

    def region_kinematics(self, region: Region) -> dict[str, Any]:
        """The region's kinematics; mu only for the scale-dependent convention (the
        lbar constants are defined at the pion mass and carry no scale)."""
        kin = super().region_kinematics(region)
        if region.convention.get("name") == "lbar" and "mu_mev" not in region.convention:
            kin.pop("mu_mev", None)
        return kin

    def infer_convention(self, names: tuple[str, ...]) -> str | None:
        """``lbar1``, ``lbar2``, ... name the lbar constants, ``l1``, ``l2``, ... the l_i^r
        (whose scale must still be given); a mixture implies nothing."""
        known = [n for n in names if n in self.parameter_names]
        if known and all(n.startswith("lbar") for n in known):
            return "lbar"
        if known and not any(n.startswith("lbar") for n in known):
            return "lr"
        return None

    def convention_default(self, convention: str, key: str) -> float | None:
        """lbar without a pion mass: the physical one (the usual definition of lbar_i,
        Gasser & Leutwyler, Ann. Phys. 158 (1984) 142)."""
        if convention == "lbar" and key == "pion_mass_mev":
            return DEFAULT_PION_MASS_MEV
        return None

    def region_default_notices(self, fit: Fit) -> tuple[str, ...]:
        """A region for a fit that states no pion mass is built at the physical one."""
        if "pion_mass_mev" in fit.kinematics:
            return ()
        if any(p.convention.name == "lbar" for p in fit.parameters):
            return ()
        return (f"the fit states no pion mass: the region is built at the physical pion "
                f"mass {DEFAULT_PION_MASS_MEV:g} MeV (give --pion-mass, or kinematics."
                "pion_mass_mev in a card, for a lattice ensemble)",)

    def region_settings_for_fit(self, fit: Fit) -> dict[str, Any]:
        convs = [p.convention for p in fit.parameters if p.convention.name != "none"]
        m = fit.kinematics.get("pion_mass_mev", DEFAULT_PION_MASS_MEV)
        if convs and convs[0].name == "lbar" and convs[0].pion_mass_mev is not None:
            m = convs[0].pion_mass_mev
        return region_settings(pion_masses_mev=(m,),
                               fpi_mev=fit.kinematics.get("fpi_mev", DEFAULT_FPI_MEV))

    def validate_fit(self, fit: Fit) -> None:
        found: dict[int | None, str] = {}
        for i, p in enumerate(fit.parameters):
            if p.convention.name in ("lbar", "lr"):
                idx = lec_index(p.name)
                if idx in found:
                    raise InputError(fit.source, f"parameters[{i}].name",
                                     f"l{idx} appears twice ({found[idx]} and {p.name})",
                                     "give each constant once")
                found[idx] = p.name
            elif p.convention.name not in ("none", "Lr"):
                raise InputError(fit.source, f"parameters[{i}].convention",
                                 f"convention '{p.convention.name}' is not one of chpt-su2",
                                 "use lbar or lr")

    def coordinate_map(self, fit: Fit, region: Region) -> CoordinateMap:
        target = region_convention(region)
        jac = np.zeros((region.dim, len(fit.parameters)))
        shift = np.zeros(region.dim)
        desc = []
        for k, cname in enumerate(region.coordinates):  # by name, not by position
            idx = lec_index(cname)
            cols = [i for i, p in enumerate(fit.parameters)
                    if p.convention.name in ("lbar", "lr") and lec_index(p.name) == idx]
            if not cols:
                raise InputError(fit.source, "parameters",
                                 f"the region needs l{idx} but the fit has no lbar{idx} or l{idx}",
                                 "add the parameter with its convention")
            p = fit.parameters[cols[0]]
            amap = affine_map((p.name,), (p.convention,), (target,))
            jac[k, cols[0]] = amap.jacobian[0, 0]
            shift[k] = amap.shift[0]
            desc.append(f"{region.coordinates[k]} = {amap.jacobian[0, 0]:.12g} * {p.name} "
                        f"({p.convention.describe()}) + {amap.shift[0]:.12g}")
        return CoordinateMap(jac, shift, tuple(desc))


def region_convention(region: Region) -> Convention:
    """The convention of a chpt-su2 region's coordinates (``lbar`` at M_pi or ``lr`` at mu)."""
    name = str(region.convention["name"])
    key = "pion_mass_mev" if name == "lbar" else "mu_mev"
    return convention(name, **{key: region.convention.get(key)})


THEORY = ChptSU2()


def _power_counting(region: Region, breakdown_mev: float | None) -> tuple[np.ndarray, np.ndarray]:
    """Q_j and c_2,j = T_NLO/(|T_LO| Q_j^2) at each facet's point (see eftsieve.stats.truncation).

    The amplitude is evaluated in the facet's channel at its kinematic point, at the point
    of the facet nearest the origin of the region's coordinates (lbar3 = lbar4 = 0).
    """
    fpi = float(region.convention.get("fpi_mev", DEFAULT_FPI_MEV))
    lam = breakdown_mev if breakdown_mev is not None else 4 * np.pi * fpi
    conv_name = str(region.convention["name"])
    q, coef = [], []
    for f in region.facets:
        m = float(f.point.get("pion_mass_mev", region.convention.get("pion_mass_mev", 0.0)))
        s, t = f.point["s"], f.point["t"]
        qj = m * max(1.0, np.sqrt(abs(s)), np.sqrt(abs(t))) / lam
        if qj >= 1:
            raise InputError(None, "--breakdown", f"Q = {qj:.3g} >= 1 at facet {f.label()} "
                             f"(M_pi = {m:g} MeV, Lambda_b = {lam:g} MeV): the expansion "
                             "does not converge there", "raise --breakdown or drop the mass")
        n = np.asarray(f.normal, dtype=float)
        x = n * f.offset / (n @ n)
        if conv_name == "lr":
            src = convention("lr", mu_mev=float(region.convention["mu_mev"]))
            amap = affine_map(("l1", "l2"), (src, src),
                              (convention("lbar", pion_mass_mev=m),) * 2)
            x = amap.apply_points(x)
        x1, x2 = CHANNELS[f.channel]
        f_over_m = fpi / m
        lo = x1 * (s - 1) + (t - 1) + x2 * (4 - s - t - 1)
        amp = pipi.channel_amplitude((float(x[0]), float(x[1]), 0.0, 0.0), x1, x2)
        nlo = float(pipi.evaluate(amp, np.array([[s, t, 4 - s - t]]))[0].real) / f_over_m**4
        t_lo = abs(lo) / f_over_m**2
        q.append(qj)
        coef.append(nlo / (t_lo * qj**2))
    return np.array(q), np.array(coef)

