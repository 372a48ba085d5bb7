"""An SU(3) fit of L1, L2, L3 checked against the SU(2) region through the matching."""

from __future__ import annotations

import math

import numpy as np
import pytest

from eftsieve.check.run import run_check
from eftsieve.check.verdicts import CheckSettings
from eftsieve.fit.conventions import Convention
from eftsieve.fit.model import Fit, Parameter
from eftsieve.theories import coordinate_map, get_theory
from tests.check_values import GAMMA, M_PI_MEV, MU_MEV


def test_su3_fit_maps_through_the_one_loop_matching():
    """lbar_i = (32 pi^2/gamma_i) l_i^r - ln(M^2/mu^2) (GL 1984) with
    l1^r = 4 L1 + 2 L3 - nu_K/24, l2^r = 4 L2 - nu_K/12, nu_K = (ln(M_K^2/mu^2) + 1)/(32 pi^2)
    (GL, Nucl. Phys. B250 (1985) 465) (from memory)."""
    lr = Convention("Lr", mu_mev=MU_MEV)
    params = tuple(Parameter(n, lr) for n in ("L1", "L2", "L3"))
    mean = np.array([0.4e-3, 1.35e-3, -3.5e-3])
    fit = Fit("su3", "chpt-su3", params, {"kaon_mass_mev": 493.68}, mean, np.eye(3) * 1e-8)
    region = get_theory("chpt-su2").build_region({})
    cmap = coordinate_map(fit, region)
    nu_k = (math.log(493.68**2 / MU_MEV**2) + 1) / (32 * math.pi**2)
    l1 = 4 * mean[0] + 2 * mean[2] - nu_k / 24
    l2 = 4 * mean[1] - nu_k / 12
    log = math.log(M_PI_MEV**2 / MU_MEV**2)
    expected = [32 * math.pi**2 / GAMMA[1] * l1 - log, 32 * math.pi**2 / GAMMA[2] * l2 - log]
    np.testing.assert_allclose(cmap(mean[None, :])[0], expected, rtol=1e-12)
    res = run_check(fit, region, CheckSettings(draws=5000), None)
    assert res.summary["n_total"] == 5000 and res.summary["theory"] == "chpt-su3"


def test_su2_fit_against_su3_region_is_refused():
    from eftsieve.errors import InputError

    lbar = Convention("lbar", pion_mass_mev=M_PI_MEV)
    fit = Fit("su2", "chpt-su2", (Parameter("lbar1", lbar), Parameter("lbar2", lbar)), {},
              np.zeros(2), np.eye(2))
    region = get_theory("chpt-su3").build_region({"families": ["second-derivative"],
                                                      "truncation": "none"})
    with pytest.raises(InputError, match="region is for 'chpt-su3'"):
        run_check(fit, region, CheckSettings(draws=100), None)
