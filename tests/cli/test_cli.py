"""The command line: verbs, one-line errors with exit codes, --debug tracebacks."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from eftsieve.cli.main import main

DATA = Path(__file__).parents[1] / "fit"


def run_cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "eftsieve.cli", *args], capture_output=True,
                          text=True, timeout=300)


def test_version_is_fast_and_printed():
    out = run_cli("--version")
    assert out.returncode == 0 and out.stdout.startswith("eftsieve ")


def test_theories_lists_parameters_conventions_and_kinematics(capsys):
    assert main(["theories"]) == 0
    text = capsys.readouterr().out
    assert "chpt-su2" in text and "lbar1" in text and "pion_mass_mev" in text
    assert main(["theories", "--json"]) == 0
    info = json.loads(capsys.readouterr().out)
    su2 = next(i for i in info if i["name"] == "chpt-su2")
    assert su2["kinematic_inputs"]["mu_mev"]["default"] == 770.0


def test_region_writes_file_and_json(tmp_path, capsys):
    out = tmp_path / "r.json"
    assert main(["region", "--theory", "chpt-su2", "--family", "second-derivative", "-o",
                 str(out), "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    assert summary["n_facets"] == 3
    stored = json.loads(out.read_text())
    assert stored["hash"] == summary["hash"]
    assert {f["channel"] for f in stored["facets"]} >= {"pi0 pi0", "pi+ pi0"}


@pytest.mark.parametrize("card, code, words", [
    ("bad_nonpsd_cov.yaml", 2, "smallest eigenvalue"),
    ("bad_unknown_param.yaml", 2, "unknown parameter 'lbar7'"),
    ("nope.yaml", 2, "file not found"),
])
def test_bad_input_is_one_line_without_traceback(tmp_path, card, code, words):
    out = run_cli("check", str(DATA / card), "-o", str(tmp_path / "o"), "--no-plots")
    assert out.returncode == code
    lines = [ln for ln in out.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and words in lines[0] and "Traceback" not in out.stderr
    assert card in lines[0]


def test_debug_shows_the_traceback(tmp_path):
    out = run_cli("--debug", "check", str(DATA / "bad_nonpsd_cov.yaml"), "-o", str(tmp_path))
    assert out.returncode != 0 and "Traceback" in out.stderr


def test_tampered_region_file_is_refused(tmp_path, capsys):
    out = tmp_path / "r.json"
    assert main(["region", "--family", "second-derivative", "-o", str(out)]) == 0
    data = json.loads(out.read_text())
    data["facets"][0]["offset"] = -100.0
    out.write_text(json.dumps(data))
    code = main(["check", str(DATA / "good_gaussian.yaml"), "--region", str(out), "-o",
                 str(tmp_path / "c"), "--no-plots"])
    assert code == 3
    assert "hash mismatch" in capsys.readouterr().err


def test_check_fail_below_gates(tmp_path, capsys):
    args = ["check", str(DATA / "good_gaussian.yaml"), "-o", str(tmp_path / "c"), "--no-plots",
            "--draws", "20000"]
    assert main(args) == 0
    summary = json.loads((tmp_path / "c" / "summary.json").read_text())
    assert main(args + ["--fail-below", str(summary["p_inside"] + 0.01)]) == 6
    # a Gaussian card writes no flagged.csv of its synthetic draws (issue 16, item 11)
    assert not (tmp_path / "c" / "flagged.csv").exists()
    for name in ("summary.json", "report.md", "report.html", "region.json"):
        assert (tmp_path / "c" / name).is_file()


def test_outputs_never_overwrite_inputs(tmp_path, capsys):
    card = tmp_path / "summary.json"
    card.write_text((DATA / "good_errors.json").read_text())
    assert main(["check", str(card), "-o", str(tmp_path), "--no-plots"]) == 2
    assert "contains the input" in capsys.readouterr().err


def test_bare_samples_file_with_flags(tmp_path, capsys):
    code = main(["check", str(DATA / "samples.csv"), "--theory", "chpt-su2", "--convention",
                 "lbar", "--pion-mass", "139.57", "--weight-column", "w", "-o",
                 str(tmp_path / "b"), "--no-plots"])
    # l1bar is not a known name: only lbar2 is constrained, so the region needs lbar1
    assert code == 2
    assert "needs l1" in capsys.readouterr().err


def test_bare_samples_file_is_checked_and_extra_columns_carried(tmp_path, capsys):
    import pandas as pd

    f = tmp_path / "post.csv"
    pd.DataFrame({"lbar1": [-0.4, 3.0, -5.0], "lbar2": [4.3, 0.5, 4.0],
                  "sys": [1.0, 2.0, 3.0]}).to_csv(f, index=False)
    assert main(["check", str(f), "--theory", "chpt-su2", "--convention", "lbar",
                 "--pion-mass", "139.57", "-o", str(tmp_path / "o"), "--no-plots"]) == 0
    s = json.loads((tmp_path / "o" / "summary.json").read_text())
    assert s["n_total"] == 3 and s["n_inside"] == 1 and s["n_outside"] == 2
    flagged = pd.read_csv(tmp_path / "o" / "flagged.csv")
    assert flagged["row"].tolist() == [1, 2] and flagged["sys"].tolist() == [2.0, 3.0]


def test_repeated_pion_mass_flags_accumulate(tmp_path, capsys):
    """Regression: `--pion-mass A --pion-mass B` kept only B."""
    out = tmp_path / "r.json"
    assert main(["region", "--family", "second-derivative", "--pion-mass", "139.57",
                 "--pion-mass", "300", "--convention", "lr", "-o", str(out), "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    assert summary["settings"]["pion_masses_mev"] == [139.57, 300.0]


def test_our_warnings_are_one_line(capsys):
    from eftsieve.cli.main import _one_line_warning
    from eftsieve.errors import KinematicsWarning

    seen = []
    show = _one_line_warning("check", lambda *a: seen.append(a))
    show(KinematicsWarning("M_pi = 450 MeV is heavy"), KinematicsWarning, "x.py", 1)
    assert capsys.readouterr().err == "eftsieve check: warning: M_pi = 450 MeV is heavy\n"
    show(UserWarning("other"), UserWarning, "x.py", 1)      # not ours: the default path
    assert len(seen) == 1 and not capsys.readouterr().err


def test_bare_samples_with_lr_and_dimensionful_conventions(tmp_path, capsys):
    """Regression: --scale was passed only to 'lr', so a bare L_i^r file could not be read;
    the dimensionful scalar-eft convention takes its gap from --gap."""
    import numpy as np
    import pandas as pd

    rng = np.random.default_rng(0)
    su3 = tmp_path / "su3.csv"
    pd.DataFrame(rng.normal([4e-4, 6e-4, -3e-3], 3e-4, (500, 3)),
                 columns=["L1", "L2", "L3"]).to_csv(su3, index=False)
    assert main(["check", str(su3), "--theory", "chpt-su3", "--convention", "Lr",
                 "--scale", "770", "-o", str(tmp_path / "a"), "--no-plots"]) == 0
    s = json.loads((tmp_path / "a" / "summary.json").read_text())
    assert s["n_total"] == 500 and s["theory"] == "chpt-su3"
    assert main(["check", str(su3), "--theory", "chpt-su3", "--convention", "Lr",
                 "-o", str(tmp_path / "b"), "--no-plots"]) == 2
    assert "--scale" in capsys.readouterr().err
    sc = tmp_path / "scalar.csv"
    pd.DataFrame({"g2": rng.uniform(0.5, 1.5, 300), "g3": rng.normal(-1.0, 0.5, 300)}
                 ).to_csv(sc, index=False)
    assert main(["check", str(sc), "--theory", "scalar-eft", "--convention", "dimensionful",
                 "--gap", "1", "-o", str(tmp_path / "c"), "--no-plots"]) == 0
    assert json.loads((tmp_path / "c" / "summary.json").read_text())["n_total"] == 300
