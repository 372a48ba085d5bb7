"""The chpt-su3 region: scale independence, SU(2) matching, limits, rule-in, the API.

The amplitudes themselves are tested in test_su3_amplitude.py.

Sources of the check values (each test names its own):
* Gasser & Leutwyler, Nucl. Phys. B250 (1985) 465 (GL85): the O(p^4) Lagrangian, the
  unequal-mass Jbar (App. A), Gamma_i (Table 1), the SU(2) matching (Eq. (11.6)).
* Bernard, Kaiser & Meissner, Nucl. Phys. B357 (1991) 129 (BKM91): the one-loop pi pi
  amplitude of SU(3) ChPT, re-typed in :func:`_bkm_pipi` (from memory).
* Weinberg, Phys. Rev. Lett. 17 (1966) 616: the O(p^2) pi pi and pi K amplitudes.
Equation numbers are from memory and were not re-checked against the papers.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest

from eftsieve.fit.conventions import Convention
from eftsieve.theories import get_theory
from eftsieve.theories.chpt_su3 import amplitude as amp3
from eftsieve.theories.chpt_su3.channels import (
    ETA,
    K_PLUS,
    K_ZERO,
    PI_PLUS,
    PI_ZERO,
    ChannelFunctionals,
    t_derivative_combination,
)
from eftsieve.theories.chpt_su3.theory import (
    THEORY,
    run_lr,
    su2_from_su3,
    su2_matching_map,
)
from tests.theories.chpt_su3.su3_common import (
    ES,
    MK,
    MPI,
    MU,
    PIPI,
    lagrangian_vertex,
    me,
    mk,
    momenta,
)


@pytest.fixture(scope="module")
def region():
    return THEORY.build_region({"families": ["second-derivative", "t-derivative"],
                                "truncation": "none"})


@pytest.fixture(scope="module")
def second_region():
    return THEORY.build_region({"families": ["second-derivative"], "truncation": "none"})



def test_scale_independence_gives_the_gl_gammas(second_region):
    """Regions at two scales agree after running L_i^r with Gamma = (3/32, 3/16, 0) (GL85)."""
    other = THEORY.build_region({"families": ["second-derivative"], "mu_mev": 1000.0,
                                 "truncation": "none"})
    shift = run_lr(np.zeros(3), (1, 2, 3), 770.0, 1000.0)
    assert len(other.facets) == len(second_region.facets)
    for fa, fb in zip(second_region.facets, other.facets, strict=True):
        assert fb.channel == fa.channel
        assert fb.offset == pytest.approx(fa.offset + np.asarray(fa.normal) @ shift,
                                          rel=1e-9, abs=1e-12)
    # and a wrong Gamma_1 would show: the pi0 pi0 normal (2, 2, 1) weighs it
    wrong = shift + np.array([1e-3 / (16 * math.pi**2), 0, 0])
    f = next(f for f in second_region.facets if f.channel == "pi0 pi0")
    g = next(g for g in other.facets if g.channel == "pi0 pi0")
    assert abs(g.offset - f.offset - np.asarray(f.normal) @ wrong) > 1e-7


# ---- matching to SU(2) -----------------------------------------------------------------
def _su2_curvature(name, x, lecs, mk_, mu_):
    """d^2T/ds^2 of chpt-su2 (GL 1984) with l^r from the GL85 matching, units M_pi = 1."""
    from eftsieve.theories.chpt_su2 import amplitude as pipi
    from eftsieve.theories.chpt_su2.theory import CHANNELS as SU2

    l12 = su2_from_su3(np.asarray(lecs), mu_ * MPI, mk_ * MPI)
    gam = (1 / 3, 2 / 3)
    lbar = [32 * math.pi**2 / g * lr - math.log(1 / mu_**2) for g, lr in zip(gam, l12, strict=True)]
    amp = pipi.channel_amplitude((lbar[0], lbar[1], 0.0, 0.0), *SU2[name])
    return pipi.second(amp, x, ES)


@pytest.mark.parametrize("name", list(PIPI))
def test_heavy_kaon_limit_is_su2_with_the_gl_matching(name):
    """As M_K -> infinity (M_eta from Gell-Mann-Okubo) the SU(3) pi pi curvature tends to
    that of SU(2) ChPT with l1^r = 4L1 + 2L3 - nu_K/24, l2^r = 4L2 - nu_K/12 (GL85), with
    corrections O(M_pi^2/M_K^2); dropping nu_K would leave an O(nu_K) difference."""
    lecs = (0.4e-3, 1.3e-3, -3.1e-3)
    x = np.array([[0.5, 1.0, 2.5], [1.7, 3.0, -0.7], [0.1, 3.9, 0.0], [3.0, 0.2, 0.8]])
    diffs = []
    for mk_ in (20.0, 40.0):
        me_ = math.sqrt((4 * mk_**2 - 1) / 3)
        fn = ChannelFunctionals(name, mk_, me_, MU)
        su3 = amp3.second(fn.amp, x, ES, amp3.loop_jets(fn.amp, x, 2, skip=(2,))) + fn.k @ lecs
        su2 = _su2_curvature(name, x, lecs, mk_, MU)
        diffs.append(np.abs(su3 - su2).max())
        nu = (math.log(mk_**2 / MU**2) + 1) / (32 * math.pi**2)
        assert diffs[-1] < 2e-3 * nu
    assert diffs[1] < diffs[0] / 3          # ~ 1/M_K^2 (up to logarithms)


def test_pipi_facets_agree_with_chpt_su2_through_the_matching(second_region):
    """The pi pi facets of chpt-su3 vs the chpt-su2 region (lr at mu) pulled back through
    the matching; they differ by the O(M_pi^2/M_K^2) K and eta loops only (~0.2%)."""
    su2 = get_theory("chpt-su2").build_region({"convention": "lr", "mu_mev": 770.0,
                                               "families": ["second-derivative"],
                                               "truncation": "none"})
    amap = su2_matching_map(770.0, MK)
    su3 = [f for f in second_region.facets if f.channel.count("pi") == 2]
    matched = 0
    for f in su2.facets:
        n = np.asarray(f.normal) @ amap.jacobian
        b = f.offset - np.asarray(f.normal) @ amap.shift
        for g in su3:
            m = np.asarray(g.normal)
            if np.allclose(m / np.linalg.norm(m), n / np.linalg.norm(n), atol=1e-9):
                matched += 1
                got, ref = g.offset / np.linalg.norm(m), b / np.linalg.norm(n)
                assert got == pytest.approx(ref, rel=5e-3)
    assert matched == len(su2.facets) == 3


# ---- chiral limit at tree level -------------------------------------------------------
def _forward_normal(a, b):
    """c with d^2T/ds^2 (t = 0, massless) = c . (L1, L2, L3), from the Lagrangian."""
    vecs = (a, b, a.conj(), b.conj())
    vals = np.array([lagrangian_vertex(vecs, momenta(s, 0.0, 0.0, 0.0), 1.0,
                                        chi_scale=0.0)[1][:3] for s in (1.0, 2.0, 3.0)])
    return (vals[0] - 2 * vals[1] + vals[2]).real


def test_chiral_limit_tree_bounds_from_product_states():
    """L2 >= 0, 2L1 + 2L2 + L3 >= 0, 3L2 + L3 >= 0 are the forward bounds of all product
    flavour states at tree level in the chiral limit (derived here; cf. Mateu,
    arXiv:0801.3627), and the machinery reduces to them with loops off, equal masses."""
    basis = np.array([[0, 1, 0], [2, 2, 1], [0, 3, 1]], dtype=float)
    for (a, b), row in (((PI_PLUS, PI_ZERO), 0), ((PI_ZERO, PI_ZERO), 1), ((PI_ZERO, ETA), 2)):
        c = _forward_normal(a, b)
        assert np.allclose(np.cross(c, basis[row]), 0, atol=1e-9) and c @ basis[row] > 0
    rng = np.random.default_rng(7)
    for _ in range(40):
        a, b = (rng.normal(size=8) + 1j * rng.normal(size=8) for _ in range(2))
        c = _forward_normal(a / np.linalg.norm(a), b / np.linalg.norm(b))
        lam = np.linalg.solve(basis.T, c)              # c = sum lam_i basis_i
        assert lam.min() > -1e-9 * np.abs(c).max()
    reg = THEORY.build_region({"loops": False, "truncation": "none", "pion_mass_mev": 1.0,
                               "kaon_mass_mev": 1.0,
                               "eta_mass_mev": 1.0, "families": ["second-derivative"]})
    normals = np.array([np.asarray(f.normal) / np.linalg.norm(f.normal) for f in reg.facets])
    ref = basis / np.linalg.norm(basis, axis=1)[:, None]
    assert len(reg.facets) == 3
    assert all(np.abs(normals - r).max(axis=1).min() < 1e-12 for r in ref)
    assert all(abs(f.offset) < 1e-15 for f in reg.facets)


def test_physical_masses_use_pi_pi_and_pi_k_only(region):
    assert {f.channel for f in region.facets} <= {"pi+ pi0", "pi+ pi-", "pi+ pi+", "pi0 pi0",
                                                  "pi+ K+", "pi- K+"}
    skipped = " ".join(n for n in region.notes if n.startswith("skipped"))
    for name in ("pi0 eta", "K+ K+", "K+ K-", "K0 K-", "K+ eta", "eta eta"):
        assert name in skipped
    from eftsieve.errors import InputError

    with pytest.raises(InputError, match="provable"):
        THEORY.build_region({"processes": ["K Kbar", "eta eta"]})


# ---- rule-in: amplitudes UV-complete by construction ----------------------------------
def _resonances(masses2, spins, g, ma, mb):
    """s- and u-channel exchanges g (2J+1) P_J(z) [1/(m^2 - s) + 1/(m^2 - u)] of a b -> a b,
    z = 1 + 2 m^2 t/lambda(m^2, ma^2, mb^2): positive absorptive parts for 0 <= t < 4,
    m^2 > (ma + mb)^2, so they obey every positivity bound exactly."""
    tot = 2 * ma**2 + 2 * mb**2

    def amp(s, t):
        u = tot - s - t
        out = mp.mpf(0)
        for m2, j, c in zip(masses2, spins, g, strict=True):
            lam = (m2 - (ma + mb) ** 2) * (m2 - (ma - mb) ** 2)
            out += c * (2 * j + 1) * mp.legendre(j, 1 + 2 * m2 * t / lam) * (
                1 / (m2 - s) + 1 / (m2 - u))
        return out
    return amp


@pytest.mark.parametrize("seed", [0, 1])
def test_rule_in_resonance_sums_pi_k(seed):
    mp.mp.dps = 40
    rng = np.random.default_rng(seed)
    thr = (1 + mk) ** 2
    amp = _resonances(list(thr + rng.uniform(0.5, 40, 3)), list(rng.integers(0, 5, 3)),
                      list(rng.uniform(0.1, 2.0, 3)), 1.0, mk)
    for t in (0.0, 1.3, 3.99):
        lo = (mk - 1) ** 2 - t
        for frac in (0.02, 0.3, 0.5, 0.8, 0.98):
            s = mp.mpf(lo + frac * (thr - lo))
            sec = float(mp.diff(lambda v, t=t: amp(v, t), s, 2))
            dfs = float(mp.diff(lambda w, s=s: mp.diff(lambda v: amp(v, w), s, 2), t, 1))
            ds3 = float(mp.diff(lambda v, t=t: amp(v, t), s, 3))
            u = 2 + 2 * mk**2 - float(s) - t
            comb, _ = t_derivative_combination(np.array([sec]), np.array([dfs]),
                                               np.array([ds3]), np.array([float(s)]),
                                               np.array([u]), thr, thr)
            assert sec >= 0 and comb[0] >= -1e-12 * abs(sec)


def test_t_derivative_combination_reduces_to_su2():
    from eftsieve.theories.chpt_su2.theory import t_derivative_combination as su2_comb

    rng = np.random.default_rng(1)
    s, t = rng.uniform(-1, 3.9, 50), rng.uniform(0, 4, 50)
    u = 4 - s - t
    keep = u < 4
    args = [rng.normal(size=50)[keep] for _ in range(3)]
    a = t_derivative_combination(*args, s[keep], u[keep], 4.0, 4.0)
    b = su2_comb(*args, s[keep], u[keep])
    np.testing.assert_allclose(a[0], b[0], rtol=1e-14)


# ---- facets, certificates and channels --------------------------------------------------
def test_certificates_are_attained(region):
    for f in region.facets:
        fn = ChannelFunctionals(f.channel, mk, me, MU)
        dom = fn.domain
        t = f.point["t"]
        lo = dom.total - t - dom.u_th + 1e-3
        cube = np.array([[(f.point["s"] - lo) / (dom.s_th - 1e-3 - lo), t / dom.t_max]])
        ev = fn.second_derivative if f.family == "second-derivative" else fn.t_derivative
        k0, k, _ = ev(cube)
        n = np.asarray(f.normal)
        on = n * f.offset / (n @ n)
        assert k0[0] + k[0] @ on == pytest.approx(0.0, abs=1e-9)
        assert k0[0] + k[0] @ (on - 1e-4 * n) < 0


def test_corner_channels_are_extreme():
    """Any pi pi or pi K superposition is an affine mix of the corner channels."""
    rng = np.random.default_rng(5)
    x = np.array([[0.3, 2.0, 1.7], [1.5, 0.5, 2.0], [2.2, 3.1, -1.3]])
    s_of = {n: None for n in ("pi+ pi0", "pi+ pi-", "pi+ pi+", "pi0 pi0", "pi+ K+", "pi- K+")}
    for n in s_of:
        fn = ChannelFunctionals(n, mk, me, MU)
        xx = x if n.count("pi") == 2 else np.c_[x[:, 0] + 8, x[:, 1], 2 + 2 * mk**2 - 8
                                                 - x[:, 0] - x[:, 1]]
        s_of[n] = amp3.second(fn.amp, xx, ES, amp3.loop_jets(fn.amp, xx, 2, skip=(2,)))
    for _ in range(5):
        a3, b3 = (rng.normal(size=3) + 1j * rng.normal(size=3) for _ in range(2))
        a3, b3 = a3 / np.linalg.norm(a3), b3 / np.linalg.norm(b3)
        x1, x2 = abs(a3 @ b3) ** 2, abs(a3 @ b3.conj()) ** 2
        a8, b8 = np.r_[a3, np.zeros(5)], np.r_[b3, np.zeros(5)]
        amp = amp3.channel_amplitude((a8, b8), ("pi", "pi"), mk, me, MU)
        got = amp3.second(amp, x, ES, amp3.loop_jets(amp, x, 2, skip=(2,)))
        ref = (s_of["pi+ pi0"] + x1 * (s_of["pi+ pi-"] - s_of["pi+ pi0"])
               + x2 * (s_of["pi+ pi+"] - s_of["pi+ pi0"]))
        np.testing.assert_allclose(got, ref, rtol=1e-10)
        c = rng.normal(size=2) + 1j * rng.normal(size=2)
        kb = (c[0] * K_PLUS + c[1] * K_ZERO) / np.linalg.norm(c)
        amp = amp3.channel_amplitude((a8, kb), ("pi", "K"), mk, me, MU)
        xx = np.c_[x[:, 0] + 8, x[:, 1], 2 + 2 * mk**2 - 8 - x[:, 0] - x[:, 1]]
        got = amp3.second(amp, xx, ES, amp3.loop_jets(amp, xx, 2, skip=(2,)))
        w = (got[0] - s_of["pi- K+"][0]) / (s_of["pi+ K+"][0] - s_of["pi- K+"][0])
        assert -1e-9 <= w <= 1 + 1e-9
        np.testing.assert_allclose(got, w * s_of["pi+ K+"] + (1 - w) * s_of["pi- K+"],
                                   rtol=1e-9)


def test_region_values(region, second_region):
    """Shape of the default region; the t-derivative family is stronger (cf. chpt-su2)."""
    assert region.coordinates == ("L1", "L2", "L3")
    assert region.convention["name"] == "Lr" and region.convention["mu_mev"] == 770.0
    normals = {tuple(np.round(np.asarray(f.normal) / min(abs(v) for v in f.normal if v), 9))
               for f in region.facets}
    assert {(0.0, 1.0, 0.0), (0.0, 4.0, 1.0)} <= normals
    for f in second_region.facets:
        g = next((g for g in region.facets if np.allclose(g.normal, f.normal)), None)
        if g is not None:
            assert g.offset >= f.offset


# ---- the Theory API ----------------------------------------------------------------------
def _fit(mu_mev, names=("L1", "L2", "L3"), conv="Lr"):
    from eftsieve.fit.model import Fit, Parameter

    params = tuple(Parameter(n, Convention(conv, mu_mev=mu_mev)) for n in names)
    return Fit("toy", "chpt-su3", params, {}, np.full(len(names), 1e-3),
               np.eye(len(names)) * 1e-8)


def test_coordinate_map_runs_the_scale(second_region):
    fit = _fit(1000.0)
    cmap = THEORY.coordinate_map(fit, second_region)
    other = THEORY.build_region({"families": ["second-derivative"], "mu_mev": 1000.0,
                                 "truncation": "none"})
    pts = np.random.default_rng(2).normal(0, 3e-3, (4000, 3))
    assert np.array_equal(second_region.contains(cmap(pts)), other.contains(pts))
    assert THEORY.region_settings_for_fit(fit)["mu_mev"] == 1000.0


def test_validate_fit_rejects_bad_cards():
    from eftsieve.errors import InputError

    THEORY.validate_fit(_fit(770.0))
    with pytest.raises(InputError, match="twice"):
        THEORY.validate_fit(_fit(770.0, names=("L1", "L1r", "L3")))
    with pytest.raises(InputError, match="not one of chpt-su3"):
        THEORY.validate_fit(_fit(770.0, conv="lbar"))
    with pytest.raises(InputError, match="unknown setting"):
        THEORY.build_region({"order": 4})
    with pytest.raises(InputError, match="one pion mass"):
        THEORY.build_region({"pion_masses_mev": [139.57, 200.0]})


def test_region_file_round_trip(region, tmp_path):
    from eftsieve.region.model import Region

    back = Region.load(region.save(tmp_path / "su3.json"))
    assert back.hash == region.hash and back.facets == region.facets


def test_slices_and_projections(region):
    from eftsieve.region.slices import region_projection, region_slice

    names, poly = region_slice(region, {"L1": 5e-4})
    assert names == ("L2", "L3") and len(poly) >= 3
    pts = np.c_[np.full(len(poly), 5e-4), poly]
    margins = region.margins(pts)
    assert margins.min() > -1e-12
    assert (np.abs(margins) < 1e-12).any(axis=0).sum() >= 2      # facets bound the slice
    shadow = region_projection(region, ("L2", "L3"))
    c = poly.mean(axis=0)                      # the slice lies inside the shadow
    edges = np.roll(shadow, -1, axis=0) - shadow
    cross = edges[:, 0] * (c[1] - shadow[:, 1]) - edges[:, 1] * (c[0] - shadow[:, 0])
    assert (cross > 0).all()
