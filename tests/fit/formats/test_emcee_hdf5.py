"""emcee HDF5 backends written by the real emcee sampler, read with h5py only.

The reference is emcee's own ``HDFBackend.get_chain(discard=, thin=)`` and
``get_log_prob``: eftsieve's rows must be the same numbers, bit for bit, walker-major.
"""

from __future__ import annotations

import h5py
import numpy as np
import pandas as pd
import pytest

from eftsieve.api import load_fit
from eftsieve.check.run import run_check
from eftsieve.check.verdicts import CheckSettings
from eftsieve.cli.args import load_fit_arg
from eftsieve.errors import InputError
from tests.fit.formats.common import assert_one_line, block_import, cli_args, write_card
from tests.helpers import region

emcee = pytest.importorskip("emcee")

N_WALKERS, N_STEPS = 32, 200


def _run(path, n_walkers=N_WALKERS, n_steps=N_STEPS, ndim=2, name="mcmc", stop=None):
    """Sample a correlated Gaussian (rho = 0.8) with emcee into an HDF5 backend."""
    cov = 0.8 * np.ones((ndim, ndim)) + 0.2 * np.eye(ndim)
    icov = np.linalg.inv(cov)
    backend = emcee.backends.HDFBackend(str(path), name=name)
    backend.reset(n_walkers, ndim)
    sampler = emcee.EnsembleSampler(
        n_walkers, ndim, lambda x: -0.5 * np.einsum("ij,jk,ik->i", x, icov, x),
        vectorize=True, backend=backend)
    sampler.random_state = np.random.RandomState(5).get_state()
    p0 = np.random.default_rng(1).normal(size=(n_walkers, ndim))
    if stop is None:
        sampler.run_mcmc(p0, n_steps, progress=False)
    else:  # interrupted: the backend has room for n_steps but holds only `stop`
        for i, _ in enumerate(sampler.sample(p0, iterations=n_steps)):
            if i + 1 == stop:
                break
    return backend


@pytest.fixture(scope="module")
def chain(tmp_path_factory):
    folder = tmp_path_factory.mktemp("emcee")
    backend = _run(folder / "chain.h5")
    return {"folder": folder, "path": folder / "chain.h5", "backend": backend}


def _walker_major(x):
    """(iteration, walker, ...) -> walker 0's draws in order, then walker 1's, ..."""
    return np.moveaxis(x, 1, 0).reshape(-1, *x.shape[2:])


def test_rows_are_emcee_draws_walker_major_bit_for_bit(chain):
    fit = load_fit(write_card(chain["folder"], {"samples": {"path": "chain.h5"}}))
    assert fit.samples.fmt == "emcee"
    got = fit.samples.read_all()
    ref = _walker_major(chain["backend"].get_chain())
    assert got.values.shape == (N_WALKERS * N_STEPS, 2)
    assert np.array_equal(got.values, ref)
    assert np.array_equal(got.rows, np.arange(len(ref)))
    chunks = list(fit.samples.iter_chunks(chunk_rows=77))
    assert np.array_equal(np.concatenate([c.values for c in chunks]), ref)


def test_burn_in_thinning_and_walkers_follow_emcee(chain):
    card = write_card(chain["folder"], {"samples": {
        "path": "chain.h5", "burn_in": 50, "thin": 3, "walkers": [5, 0, 7],
        "columns": {"lbar1": 1, "lbar2": 0, "lp": "log_prob"}},
        "parameters": [{"name": "lbar1", "convention": "lbar"},
                       {"name": "lbar2", "convention": "lbar"},
                       {"name": "lp", "convention": "none"}]}, "opts.yaml")
    got = load_fit(card).samples.read_all().values
    x = chain["backend"].get_chain(discard=50, thin=3)[:, [5, 0, 7]]
    lp = chain["backend"].get_log_prob(discard=50, thin=3)[:, [5, 0, 7]]
    assert np.array_equal(got[:, :2], _walker_major(x[..., [1, 0]]))
    assert np.array_equal(got[:, 2], _walker_major(lp))


def test_interrupted_run_reads_only_the_steps_written(tmp_path):
    backend = _run(tmp_path / "cut.h5", n_walkers=8, n_steps=60, stop=25)
    with h5py.File(tmp_path / "cut.h5") as f:
        assert f["mcmc/chain"].shape[0] == 60 and f["mcmc"].attrs["iteration"] == 25
    got = load_fit(write_card(tmp_path, {"samples": {"path": "cut.h5"}})).samples.read_all()
    assert np.array_equal(got.values, _walker_major(backend.get_chain()))
    assert len(got.values) == 8 * 25


def test_bare_file_takes_names_from_columns_flag(chain):
    args = cli_args(str(chain["path"]), "--theory", "chpt-su2", "--convention", "lbar",
                    "--pion-mass", "139.57", "--columns", "lbar1,lbar2", "--burn-in", "100",
                    "--keep-walkers", "0:4")
    fit = load_fit_arg(args)
    x = chain["backend"].get_chain(discard=100)[:, :4]
    assert np.array_equal(fit.samples.read_all().values, _walker_major(x))


def test_read_without_emcee_installed(chain, monkeypatch):
    ref = _walker_major(chain["backend"].get_chain())
    block_import(monkeypatch, "emcee")
    fit = load_fit(write_card(chain["folder"], {"samples": {"path": "chain.h5"}}, "no.yaml"))
    assert np.array_equal(fit.samples.read_all().values, ref)


