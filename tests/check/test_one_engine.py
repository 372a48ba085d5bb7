"""One check kernel: identical results across engines, chunk sizes and file splits, for
every fit and region pairing the tool accepts (regression for issue 14: the local engine
refused an SU(3) fit against the SU(2) region that the in-process run accepted)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

import eftsieve as es
from eftsieve.check.engines.dask import dask_check
from eftsieve.check.engines.local import local_check
from eftsieve.check.run import run_check
from eftsieve.check.verdicts import CheckSettings
from eftsieve.cli.main import main
from eftsieve.stats.truncation import UncertaintySettings
from tests.check.conftest import comparable

ROOT = Path(__file__).resolve().parents[2]
SU3_CARD = ROOT / "data_examples" / "aurora_su3_gaussian.yaml"


@pytest.fixture(scope="module")
def su2_region():
    return es.build_region("chpt-su2")


def test_su3_fit_against_su2_region_is_the_same_in_every_engine(su2_region, cluster):
    fit = es.load_fit(SU3_CARD)
    st = CheckSettings(draws=30_000)
    ref = run_check(fit, su2_region, st)
    assert 0.0 < ref.p_inside < 1.0
    other = [local_check(fit, su2_region, CheckSettings(draws=30_000, chunk_rows=7_001), None),
             dask_check(fit, su2_region, st, None, scheduler=cluster.scheduler_address)]
    for res in other:
        assert comparable(res.to_dict()) == comparable(ref.to_dict())


def test_theory_uncertainty_model_is_chunk_independent(su2_region):
    fit = es.load_fit(ROOT / "data_examples" / "aurora_gaussian.yaml")
    unc = UncertaintySettings("power-counting")
    a = run_check(fit, su2_region, CheckSettings(draws=20_000), uncertainty=unc)
    b = run_check(fit, su2_region, CheckSettings(draws=20_000, chunk_rows=3_333),
                  uncertainty=unc)
    assert comparable(a.to_dict()) == comparable(b.to_dict())
    assert a.theory_uncertainty is not None
    assert a.theory_uncertainty["n_uncertain"] == a.counts.uncertain > 0


def test_cli_summary_is_the_same_with_and_without_engine(tmp_path, su2_region, cluster):
    region = tmp_path / "su2.json"
    su2_region.save(region)
    runs = {"default": [], "local": ["--engine", "local"],
            "dask": ["--engine", "dask", "--scheduler", cluster.scheduler_address]}
    out = {}
    for name, extra in runs.items():
        code = main(["check", str(SU3_CARD), "--region", str(region), "-o",
                     str(tmp_path / name), "--draws", "20000", "--no-plots", *extra])
        assert code == 0
        out[name] = json.loads((tmp_path / name / "summary.json").read_text())
    assert comparable(out["default"]) == comparable(out["local"]) == comparable(out["dask"])
