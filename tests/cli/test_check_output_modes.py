"""check for pipelines and under a theory-uncertainty model (issue 16, items 6 and 21):
``--json`` prints summary.json, ``--quiet`` prints nothing, and the ``uncertain``
verdict appears when hard facets and the model disagree.  Invented test cards."""

from __future__ import annotations

import json
from pathlib import Path

import eftsieve as es
from eftsieve.cli.main import main
from eftsieve.region.model import Region
from eftsieve.stats.truncation import UncertaintySettings

CASES = Path(__file__).parents[1] / "report" / "verdict_cases"
REGION = str(CASES / "su2_physical_region.json")


def _run(tmp_path, *extra):
    return main(["check", str(CASES / "tension.yaml"), "--region", REGION, "-o",
                 str(tmp_path / "o"), "--draws", "4000", "--no-plots", *extra])


def test_json_prints_the_summary_and_nothing_else(tmp_path, capsys):
    assert _run(tmp_path, "--json") == 0
    out = json.loads(capsys.readouterr().out)
    assert out == json.loads((tmp_path / "o" / "summary.json").read_text())
    assert out["verdict"]["label"] == "tension" and out["kinematics"]["pion_mass_mev"] == 139.57


def test_quiet_prints_nothing_but_keeps_the_exit_code(tmp_path, capsys):
    assert _run(tmp_path, "--quiet", "--fail-below", "0.5") == 6
    captured = capsys.readouterr()
    assert captured.out == "" and captured.err == ""


def test_gaussian_card_writes_no_flagged_csv_unless_asked(tmp_path):
    assert _run(tmp_path, "--quiet") == 0
    assert not (tmp_path / "o" / "flagged.csv").exists()
    assert main(["check", str(CASES / "tension.yaml"), "--region", REGION, "-o",
                 str(tmp_path / "f"), "--draws", "4000", "--no-plots", "--quiet",
                 "--flagged"]) == 0
    assert (tmp_path / "f" / "flagged.csv").exists()


def test_uncertain_when_the_theory_uncertainty_changes_the_verdict():
    """With a wide offset uncertainty (invented sigma = 1 per facet) the tension case
    is no longer in tension: hard facets and the model disagree."""
    fit = es.load_fit(CASES / "tension.yaml")
    reg = Region.load(REGION)
    unc = UncertaintySettings("fixed", {"t-derivative": 1.0, "second-derivative": 1.0})
    res = es.api.check(fit, reg, draws=4000, seed=1, uncertainty=unc)
    soft = res.theory_uncertainty
    assert res.verdict.label == "uncertain", (soft["tension_sigma"], soft["p_inside"])
    assert res.verdict.reason.startswith("tension with hard facets but consistent")
    assert res.kinematics["truncation_model"] == "fixed (check)"
