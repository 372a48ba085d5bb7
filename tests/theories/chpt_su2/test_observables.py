"""Threshold parameters of pi-pi scattering from the numerical partial-wave projection.

Check values come from outside the project (the formulas are in tests/check_values.py):

* D-wave scattering lengths: Gasser & Leutwyler, Ann. Phys. 158 (1984) 142 (the
  one-loop D-wave scattering lengths; also quoted in Bijnens et al.,
  arXiv:hep-ph/9707291), in units of M_pi, with F = F_pi / M_pi:
      a_2^0 = (lbar1 + 4 lbar2 - 53/8) / (1440 pi^3 F^4),
      a_2^2 = (lbar1 + lbar2 - 103/40) / (1440 pi^3 F^4).   (from memory)
* Leading order: Weinberg, Phys. Rev. Lett. 17 (1966) 616, a_0^0 = 7/(32 pi F^2),
  a_0^2 = -1/(16 pi F^2); the LO slopes and a_1^1 follow from projecting Weinberg's
  amplitude A = (s - M^2)/F^2 in the normalisation of the module:
      b_0^0 = 1/(4 pi F^2), b_0^2 = -1/(8 pi F^2), a_1^1 = 1/(24 pi F^2), b_1^1 = 0.
* One-loop S and P waves: derived here by hand from the one-loop amplitude of
  Gasser & Leutwyler (1984), Eq. (17.5), at threshold (s = 4, t = u = 0), with
  Jbar(0) = 0, Jbar'(0) = 1/(96 pi^2), Jbar''(0) = 1/(480 pi^2), Jbar(4) = 1/(8 pi^2),
  Re Jbar'(4^+) = -1/(32 pi^2), and a_0 = Re T(4,0)/(32 pi),
  b_0 = D_s Re T/(8 pi) (D_s = d/ds at fixed t), a_1 = D_t T/(48 pi),
  b_1 = (2 D_s D_t - D_t^2) T/(24 pi) (D_t = d/dt at fixed s).  The results, in the
  factorised form in which Gasser & Leutwyler (1984) quote them (recognised from
  memory; the equation numbers are not re-checked), x = 1/(12 pi^2 F^2):
      a_0^0 = 7/(32 pi F^2) {1 + (5/7) x [lbar1 + 2 lbar2 - 3/8 lbar3 + 21/10 lbar4 + 21/8]}
      b_0^0 = 1/(4 pi F^2) {1 + x [2 lbar1 + 3 lbar2 + 3/2 lbar4 - 13/16]}
      a_0^2 = -1/(16 pi F^2) {1 - x [lbar1 + 2 lbar2 - 3/8 lbar3 - 3/2 lbar4 + 3/8]}
      b_0^2 = -1/(8 pi F^2) {1 - x [lbar1 + 3 lbar2 - 3/2 lbar4 - 5/16]}
      a_1^1 = 1/(24 pi F^2) {1 - x [lbar1 - lbar2 - 3/2 lbar4 + 65/48]}
      b_1^1 = (lbar2 - lbar1 + 97/120) / (288 pi^3 F^4).
  These use only the published amplitude and the normalisation, not the numerical
  projection and q^2 -> 0 extraction under test.
"""

from __future__ import annotations

import time

import numpy as np
import pytest

from eftsieve.theories.chpt_su2 import observables as th
from eftsieve.theories.chpt_su2.observables import (
    OBSERVABLES,
    ThresholdParameter,
    threshold_parameter,
    threshold_parameters,
)
from tests.check_values import LEADING_ORDER, d_wave_closed, s_p_wave_closed

# Two pion masses: the physical point (PDG charged pion, F_pi = 92.07 MeV, common
# practice) and a heavier, lattice-like point.
KINEMATICS = [(139.57, 92.07), (300.0, 110.0)]
# lbar points chosen so that none of the combinations below nearly cancels.
LBARS = [(-0.4, 4.3, 2.9, 4.4), (1.0, 2.0, 3.0, 4.0), (-2.0, 6.0, 0.5, 3.0)]


@pytest.mark.parametrize("mpi, fpi", KINEMATICS)
@pytest.mark.parametrize("lbar", LBARS)
def test_d_wave_scattering_lengths_match_gasser_leutwyler(lbar, mpi, fpi):
    expected = d_wave_closed(lbar, fpi / mpi)
    for name, value in expected.items():
        got = threshold_parameter(name, lbar, mpi, fpi)
        assert got == pytest.approx(value, rel=1e-9), name


