"""`eftsieve check` end to end on files of the user's libraries (gvar JSON, emcee HDF5)."""

from __future__ import annotations

import json

import numpy as np
import pytest

from eftsieve.cli.main import main
from tests.fit.formats.common import write_card
from tests.helpers import region

gv = pytest.importorskip("gvar")
emcee = pytest.importorskip("emcee")


@pytest.fixture()
def region_file(tmp_path):
    path = tmp_path / "region.json"
    region(((1.0, 0.0), 0.0)).save(path)  # lbar1 >= 0
    return path


def test_check_a_card_pointing_at_a_gvar_dump(tmp_path, region_file, capsys):
    g = {"l": gv.gvar([0.5, 4.3], [[0.25, 0.02], [0.02, 0.01]])}
    gv.gdump(g, str(tmp_path / "fit.json"), method="json")
    card = write_card(tmp_path, {"gaussian": {"file": "fit.json", "keys": ["l[0]", "l[1]"]}})
    out = tmp_path / "out"
    assert main(["check", str(card), "--region", str(region_file), "-o", str(out),
                 "--no-plots", "--draws", "20000"]) == 0
    s = json.loads((out / "summary.json").read_text())
    # P(lbar1 >= 0) for lbar1 ~ N(0.5, 0.5^2) is Phi(1) = 0.8413 (standard normal table)
    assert s["p_inside"] == pytest.approx(0.8413, abs=2e-3)


def test_check_a_bare_emcee_file(tmp_path, region_file, capsys):
    backend = emcee.backends.HDFBackend(str(tmp_path / "chain.h5"))
    backend.reset(8, 2)
    sampler = emcee.EnsembleSampler(8, 2, lambda x: -0.5 * np.sum(x**2, axis=1),
                                    vectorize=True, backend=backend)
    sampler.random_state = np.random.RandomState(2).get_state()
    sampler.run_mcmc(np.random.default_rng(0).normal(size=(8, 2)), 30, progress=False)
    out = tmp_path / "out"
    assert main(["check", str(tmp_path / "chain.h5"), "--theory", "chpt-su2", "--convention",
                 "lbar", "--pion-mass", "139.57", "--columns", "lbar1,lbar2", "--burn-in",
                 "10", "--region", str(region_file), "-o", str(out), "--no-plots"]) == 0
    s = json.loads((out / "summary.json").read_text())
    x = backend.get_chain(discard=10)
    assert s["n_total"] == 8 * 20
    assert s["p_inside"] == pytest.approx(float(np.mean(x[..., 0] >= 0)), abs=1e-12)
