"""Theory ``chpt-su3``: one-loop SU(3) ChPT meson-meson scattering; bounds on L1, L2, L3.

The O(p^4) amplitudes (:mod:`eftsieve.theories.chpt_su3.amplitude`) are derived from the
Lagrangian of Gasser & Leutwyler, Nucl. Phys. B250 (1985) 465, with the physical
M_pi, M_K, M_eta; their pi pi amplitude agrees with that of Bernard, Kaiser & Meissner,
Phys. Rev. D 43 (1991) 2757 / Nucl. Phys. B357 (1991) 129 (tests).  The bounds are
linear in (L1^r, L2^r, L3^r)(mu), with a normal that does not depend on the kinematics
in each channel, so :func:`eftsieve.bounds.fixed_t.best_facet` finds each facet.

Families (docs/physics_su3.md derives both for unequal masses):

``second-derivative``
    d^2 T/ds^2 >= 0 at fixed 0 <= t < 4 M_pi^2, s < s_th, u < u_th (after Manohar &
    Mateu, arXiv:0801.3222, Eq. (9), and Mateu, arXiv:0801.3627 for SU(3)).
``t-derivative``
    D_alpha S + 3 max(alpha/(s_th - s), (1 - alpha)/(u_th - u)) S >= 0 (our derivation
    along the lines of arXiv:1702.06134, Sec. 3, with the process's own thresholds).

Default (docs/physics_su3.md, Sec. 7): the ``second-derivative`` family (``t-derivative``
on request: about twice as sensitive to O(p^6) terms) with the truncation model
``loop-consistent`` (:mod:`eftsieve.theories.chpt_su3.truncation`): the one-loop facets
form the inner set, and the outer facets are relaxed by the allowance of loop-consistent
models (pi pi continuum chiral up to the rho, pi K up to the K*) plus the facet's change
with the Gell-Mann-Okubo eta mass, so points between them are ``uncertain``.

L4..L8 enter the amplitudes only through terms linear in s, t, u and drop out (tests);
F drops out because every O(p^4) term scales as 1/F^4 and the tree is linear.
"""

from __future__ import annotations

import math
import warnings
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.bounds.fixed_t import ScanSettings, best_facet, smallest_entry_one
from eftsieve.errors import InputError, KinematicsWarning
from eftsieve.executors import Executor, serial
from eftsieve.fit.conventions import AffineMap, Convention, ConventionSpec
from eftsieve.region.model import Facet, Region, irredundant
from eftsieve.theories.base import CoordinateMap, Theory
from eftsieve.theories.chpt_su2.conventions import (
    DEFAULT_FPI_MEV,
    DEFAULT_MU_MEV,
    DEFAULT_PION_MASS_MEV,
)
from eftsieve.theories.chpt_su3.channels import CHANNELS, PROCESSES, ChannelFunctionals
from eftsieve.theories.chpt_su3.references import REFERENCES
from eftsieve.theories.chpt_su3.truncation import (
    HEAVY_SCALE_MEV,
    TRUNCATION_MODELS,
    gmo_eta_mass,
    model_allowance,
)
from eftsieve.tolerances import SMALL_COORDINATE_BAND

if TYPE_CHECKING:
    from eftsieve.fit.model import Fit

FAMILIES = ("second-derivative", "t-derivative")
#: the default family, as for chpt-su2 (docs/physics.md, truncation study): the
#: t-derivative facets are more sensitive to O(p^6) terms (docs/physics_su3.md, Sec. 7)
DEFAULT_FAMILIES = ("second-derivative",)
#: Pion mass above which the tool warns: the chpt-su2 threshold (docs/physics.md), whose
#: truncation study also calibrates the pi pi facets here (docs/physics_su3.md, Sec. 7)
MAX_TRUSTED_PION_MASS_MEV = 300.0
#: the pi K heavy scale relative to the pi pi one: K*(892) over rho(770) (PDG masses,
#: from memory): the pi K continuum is taken chiral up to its first resonance
PIK_SCALE_FACTOR = 892.0 / 770.0
#: PDG charged-kaon and eta masses in MeV (from memory; common practice)
DEFAULT_KAON_MASS_MEV = 493.68
DEFAULT_ETA_MASS_MEV = 547.86
#: Gamma_i of the scale dependence of L_i^r, Gasser & Leutwyler, Nucl. Phys. B250 (1985)
#: 465, Table 1 (from memory); the tests re-derive Gamma_1..3 from the loops.
GAMMA_SU3 = {1: 3 / 32, 2: 3 / 16, 3: 0.0, 4: 1 / 8, 5: 3 / 8, 6: 11 / 144, 7: 0.0, 8: 5 / 48}
CONVENTION = "Lr"
COORDINATES = ("L1", "L2", "L3")