@pytest.mark.parametrize("mpi, fpi", KINEMATICS)
@pytest.mark.parametrize("lbar", LBARS)
def test_s_and_p_waves_match_closed_forms(lbar, mpi, fpi):
    expected = s_p_wave_closed(lbar, fpi / mpi)
    got = threshold_parameters(list(expected), np.array([lbar]), mpi, fpi)[0]
    np.testing.assert_allclose(got, list(expected.values()), rtol=1e-10)
    for name, value in expected.items():
        assert threshold_parameter(name, lbar, mpi, fpi) == pytest.approx(value, rel=1e-10)


def test_tree_projection_gives_weinberg_values():
    # the tree part alone (the 1/F^2 coefficient), projected numerically
    for name, value in LEADING_ORDER.items():
        kind, iso, ell = th.parse_name(name)
        tree = th._affine(iso, ell)[0 if kind == "a" else 1, 0]
        assert tree == pytest.approx(value, rel=1e-12), name
    assert abs(th._affine(1, 1)[1, 0]) < 1e-14          # b_1^1 vanishes at LO
    for iso in (0, 2):                                 # no D waves at LO
        assert np.all(np.abs(th._affine(iso, 2)[:, 0]) < 1e-13)


@pytest.mark.parametrize("name", sorted(LEADING_ORDER))
def test_one_loop_approaches_weinberg_as_f_grows(name):
    lbar, mpi = LBARS[0], 139.57
    rel = []
    for fpi in (10 * mpi, 20 * mpi):
        lo = LEADING_ORDER[name] / (fpi / mpi) ** 2
        rel.append((threshold_parameter(name, lbar, mpi, fpi) - lo) / lo)
    assert 1e-5 < abs(rel[0]) < 0.05                   # a small O(M^2/F^2) correction
    assert rel[0] / rel[1] == pytest.approx(4.0, rel=1e-7)   # that scales like 1/F^2


def test_d_wave_slopes_do_not_depend_on_lbar_and_are_grid_stable():
    # the O(p^4) polynomial is quadratic in s, t: it gives a_2 but no b_2
    for iso in (0, 2):
        b_row = th._affine(iso, 2)[1]
        assert np.all(np.abs(b_row[2:]) < 1e-9 * abs(b_row[1]))
    # b_2 has no closed form here: check it is stable under a different grid
    alt = {2: th._grid(2, 0.3, 32, 16, 16)}
    for iso in (0, 2):
        for lbar in LBARS[:2]:
            ref = th._projected(iso, 2, lbar, 0.66)
            other = th._projected(iso, 2, lbar, 0.66, alt[2])
            np.testing.assert_allclose(other, ref, rtol=1e-9)


@pytest.mark.parametrize("mpi, fpi", KINEMATICS)
def test_vectorised_equals_scalar(mpi, fpi, rng):
    lbars = rng.normal([-0.4, 4.3, 2.9, 4.4], 1.5, size=(6, 4))
    vec = threshold_parameters(OBSERVABLES, lbars, mpi, fpi)
    assert vec.shape == (6, len(OBSERVABLES))
    scalar = np.array([[threshold_parameter(n, lb, mpi, fpi) for n in OBSERVABLES]
                       for lb in lbars])
    scale = np.abs(scalar).max(axis=0)
    np.testing.assert_allclose(vec, scalar, rtol=1e-9, atol=1e-12 * scale.max())
    assert np.all(np.abs(vec - scalar) <= 1e-9 * scale)
    one = threshold_parameters(OBSERVABLES, lbars[0], mpi, fpi)
    assert one.shape == (len(OBSERVABLES),)
    np.testing.assert_allclose(one, vec[0], rtol=1e-14, atol=1e-18)


def test_direct_projection_is_affine_in_lbar(rng):
    mpi, fpi = KINEMATICS[0]
    x, y = rng.normal(size=4), rng.normal(size=4)
    zero = np.zeros(4)
    for name in OBSERVABLES:
        f = [threshold_parameter(name, p, mpi, fpi) for p in (x, y, x + y, zero, 3 * x)]
        scale = max(abs(v) for v in f)
        assert abs(f[2] - f[0] - f[1] + f[3]) < 1e-10 * scale, name
        assert abs(f[4] - 3 * f[0] + 2 * f[3]) < 1e-10 * scale, name


