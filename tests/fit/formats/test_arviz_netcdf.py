"""ArviZ InferenceData NetCDF files written by the real ArviZ (and xarray's DataTree),
with vector variables; read with xarray only.

The reference is the in-memory ``idata.posterior`` that was written: rows must be its
draws bit for bit, chain-major.
"""

from __future__ import annotations

import warnings

import h5py
import numpy as np
import pytest
import xarray as xr

from eftsieve.api import load_fit
from eftsieve.cli.args import load_fit_arg
from eftsieve.errors import InputError
from tests.fit.formats.common import (
    assert_one_line,
    block_import,
    cli_args,
    import_arviz,
    write_card,
)

az = import_arviz()
N_CHAIN, N_DRAW = 3, 40


def _draws():
    rng = np.random.default_rng(11)
    lbar = rng.normal([-0.4, 4.3], [0.6, 0.1], size=(N_CHAIN, N_DRAW, 2)).cumsum(axis=1)
    return lbar, rng.normal(size=(N_CHAIN, N_DRAW))


def _write(idata, path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        idata.to_netcdf(str(path))


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("arviz")
    lbar, c = _draws()
    plain = az.from_dict(posterior={"lbar": lbar, "c": c},
                         sample_stats={"lp": c * 0.0}, observed_data={"y": np.ones(3)})
    named = az.from_dict(posterior={"lbar": lbar, "c": c}, coords={"p": ["lbar1", "lbar2"]},
                         dims={"lbar": ["p"]})
    _write(plain, folder / "plain.nc")
    _write(named, folder / "named.nc")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        named.to_datatree().to_netcdf(folder / "tree.nc")
    # a tree that keeps the coordinate labels at its root: 'posterior' inherits them
    xr.DataTree.from_dict({
        "/": xr.Dataset(coords={"p": ["lbar1", "lbar2"]}),
        "/posterior": xr.Dataset({"lbar": (("chain", "draw", "p"), lbar)}),
    }).to_netcdf(folder / "root_coords.nc", engine="h5netcdf")
    return {"folder": folder, "lbar": lbar, "c": c, "plain": plain}


def _chain_major(x):
    return x.reshape(-1, *x.shape[2:])


def test_vector_variable_mapped_by_columns(files):
    assert files["plain"].posterior["lbar"].dims == ("chain", "draw", "lbar_dim_0")
    card = write_card(files["folder"], {"samples": {
        "path": "plain.nc", "columns": {"lbar1": "lbar[0]", "lbar2": "lbar[1]"}}})
    got = load_fit(card).samples.read_all()
    assert np.array_equal(got.values, _chain_major(files["lbar"]))
    assert np.array_equal(got.rows, np.arange(N_CHAIN * N_DRAW))


@pytest.mark.parametrize("name", ["named.nc", "tree.nc", "root_coords.nc"])
def test_coordinate_labels_map_automatically(files, name):
    fit = load_fit(write_card(files["folder"], {"samples": {"path": name}}, f"{name}.yaml"))
    assert fit.samples.columns == ("lbar[0]", "lbar[1]")
    assert np.array_equal(fit.samples.read_all().values, _chain_major(files["lbar"]))


def test_chains_burn_in_and_thinning(files):
    card = write_card(files["folder"], {"samples": {
        "path": "named.nc", "walkers": [2, 0], "burn_in": 10, "thin": 4}}, "sel.yaml")
    got = load_fit(card).samples.read_all().values
    ref = files["lbar"][[2, 0]][:, 13::4]
    assert np.array_equal(got, _chain_major(ref))


def test_bare_file_with_columns_flag_and_scalar_nuisance(files):
    args = cli_args(str(files["folder"] / "plain.nc"), "--theory", "chpt-su2", "--convention",
                    "lbar", "--pion-mass", "139.57", "--columns",
                    "lbar1=lbar[0],lbar2=lbar[1],c")
    fit = load_fit_arg(args)
    assert fit.names == ("lbar1", "lbar2", "c")
    assert fit.parameters[2].convention.name == "none"
    ref = np.column_stack([_chain_major(files["lbar"]), files["c"].reshape(-1)])
    assert np.array_equal(fit.samples.read_all().values, ref)


def test_bare_file_names_from_coordinate_labels(files):
    fit = load_fit_arg(cli_args(str(files["folder"] / "named.nc"), "--theory", "chpt-su2",
                                "--convention", "lbar", "--pion-mass", "139.57"))
    assert fit.names == ("lbar1", "lbar2", "c")


def test_read_without_arviz_installed(files, monkeypatch):
    block_import(monkeypatch, "arviz")
    fit = load_fit(write_card(files["folder"], {"samples": {"path": "named.nc"}}, "no.yaml"))
    assert np.array_equal(fit.samples.read_all().values, _chain_major(files["lbar"]))


# ---- bad files: one test per rule ---------------------------------------------------------

def test_netcdf_without_posterior_group_is_refused_not_read_from_root(tmp_path):
    """Regression: the root group used to be read when 'posterior' was missing."""
    xr.Dataset({"lbar1": (("draw",), np.zeros(5)), "lbar2": (("draw",), np.ones(5))}
               ).to_netcdf(tmp_path / "root.nc", engine="h5netcdf")
    with h5py.File(tmp_path / "root.nc", "a") as f:
        f.create_group("sample_stats")
    with pytest.raises(InputError) as info:
        load_fit(write_card(tmp_path, {"samples": {"path": "root.nc"}}))
    assert_one_line(info, "root.nc", "posterior", "no 'posterior' group (groups: ['sample_stats'])")


def test_posterior_without_chain_draw_variables_is_refused(tmp_path):
    xr.Dataset({"lbar1": (("k",), np.zeros(5))}).to_netcdf(
        tmp_path / "nodims.nc", group="posterior", engine="h5netcdf")
    with pytest.raises(InputError) as info:
        load_fit(write_card(tmp_path, {"samples": {"path": "nodims.nc"}}))
    assert_one_line(info, "nodims.nc", "posterior", "no variable with the dims (chain, draw)")


def test_label_that_is_a_variable_and_a_coordinate_is_ambiguous(tmp_path, files):
    lbar, c = _draws()
    idata = az.from_dict(posterior={"v": lbar, "lbar1": c}, coords={"p": ["lbar1", "lbar2"]},
                         dims={"v": ["p"]})
    _write(idata, tmp_path / "amb.nc")
    with pytest.raises(InputError) as info:
        load_fit(write_card(tmp_path, {"samples": {"path": "amb.nc"}}))
    assert_one_line(info, "card.yaml", "samples.columns", "is a coordinate label")


def test_unknown_element_is_refused_with_the_columns(files):
    card = write_card(files["folder"], {"samples": {
        "path": "plain.nc", "columns": {"lbar1": "lbar[0]", "lbar2": "lbar[2]"}}}, "el.yaml")
    with pytest.raises(InputError) as info:
        load_fit(card)
    err = assert_one_line(info, "el.yaml", "samples.columns.lbar2", "no column 'lbar[2]'")
    assert "lbar[0], lbar[1], c" in err.hint


def test_chain_beyond_the_file_is_refused(files):
    card = write_card(files["folder"], {"samples": {"path": "named.nc", "walkers": [3]}},
                      "chain.yaml")
    with pytest.raises(InputError) as info:
        load_fit(card).samples.read_all()
    assert_one_line(info, "named.nc", "samples.walkers", "beyond the 3 chains")


def test_group_option_is_refused_for_netcdf(files):
    card = write_card(files["folder"], {"samples": {"path": "named.nc", "group": "x"}}, "g.yaml")
    with pytest.raises(InputError) as info:
        load_fit(card)
    assert_one_line(info, "g.yaml", "samples.group", "read from its 'posterior' group")


def test_h5_extension_is_sniffed_netcdf_or_emcee(files, tmp_path):
    import shutil

    shutil.copy(files["folder"] / "named.nc", tmp_path / "posterior.h5")
    fit = load_fit(write_card(tmp_path, {"samples": {"path": "posterior.h5"}}))
    assert fit.samples.fmt == "netcdf"
    assert np.array_equal(fit.samples.read_all().values, _chain_major(files["lbar"]))


def test_xarray_without_open_datatree_reads_the_group(files, monkeypatch):
    """Older xarray (no DataTree): the posterior group is opened on its own."""
    monkeypatch.delattr(xr, "open_datatree")
    fit = load_fit(write_card(files["folder"], {"samples": {"path": "named.nc"}}, "old.yaml"))
    assert np.array_equal(fit.samples.read_all().values, _chain_major(files["lbar"]))


def test_coordinate_label_shared_by_two_variables_needs_a_mapping(tmp_path):
    lbar, _ = _draws()
    idata = az.from_dict(posterior={"lbar": lbar, "shifted": lbar + 1.0},
                         coords={"p": ["lbar1", "lbar2"]}, dims={"lbar": ["p"], "shifted": ["p"]})
    _write(idata, tmp_path / "two.nc")
    with pytest.raises(InputError) as info:
        load_fit(write_card(tmp_path, {"samples": {"path": "two.nc"}}))
    assert_one_line(info, "card.yaml", "samples.columns", "labels several columns")
    fit = load_fit(write_card(tmp_path, {"samples": {"path": "two.nc", "columns": {
        "lbar1": "shifted[0]", "lbar2": "shifted[1]"}}}, "mapped.yaml"))
    assert np.array_equal(fit.samples.read_all().values, _chain_major(lbar + 1.0))