DEFAULT_SCAN = {"second-derivative": ScanSettings((121, 61), 4),
                "t-derivative": ScanSettings((121, 61), 4)}
FINE_SCAN = {"second-derivative": ScanSettings((481, 241), 8),
             "t-derivative": ScanSettings((481, 241), 8)}


def lec_index_su3(name: str) -> int | None:
    """The index i of a constant named ``L<i>`` or ``L<i>r`` (1..8); None otherwise."""
    core = name[:-1] if name.endswith("r") else name
    if core.startswith("L") and core[1:].isdigit():
        i = int(core[1:])
        return i if i in GAMMA_SU3 else None
    return None


def run_lr(values: np.ndarray, indices: tuple[int, ...], mu_from: float, mu_to: float,
           ) -> np.ndarray:
    """L_i^r(mu_to) = L_i^r(mu_from) + Gamma_i/(16 pi^2) ln(mu_from/mu_to) (GL 1985)."""
    shift = np.array([GAMMA_SU3[i] for i in indices]) / (16 * math.pi**2)
    return np.asarray(values, dtype=float) + shift * math.log(mu_from / mu_to)


def nu_k(kaon_mass_mev: float, mu_mev: float) -> float:
    """nu_K = (ln(M_K^2/mu^2) + 1)/(32 pi^2) of the SU(2) matching (GL 1985, Eq. (11.6))."""
    return (math.log(kaon_mass_mev**2 / mu_mev**2) + 1) / (32 * math.pi**2)


def su2_matching_map(mu_mev: float = DEFAULT_MU_MEV,
                     kaon_mass_mev: float = DEFAULT_KAON_MASS_MEV) -> AffineMap:
    """(L1, L2, L3)^r(mu) -> (l1, l2)^r(mu) at one loop, as an exact affine map.

    Gasser & Leutwyler, Nucl. Phys. B250 (1985) 465, Eq. (11.6) (from memory; checked in
    the tests against the heavy-kaon limit of the SU(3) pi pi amplitude):
    l1^r = 4 L1^r + 2 L3 - nu_K/24,  l2^r = 4 L2^r - nu_K/12.
    """
    nk = nu_k(kaon_mass_mev, mu_mev)
    jac = np.array([[4.0, 0.0, 2.0], [0.0, 4.0, 0.0]])
    return AffineMap(jac, np.array([-nk / 24, -nk / 12]), COORDINATES, ("l1", "l2"))


def su2_from_su3(lecs: np.ndarray, mu_mev: float = DEFAULT_MU_MEV,
                 kaon_mass_mev: float = DEFAULT_KAON_MASS_MEV) -> np.ndarray:
    """l1^r, l2^r at mu from L1^r, L2^r, L3 at mu (points of shape (3,) or (n, 3))."""
    return su2_matching_map(mu_mev, kaon_mass_mev).apply_points(lecs)