def test_vectorised_is_affine_and_fast(rng):
    mpi, fpi = KINEMATICS[0]
    lbars = rng.normal(size=(10_000, 4))
    threshold_parameters(OBSERVABLES, lbars[:1], mpi, fpi)   # warm the cache
    start = time.perf_counter()
    out = threshold_parameters(OBSERVABLES, lbars, mpi, fpi)
    assert time.perf_counter() - start < 0.5
    offset, matrix = th.affine_coefficients(OBSERVABLES, mpi, fpi)
    np.testing.assert_allclose(out, lbars @ matrix.T + offset, rtol=1e-13, atol=1e-15)
    half = threshold_parameters(OBSERVABLES, 0.5 * (lbars[:5] + lbars[5:10]), mpi, fpi)
    np.testing.assert_allclose(half, 0.5 * (out[:5] + out[5:10]), rtol=1e-12, atol=1e-15)


def test_observable_names():
    assert set(OBSERVABLES) == {"a_I0_l0", "b_I0_l0", "a_I1_l1", "b_I1_l1", "a_I0_l2", "b_I0_l2",
                                "a_I2_l0", "b_I2_l0", "a_I2_l2", "b_I2_l2"}
    assert th.parse_name("b_I1_l1") == ("b", 1, 1)
    assert th.parse_name("a_I0_l2") == ("a", 0, 2)          # isospin first, then l
    assert th.units("a_I0_l0") == "1" and th.units("b_I0_l2") == "M_pi^-6"


@pytest.mark.parametrize("name", ["a_I1_l0", "a_I0_l1", "b_I2_l1", "a_I1_l2", "b_I0_l3"])
def test_bose_forbidden_waves_raise(name):
    with pytest.raises(ValueError, match="Bose symmetry"):
        threshold_parameter(name, LBARS[0], *KINEMATICS[0])


@pytest.mark.parametrize("name", ["c0_0", "a0", "a3_1", "a1_3", "A0_0", 7])
def test_unknown_names_raise(name):
    with pytest.raises(ValueError):
        threshold_parameters([name], np.array([LBARS[0]]), *KINEMATICS[0])


def test_bad_inputs_raise():
    with pytest.raises(ValueError, match="lbar"):
        threshold_parameter("a_I0_l0", (1.0, 2.0, 3.0), *KINEMATICS[0])
    with pytest.raises(ValueError, match="lbar"):
        threshold_parameters(OBSERVABLES, np.zeros((3, 5)), *KINEMATICS[0])
    with pytest.raises(ValueError, match="fpi_mev"):
        threshold_parameter("a_I0_l0", LBARS[0], 139.57, -92.0)
    with pytest.raises(ValueError, match="pion_mass_mev"):
        threshold_parameters(OBSERVABLES, np.zeros((1, 4)), float("nan"), 92.0)


def test_record_to_dict():
    mpi, fpi = KINEMATICS[0]
    rec = th.evaluate("a_I0_l2", LBARS[0], mpi, fpi)
    assert isinstance(rec, ThresholdParameter)
    expected = d_wave_closed(LBARS[0], fpi / mpi)["a_I0_l2"]
    assert rec.to_dict() == {"name": "a_I0_l2", "isospin": 0, "l": 2, "kind": "a",
                             "value": pytest.approx(expected, rel=1e-9), "units": "M_pi^-4"}


def test_old_threshold_names_are_refused_with_both_readings():
    """Regression (issue 16, item 12): 'a0_2' meant a_2^0 but reads as a_0^2."""
    with pytest.raises(ValueError, match="old spelling") as err:
        th.parse_name("a0_2")
    assert "'a_I0_l2'" in str(err.value) and "'a_I2_l0'" in str(err.value)


def test_old_threshold_names_in_an_observables_file_name_the_field(tmp_path):
    from eftsieve.errors import InputError
    from eftsieve.theories.chpt_su2.observables import load_observables

    path = tmp_path / "obs.yaml"
    path.write_text("format_version: 1\nobservables:\n"
                    "  - {name: a2_0, pion_mass_mev: 139.57, fpi_mev: 92.07}\n"
                    "values: [-0.04]\ncovariance: [[1e-6]]\n")
    with pytest.raises(InputError) as err:
        load_observables(path)
    line = err.value.one_line()
    assert "observables[0].name" in line and "a_I2_l0" in line and str(path) in line
