"""report.outputs: the output sets of check and impose, written whole by the library."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd

from eftsieve.check.run import run_check
from eftsieve.check.verdicts import CheckSettings
from eftsieve.impose.api import impose
from eftsieve.impose.core import ImposeSettings
from eftsieve.report.outputs import (
    CHECK_OUTPUTS,
    IMPOSE_OUTPUTS,
    region_columns,
    write_check_outputs,
    write_impose_outputs,
)
from tests.helpers import gaussian_fit, region

REG = region(((0, 1), 1.2), ((1, 2), 2.0))


def test_check_outputs_are_the_result(tmp_path):
    fit = gaussian_fit([0.3, 1.0], np.diag([1.0, 0.25]))
    res = run_check(fit, REG, CheckSettings(draws=4000), tmp_path, "r.json")
    written = write_check_outputs(fit, res, tmp_path, plots=False)
    assert set(written) == {"summary", "report_md", "report_html"}
    assert json.loads((tmp_path / "summary.json").read_text())["n_total"] == 4000
    assert "Fit" in (tmp_path / "report.md").read_text()
    assert {p.name for p in tmp_path.iterdir()} <= set(CHECK_OUTPUTS)
    written = write_check_outputs(fit, res, tmp_path)
    assert written["region"].name == "region.png" and written["corner"].name == "corner.png"


def test_impose_outputs_carry_the_fit_and_region(tmp_path):
    fit = gaussian_fit([0.3, 1.0], np.diag([1.0, 0.25]))
    res = impose(fit, REG, settings=ImposeSettings(n_samples=2000, seed=1))
    summary = write_impose_outputs(fit, REG, res, tmp_path, region_path="r.json", csv=True,
                                   plots=False)
    stored = json.loads((tmp_path / "summary.json").read_text())
    assert stored == json.loads(json.dumps(summary))
    assert stored["region_hash"] == REG.hash and stored["region_file"] == "r.json"
    frame = pd.read_parquet(tmp_path / "samples.parquet")
    np.testing.assert_array_equal(frame[["lbar1", "lbar2"]].to_numpy(), res.samples)
    assert frame["row"].tolist() == list(range(2000))
    assert pd.read_csv(tmp_path / "samples.csv").shape == frame.shape
    assert {p.name for p in tmp_path.iterdir()} <= set(IMPOSE_OUTPUTS)


def test_region_columns_take_single_column_rows_only():
    assert region_columns([[1.0, 0.0], [0.5, 0.5]]) == {0: 0}
    assert region_columns(None) == {}