def region_settings(families: tuple[str, ...] = DEFAULT_FAMILIES,
                    pion_mass_mev: float = DEFAULT_PION_MASS_MEV,
                    kaon_mass_mev: float = DEFAULT_KAON_MASS_MEV,
                    eta_mass_mev: float = DEFAULT_ETA_MASS_MEV,
                    mu_mev: float = DEFAULT_MU_MEV, fpi_mev: float = DEFAULT_FPI_MEV,
                    grid: str = "default", loops: bool = True,
                    processes: tuple[str, ...] = PROCESSES,
                    truncation: str = "loop-consistent",
                    heavy_scale_mev: float = HEAVY_SCALE_MEV) -> dict[str, Any]:
    """Validated settings of a chpt-su3 region build (defaults: docs/physics_su3.md)."""
    for f in families:
        if f not in FAMILIES:
            raise InputError(None, "--family", f"unknown bound family '{f}'",
                             f"use {', '.join(FAMILIES)}")
    for p in processes:
        if p not in PROCESSES:
            raise InputError(None, "processes", f"unknown process '{p}'",
                             f"use {', '.join(PROCESSES)}")
    if truncation not in TRUNCATION_MODELS:
        raise InputError(None, "truncation", f"unknown truncation model '{truncation}'",
                         f"use {' or '.join(TRUNCATION_MODELS)}")
    named = {"--pion-mass": pion_mass_mev, "--kaon-mass": kaon_mass_mev,
             "--eta-mass": eta_mass_mev, "--scale": mu_mev, "--fpi": fpi_mev,
             "--heavy-scale": heavy_scale_mev}
    for opt, v in named.items():
        if not np.isfinite(float(v)) or float(v) <= 0:
            raise InputError(None, opt, f"must be positive and finite, got {v}", "give MeV")
    if grid not in ("default", "fine"):
        raise InputError(None, "--grid", f"unknown grid '{grid}'", "use default or fine")
    return {"families": list(families), "pion_mass_mev": float(pion_mass_mev),
            "kaon_mass_mev": float(kaon_mass_mev), "eta_mass_mev": float(eta_mass_mev),
            "mu_mev": float(mu_mev), "fpi_mev": float(fpi_mev), "grid": grid,
            "loops": bool(loops), "processes": list(processes), "truncation": truncation,
            "heavy_scale_mev": float(heavy_scale_mev)}


def channel_facets(st: dict[str, Any]) -> tuple[list[Facet], list[str]]:
    """Every (family, channel) facet of the settings, and the reasons for skipped ones."""
    mpi = st["pion_mass_mev"]
    mk, meta, mu = st["kaon_mass_mev"] / mpi, st["eta_mass_mev"] / mpi, st["mu_mev"] / mpi
    scan = FINE_SCAN if st["grid"] == "fine" else DEFAULT_SCAN
    facets, skipped = [], []
    for name, (process, _, _) in CHANNELS.items():
        if process not in st["processes"]:
            continue
        fn = ChannelFunctionals(name, mk, meta, mu, loops=st["loops"])
        if fn.domain is None:
            skipped.append(f"{name}: {fn.reason}")
            continue
        for fam in st["families"]:
            ev = fn.second_derivative if fam == "second-derivative" else fn.t_derivative
            facets.append(best_facet(ev, fam, name, scan[fam], smallest_entry_one))
    return facets, skipped


def eta_mass_shifts(st: dict[str, Any], facets: list[Facet]) -> list[float]:
    """|b(Gell-Mann-Okubo M_eta) - b(given M_eta)| of each facet: the O(p^6) ambiguity of
    the eta mass in the loops (docs/physics_su3.md, Sec. 7), from a second build."""
    gmo = gmo_eta_mass(st["pion_mass_mev"], st["kaon_mass_mev"])
    wanted = {CHANNELS[f.channel][0] for f in facets}
    other, _ = channel_facets({**st, "eta_mass_mev": gmo,
                               "processes": [p for p in st["processes"] if p in wanted]})
    by_key = {(f.family, f.channel): f for f in other}
    out = []
    for f in facets:
        g = by_key[(f.family, f.channel)]
        if not np.allclose(g.normal, f.normal, rtol=1e-9, atol=1e-12):
            raise RuntimeError(f"facet {f.label()} changed its normal with the eta mass")
        out.append(abs(g.offset - f.offset))
    return out


#: Lambda^2 must exceed the elastic threshold by this factor for an outer facet
MIN_WINDOW = 1.2


def heavy_scale_ratio(st: dict[str, Any], process: str) -> float:
    """Lambda/M_pi of the loop-consistent model of a process (pi K: scaled to the K*)."""
    lam = st["heavy_scale_mev"] * (PIK_SCALE_FACTOR if process == "pi K" else 1.0)
    return lam / st["pion_mass_mev"]


