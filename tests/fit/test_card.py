"""Fit-card and samples loaders: good cards, and one bad file per validation rule."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from eftsieve.api import load_fit
from eftsieve.errors import InputError

DATA = Path(__file__).parent


def test_gaussian_card_with_nuisance():
    fit = load_fit(DATA / "good_gaussian.yaml")
    assert fit.names == ("lbar1", "lbar2", "c_nuisance")
    assert fit.parameters[2].convention.name == "none"
    assert fit.parameters[0].convention.pion_mass_mev == 139.57
    np.testing.assert_array_equal(fit.cov, np.diag([0.36, 0.01, 1.0]))


def test_errors_and_correlation_build_the_covariance():
    fit = load_fit(DATA / "good_errors.json")
    expected = np.array([[1e-6, -0.5 * 1e-3 * 5e-4], [-0.5 * 1e-3 * 5e-4, 2.5e-7]])
    np.testing.assert_allclose(fit.cov, expected, rtol=1e-14)
    assert fit.parameters[0].convention.mu_mev == 770.0


def test_samples_card_maps_columns_and_weights():
    fit = load_fit(DATA / "good_samples.yaml")
    chunk = fit.samples.read_all()
    np.testing.assert_array_equal(chunk.values[:, 0], [-0.5, -0.3, 1.5])
    np.testing.assert_array_equal(chunk.weights, [1.0, 0.5, 2.0])
    np.testing.assert_array_equal(chunk.rows, [0, 1, 2])


def test_chunked_reading_keeps_row_indices():
    fit = load_fit(DATA / "good_samples.yaml")
    chunks = list(fit.samples.iter_chunks(chunk_rows=2))
    assert [len(c.rows) for c in chunks] == [2, 1]
    assert chunks[1].rows.tolist() == [2]


@pytest.mark.parametrize("name, field, words", [
    ("bad_asym_cov.yaml", "covariance", "not symmetric"),
    ("bad_nonpsd_cov.yaml", "covariance", "smallest eigenvalue -1"),
    ("bad_shape_cov.yaml", "covariance", "does not match 2 parameters"),
    ("bad_unknown_param.yaml", "parameters[0].name", "accepted: lbar1"),
    ("bad_missing_scale.yaml", "parameters[0].convention", "needs its renormalisation scale"),
    ("bad_missing_file.yaml", "samples.path", "file not found"),
    ("bad_format.yaml", "samples.format", "unsupported file extension"),
    ("bad_version.yaml", "format_version", "unsupported version"),
    ("bad_param_name.yaml", "parameters[1].name", "missing or not a string"),
])
def test_bad_cards_name_file_field_and_fix(name, field, words):
    with pytest.raises(InputError) as info:
        load_fit(DATA / name)
    err = info.value
    assert err.field == field
    assert name in str(err.path)
    assert words in str(err)
    assert "\n" not in err.one_line()


def test_nan_rows_are_quoted():
    fit = load_fit(DATA / "bad_nan_samples.yaml")
    with pytest.raises(InputError, match=r"row\(s\) 1, 2 \(0-based"):
        fit.samples.read_all()


def test_negative_weight_rows_are_quoted():
    fit = load_fit(DATA / "bad_negw.yaml")
    with pytest.raises(InputError, match=r"negative or non-finite weight in row\(s\) 1"):
        fit.samples.read_all()


def test_all_zero_weights_are_refused():
    from eftsieve.check.run import run_check
    from eftsieve.check.verdicts import CheckSettings
    from eftsieve.theories import get_theory

    fit = load_fit(DATA / "bad_zerow.yaml")
    th = get_theory("chpt-su2")
    region = th.build_region(th.region_settings_for_fit(fit))
    with pytest.raises(InputError, match="all weights are zero"):
        run_check(fit, region, CheckSettings(), None)


def test_missing_card():
    with pytest.raises(InputError, match="file not found"):
        load_fit(DATA / "nope.yaml")


def test_parquet_and_netcdf_samples(tmp_path):
    import pandas as pd
    import xarray as xr

    rng = np.random.default_rng(1)
    frame = pd.DataFrame({"lbar1": rng.normal(size=50), "lbar2": rng.normal(4, 1, 50)})
    frame.to_parquet(tmp_path / "s.parquet", row_group_size=7)
    ds = xr.Dataset({k: (("chain", "draw"), frame[k].to_numpy().reshape(2, 25))
                     for k in frame})
    ds.to_netcdf(tmp_path / "s.nc", group="posterior", engine="h5netcdf")
    for fname in ("s.parquet", "s.nc"):
        card = tmp_path / f"{fname}.yaml"
        card.write_text(
            "format_version: 1\nname: t\ntheory: chpt-su2\nkinematics: {pion_mass_mev: 139.57}\n"
            "parameters: [{name: lbar1, convention: lbar}, {name: lbar2, convention: lbar}]\n"
            f"samples: {{path: {fname}}}\n")
        chunk = load_fit(card).samples.read_all()
        np.testing.assert_allclose(np.sort(chunk.values[:, 0]), np.sort(frame["lbar1"]))
        assert len(chunk.rows) == 50
