"""``eftsieve check A.yaml B.yaml``: verdict first for every card, and the kinematics of
every card compared with a --region file (issue 16, items 1 and 6).

The cards are the invented verdict cases of tests/report/verdict_cases (labelled there as
invented test data); the verdicts they must give are those of the single-card golden
texts beside them (tests/report/test_verdict.py).
"""

from __future__ import annotations

from pathlib import Path

from eftsieve.cli.main import main

CASES = Path(__file__).resolve().parents[1] / "report" / "verdict_cases"
REGION = str(CASES / "su2_physical_region.json")


def test_every_card_gets_its_verdict_first(tmp_path, capsys):
    cards = [str(CASES / "inside.yaml"), str(CASES / "excluded.yaml")]
    assert main(["check", *cards, "--region", REGION, "--no-plots", "--draws", "20000",
                 "-o", str(tmp_path / "o")]) == 0
    out = capsys.readouterr().out.splitlines()
    firsts = [line for line in out if not line.startswith(" ")]
    golden = {c: (CASES / f"golden_{c}.txt").read_text().splitlines()[0].split(" - ")[0]
              for c in ("inside", "excluded")}
    assert firsts[0].startswith(golden["inside"].removeprefix("verdict: ") + ": inside.yaml")
    assert firsts[1].startswith(golden["excluded"].removeprefix("verdict: ") + ": excluded.yaml")
    assert firsts[-1].startswith("checked 2 fits")


def test_a_card_at_other_kinematics_is_refused_with_one_line(tmp_path, capsys):
    other = tmp_path / "heavy.yaml"
    other.write_text((CASES / "inside.yaml").read_text().replace("pion_mass_mev: 139.57",
                                                                 "pion_mass_mev: 300"))
    code = main(["check", str(CASES / "inside.yaml"), str(other), "--region", REGION,
                 "--no-plots", "--draws", "2000", "-o", str(tmp_path / "o")])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1
    assert "heavy.yaml" in err[0] and "kinematics.pion_mass" in err[0]
    assert "--allow-kinematics-mismatch" in err[0]
    assert not (tmp_path / "o").exists()  # nothing half-written