def relaxed_facets(st: dict[str, Any], facets: list[Facet]) -> list[Facet]:
    """The facets with offsets lowered by their truncation allowance: the loop-consistent
    model term plus the eta-mass term (chpt_su3.truncation); ``extra`` records both.

    A facet whose process has its elastic threshold within 20% of Lambda^2 (no chiral
    two-meson continuum below the heavy scale, e.g. pi K at lattice pion masses) gets no
    outer facet: the allowance is not calibrated there (the pion-mass warning applies).
    """
    mpi = st["pion_mass_mev"]
    mk, meta, mu = st["kaon_mass_mev"] / mpi, st["eta_mass_mev"] / mpi, st["mu_mev"] / mpi
    eta = eta_mass_shifts(st, facets)
    out = []
    for f, d_eta in zip(facets, eta, strict=True):
        process = CHANNELS[f.channel][0]
        fn = ChannelFunctionals(f.channel, mk, meta, mu, loops=st["loops"])
        ratio = heavy_scale_ratio(st, process)
        if ratio**2 < MIN_WINDOW * fn._domain().s_th:
            continue     # no chiral continuum below Lambda: no outer facet (not calibrated)
        model = model_allowance(fn, f.family, np.asarray(f.normal), ratio)
        shift = model.allowance + d_eta
        extra = {**f.extra, "truncation_shift": shift, "truncation_shift_region": shift,
                 "model_allowance": model.allowance, "eta_mass_shift": d_eta,
                 "heavy_scale_mev": ratio * mpi, "one_loop_offset": f.offset}
        out.append(Facet(f.normal, f.offset - shift, f.family, f.channel, f.point,
                         f.value - shift, f.status, extra))
    return out


def _warn_pion_mass(mpi: float) -> None:
    if mpi > MAX_TRUSTED_PION_MASS_MEV:
        warnings.warn(f"pion mass {mpi:g} MeV is above {MAX_TRUSTED_PION_MASS_MEV:g} MeV, "
                      "where the one-loop truncation allowance of chpt-su3 is not "
                      "calibrated (docs/physics_su3.md)", KinematicsWarning, stacklevel=3)


#: cautions printed in every report on a chpt-su3 region (docs/physics.md)
CAUTIONS = (
    "The chpt-su3 bounds apply the exact inequalities to the one-loop (O(p^4)) SU(3) "
    "amplitudes with the physical M_pi, M_K, M_eta: they hold up to O(p^6) corrections, "
    "larger than in SU(2) (the expansion is in M_K/(4 pi F)), largest near "
    "t -> 4 M_pi^2 and for pi K near s = 9 M_pi^2.",
    "With physical masses only processes whose lowest s- and u-channel thresholds are "
    "their elastic ones enter (pi pi, pi K); the others are listed as skipped above, since "
    "positivity of their absorptive parts below the elastic threshold is not provable.",
    "By default the outer facets are relaxed by a truncation allowance (loop-consistent "
    "models with the pi pi continuum chiral up to the rho and the pi K one up to the K*, "
    "plus the change of each facet with the Gell-Mann-Okubo eta mass in the loops): an "
    "estimate, not a bound; points that pass only the relaxed facets are uncertain. "
    "Above M_pi = 300 MeV the tool warns.",
    "L_i^r(mu) are in the scheme of Gasser & Leutwyler, Nucl. Phys. B250 (1985) 465, at the "
    "region's mu; a fit at another scale is run there with the one-loop Gamma_i.",
    "Isospin limit: m_u = m_d and no electromagnetism.",
    "A point outside is in tension with causality, unitarity and crossing only within "
    "the truncation; it is not a proof that the underlying theory is inconsistent.",
)