def test_batch_means_error_equals_that_of_walker_by_walker_csv(chain, tmp_path):
    """p_inside's batch-means error on the emcee file is the one of the same chains
    written walker by walker to CSV (issue 19); emcee's flat order (walkers
    interleaved step by step) would give another, smaller one."""
    x = chain["backend"].get_chain()
    for name, rows in (("walkers.csv", _walker_major(x)), ("flat.csv", x.reshape(-1, 2))):
        pd.DataFrame(rows, columns=["lbar1", "lbar2"]).to_csv(tmp_path / name, index=False)
    reg = region(((1.0, 0.0), 0.0))  # lbar1 >= 0
    out = {}
    for name in ("chain.h5", "walkers.csv", "flat.csv"):
        folder = chain["folder"] if name == "chain.h5" else tmp_path
        card = write_card(folder, {"samples": {"path": name}}, f"{name}.yaml")
        res = run_check(load_fit(card), reg, CheckSettings(seed=0),
                        tmp_path / f"out_{name}")
        out[name] = res.summary
    h5, csv, flat = out["chain.h5"], out["walkers.csv"], out["flat.csv"]
    assert h5["n_batches"] >= 20
    assert h5["p_inside_mc_err_batch"] == csv["p_inside_mc_err_batch"]
    assert h5["tau_inside"] == csv["tau_inside"] and h5["p_inside"] == csv["p_inside"]
    assert flat["p_inside"] == pytest.approx(h5["p_inside"], abs=1e-12)
    assert flat["p_inside_mc_err_batch"] < h5["p_inside_mc_err_batch"]


# ---- bad files: one test per rule ---------------------------------------------------------

def test_hdf5_without_backend_is_refused(tmp_path):
    with h5py.File(tmp_path / "plain.h5", "w") as f:
        f.create_dataset("x", data=np.zeros((3, 2)))
    card = write_card(tmp_path, {"samples": {"path": "plain.h5", "format": "emcee"}})
    with pytest.raises(InputError) as info:
        load_fit(card)
    assert_one_line(info, "plain.h5", None, "no emcee backend")


def test_backend_without_steps_is_refused(tmp_path):
    emcee.backends.HDFBackend(str(tmp_path / "empty.h5")).reset(4, 2)
    with pytest.raises(InputError) as info:
        load_fit(write_card(tmp_path, {"samples": {"path": "empty.h5"}}))
    assert_one_line(info, "empty.h5", "iteration", "holds no steps")


def test_two_backends_need_a_group(tmp_path):
    _run(tmp_path / "two.h5", 4, 5, name="run_a")
    _run(tmp_path / "two.h5", 4, 5, name="run_b")
    with pytest.raises(InputError) as info:
        load_fit(write_card(tmp_path, {"samples": {"path": "two.h5"}}))
    assert_one_line(info, "two.h5", "samples.group", "several emcee backends")
    fit = load_fit(write_card(tmp_path, {"samples": {"path": "two.h5", "group": "run_b"}}))
    assert len(fit.samples.read_all().values) == 20


def test_parameter_count_must_match_the_chain(chain):
    card = write_card(chain["folder"], {"samples": {"path": "chain.h5"}, "parameters": [
        {"name": "lbar1", "convention": "lbar"}, {"name": "lbar2", "convention": "lbar"},
        {"name": "c", "convention": "none"}]}, "three.yaml")
    with pytest.raises(InputError) as info:
        load_fit(card)
    assert_one_line(info, "three.yaml", "samples.columns", "holds 2 columns for 3 parameters")


def test_walker_beyond_the_file_is_refused(chain):
    card = write_card(chain["folder"], {"samples": {"path": "chain.h5", "walkers": "30:40"}},
                      "walk.yaml")
    with pytest.raises(InputError) as info:
        load_fit(card).samples.read_all()
    assert_one_line(info, "chain.h5", "samples.walkers", "beyond the 32 walkers")


def test_burn_in_past_the_end_is_refused(chain):
    card = write_card(chain["folder"], {"samples": {"path": "chain.h5", "burn_in": 500}},
                      "burn.yaml")
    with pytest.raises(InputError) as info:
        load_fit(card).samples.read_all()
    assert_one_line(info, "chain.h5", "samples.burn_in", "leave no draw")


def test_bad_thin_value_is_refused(chain):
    card = write_card(chain["folder"], {"samples": {"path": "chain.h5", "thin": 0}}, "thin.yaml")
    with pytest.raises(InputError) as info:
        load_fit(card)
    assert_one_line(info, "thin.yaml", "samples.thin", "integer >= 1")


def test_bare_file_without_names_is_refused(chain):
    args = cli_args(str(chain["path"]), "--theory", "chpt-su2", "--convention", "lbar",
                    "--pion-mass", "139.57")
    with pytest.raises(InputError) as info:
        load_fit_arg(args)
    assert_one_line(info, "chain.h5", "--columns", "stores no parameter names")


def test_damaged_backend_is_refused(tmp_path):
    _run(tmp_path / "damaged.h5", 4, 10)
    with h5py.File(tmp_path / "damaged.h5", "a") as f:
        f["mcmc"].attrs["iteration"] = 50  # more steps than stored
    with pytest.raises(InputError) as info:
        load_fit(write_card(tmp_path, {"samples": {"path": "damaged.h5"}}))
    assert_one_line(info, "damaged.h5", "chain", "exceeds the stored 10 steps")