class ChptSU3(Theory):
    """One-loop SU(3) ChPT meson-meson scattering (Gasser & Leutwyler 1985)."""

    name = "chpt-su3"
    summary = "one-loop SU(3) ChPT meson-meson scattering; positivity bounds on L1, L2, L3"
    parameter_names = tuple(f"L{i}" for i in range(1, 9)) + tuple(f"L{i}r" for i in range(1, 9))
    coordinates = COORDINATES
    #: L1r ~ 0.5e-3, L2r ~ 0.8e-3, L3r ~ -3.1e-3 at mu = 770 MeV (Bijnens & Ecker,
    #: arXiv:1405.6488, BE14 fit; from memory), with room for the bounds
    typical_window = {"L1": (-2e-3, 3e-3), "L2": (-2e-3, 3e-3), "L3": (-6e-3, 2e-3)}
    coordinate_unit = "1"
    convention_specs = {CONVENTION: ConventionSpec(
        CONVENTION, (("mu_mev", "its renormalisation scale"),),
        "SU(3) L_i^r(mu) at mu = {mu_mev:g} MeV")}
    setting_names = ("families", "pion_mass_mev", "pion_masses_mev", "kaon_mass_mev",
                     "eta_mass_mev", "mu_mev", "fpi_mev", "grid", "loops", "processes",
                     "convention", "truncation", "heavy_scale_mev")
    cautions = CAUTIONS
    matchings = {"chpt-su2": "eftsieve.theories.chpt_su3.matching:su3_fit_map"}
    kinematic_inputs = {
        "pion_mass_mev": ("pion mass M_pi in MeV", DEFAULT_PION_MASS_MEV),
        "kaon_mass_mev": ("kaon mass M_K in MeV", DEFAULT_KAON_MASS_MEV),
        "eta_mass_mev": ("eta mass M_eta in MeV", DEFAULT_ETA_MASS_MEV),
        "fpi_mev": ("pion decay constant F_pi in MeV (recorded; drops out)", DEFAULT_FPI_MEV),
        "mu_mev": ("renormalisation scale mu of L_i^r in MeV", DEFAULT_MU_MEV),
    }
    families = FAMILIES
    references = REFERENCES

    def build_region(self, settings: dict[str, Any], executor: Executor = serial) -> Region:
        settings = dict(settings)
        if "pion_masses_mev" in settings:  # the CLI's --pion-mass
            masses = list(settings.pop("pion_masses_mev"))
            if len(masses) != 1:
                raise InputError(None, "--pion-mass", "chpt-su3 takes one pion mass",
                                 "give a single --pion-mass")
            settings["pion_mass_mev"] = masses[0]
        if settings.pop("convention", "Lr") not in ("Lr", "lr"):
            raise InputError(None, "--convention", "chpt-su3 regions are in L_i^r(mu)",
                             "use --convention lr (or omit it) with --scale MEV")
        keys = ("families", "pion_mass_mev", "kaon_mass_mev", "eta_mass_mev", "mu_mev",
                "fpi_mev", "grid", "loops", "processes", "truncation", "heavy_scale_mev")
        unknown = set(settings) - set(keys)
        if unknown:
            raise InputError(None, "settings", f"unknown setting(s) {sorted(unknown)}",
                             f"use {', '.join(keys)}")
        kw: dict[str, Any] = {k: (tuple(v) if k in ("families", "processes") else v)
              for k, v in settings.items()}
        st = region_settings(**kw)
        _warn_pion_mass(st["pion_mass_mev"])
        facets, skipped = channel_facets(st)
        if not facets:
            raise InputError(None, "processes", "no process has a provable domain",
                             "include 'pi pi' or 'pi K'")
        kept = irredundant(facets)
        conv = {"name": CONVENTION, "mu_mev": st["mu_mev"],
                "pion_mass_mev": st["pion_mass_mev"], "kaon_mass_mev": st["kaon_mass_mev"],
                "eta_mass_mev": st["eta_mass_mev"], "fpi_mev": st["fpi_mev"]}
        notes: tuple[str, ...] = (
            "F does not enter the one-loop bounds on L1, L2, L3 (it is recorded only)",
            "s, t in certificates are in units of M_pi^2",
            *(f"skipped {r}" for r in skipped))
        if st["truncation"] == "none":
            return Region(self.name, COORDINATES, conv, tuple(kept), st, notes=notes)
        notes += ("inner facets: the one-loop bounds; outer facets: relaxed by the "
                  "truncation allowance of loop-consistent models and the eta-mass "
                  "ambiguity (docs/physics_su3.md, Sec. 7); points between them are "
                  "uncertain",)
        relaxed = relaxed_facets(st, kept)
        if not relaxed:
            raise InputError(None, "--heavy-scale", "no process has a chiral continuum "
                             "below the heavy scale at this pion mass",
                             "raise --heavy-scale or use --truncation none")
        outer = irredundant(relaxed)
        dropped = {f.channel for f in kept} - {f.channel for f in relaxed}
        notes += tuple(f"no outer facet for {c}: its elastic threshold is too close to the "
                       "heavy scale for a calibrated allowance" for c in sorted(dropped))
        return Region(self.name, COORDINATES, conv, tuple(outer), st,
                      inner_facets=tuple(kept), notes=notes)

    def marginal_band(self, region: Region) -> float:
        """1e-6: L_i^r and the facet offsets are O(1e-3), so this is the band that 1e-3
        is for lbar."""
        return SMALL_COORDINATE_BAND

    def infer_convention(self, names: tuple[str, ...]) -> str | None:
        """``L1r``, ``L2r``, ... name the L_i^r constants (their scale must still be given)."""
        known = [n for n in names if n in self.parameter_names]
        if known and all(n.endswith("r") for n in known):
            return CONVENTION
        return None

    def region_settings_for_fit(self, fit: Fit) -> dict[str, Any]:
        kin = fit.kinematics
        mu = kin.get("mu_mev", DEFAULT_MU_MEV)
        for p in fit.parameters:
            if p.convention.name == CONVENTION and p.convention.mu_mev is not None:
                mu = p.convention.mu_mev
                break
        return region_settings(
            pion_mass_mev=kin.get("pion_mass_mev", DEFAULT_PION_MASS_MEV),
            kaon_mass_mev=kin.get("kaon_mass_mev", DEFAULT_KAON_MASS_MEV),
            eta_mass_mev=kin.get("eta_mass_mev", DEFAULT_ETA_MASS_MEV),
            mu_mev=mu, fpi_mev=kin.get("fpi_mev", DEFAULT_FPI_MEV))

    def validate_fit(self, fit: Fit) -> None:
        found: dict[int, str] = {}
        for i, p in enumerate(fit.parameters):
            if p.convention.name == "none":
                continue
            if p.convention.name != CONVENTION:
                raise InputError(fit.source, f"parameters[{i}].convention",
                                 f"convention '{p.convention.name}' is not one of chpt-su3",
                                 f"use {CONVENTION} (with mu_mev)")
            idx = lec_index_su3(p.name)
            if idx is None:
                raise InputError(fit.source, f"parameters[{i}].name",
                                 f"'{p.name}' is not an SU(3) constant", "use L1 .. L8")
            if p.convention.mu_mev is None:
                raise InputError(fit.source, f"parameters[{i}].convention",
                                 f"{CONVENTION} needs its renormalisation scale",
                                 "add mu_mev (MeV)")
            if idx in found:
                raise InputError(fit.source, f"parameters[{i}].name",
                                 f"L{idx} appears twice ({found[idx]} and {p.name})",
                                 "give each constant once")
            found[idx] = p.name

    def coordinate_map(self, fit: Fit, region: Region) -> CoordinateMap:
        mu_region = float(region.convention["mu_mev"])
        jac = np.zeros((3, len(fit.parameters)))
        shift = np.zeros(3)
        desc = []
        for k, idx in enumerate((1, 2, 3)):
            cols = [i for i, p in enumerate(fit.parameters)
                    if p.convention.name == CONVENTION and lec_index_su3(p.name) == idx]
            if not cols:
                raise InputError(fit.source, "parameters", f"the region needs L{idx} but the "
                                 f"fit has no L{idx} in convention {CONVENTION}",
                                 "add the parameter with its convention")
            p = fit.parameters[cols[0]]
            mu_fit = _scale(p.convention)
            jac[k, cols[0]] = 1.0
            shift[k] = float(run_lr(np.zeros(1), (idx,), mu_fit, mu_region)[0])
            desc.append(f"{COORDINATES[k]}(mu={mu_region:g} MeV) = {p.name}(mu={mu_fit:g} MeV)"
                        f" + {shift[k]:.12g}")
        return CoordinateMap(jac, shift, tuple(desc))


def _scale(conv: Convention) -> float:
    if conv.mu_mev is None:
        raise InputError(None, "convention", f"{CONVENTION} needs mu_mev", "add mu_mev")
    return float(conv.mu_mev)


THEORY = ChptSU3()
