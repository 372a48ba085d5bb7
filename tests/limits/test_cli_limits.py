"""``eftsieve limits`` and ``eftsieve check`` on a HEPData record, through the command line."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from eftsieve.cli.main import main
from eftsieve.io.outset import verify_manifest
from tests.limits.records import central_tables, contour_table, scan_1d_table, write_record

CARD = Path(__file__).with_name("cards") / "good.csv"


def test_limits_on_an_interval_card(tmp_path, capsys, monkeypatch):
    import eftsieve.cli.progress as progress

    monkeypatch.setattr(progress, "REUSE_HINT_S", 0.0)     # every build counts as long
    out = tmp_path / "out"
    assert main(["limits", str(CARD), "-o", str(out)]) == 0
    text = capsys.readouterr().out
    # the hint names the region file the run saved (and that a later run may pass)
    assert f"copy {out / 'region_higgs-quartic.json'} out of the output folder" in text
    assert "2 of 2 intervals truncated" in text and "signs alone (higgs-quartic)" in text
    for f in ("summary.json", "report.html", "report.md", "intervals.csv", "intervals.png",
              "region_higgs-quartic.json"):
        assert (out / f).is_file(), f
    assert verify_manifest(out) == []
    s = json.loads((out / "summary.json").read_text())
    assert [t["status"] for t in s["intervals"]] == ["truncated", "truncated"]
    assert s["intervals"][0]["allowed"] == [0.0, 2.0]


def record(tmp_path: Path) -> Path:
    x = np.linspace(-3, 3, 61)
    phi = np.linspace(0, 2 * np.pi, 60, endpoint=False)
    tabs = [scan_1d_table("Scan fS0", "f_{S0}", x, (x - 0.5) ** 2),
            contour_table("Contour", ("f_{S0}", "f_{S1}"), np.cos(phi), np.sin(phi)),
            *central_tables(["fS0", "fS1"], [0.2, 0.1], [0.3, 0.4], np.eye(2))]
    return write_record(tmp_path / "rec", tabs)


def test_limits_on_a_record(tmp_path, capsys):
    sub = record(tmp_path)
    out = tmp_path / "out"
    assert main(["limits", str(sub.parent), "--theory", "higgs-quartic", "-o", str(out),
                 "--draws", "20000", "--json"]) == 0
    s = json.loads(capsys.readouterr().out)
    assert len(s["scans"]) == 1 and len(s["contours"]) == 1
    assert s["gaussian"]["verdict"] in ("consistent", "tension", "excluded", "uncertain")
    assert any(p.name.startswith("scan_") for p in out.iterdir())
    assert main(["limits", str(sub), "--theory", "higgs-quartic", "-o", str(tmp_path / "o2"),
                 "--table", "Scan fS0", "--no-plots", "-q"]) == 0


def test_a_record_needs_a_theory_and_a_card_refuses_one(tmp_path, capsys):
    sub = record(tmp_path)
    assert main(["limits", str(sub), "-o", str(tmp_path / "x")]) == 2
    err = capsys.readouterr().err
    assert "--theory" in err and len(err.strip().splitlines()) == 1
    assert main(["limits", str(CARD), "--theory", "higgs-quartic", "-o",
                 str(tmp_path / "y")]) == 2
    assert "--theory" in capsys.readouterr().err


def test_check_reads_the_central_values_of_a_record(tmp_path, capsys):
    sub = record(tmp_path)
    out = tmp_path / "chk"
    assert main(["check", str(sub), "--theory", "higgs-quartic", "-o", str(out),
                 "--draws", "20000", "--no-plots"]) == 0
    s = json.loads((out / "summary.json").read_text())
    assert s["n_total"] == 20000 and 0 < s["p_inside"] < 1


def test_plot_titles_say_what_the_other_coefficients_are():
    # a slice holds them at zero; a projection leaves them free (named, shortened)
    from eftsieve.report.limits_report import _held

    assert _held(("fT0", "fT2"), []) == "other coefficients held at zero"
    free = [f"fM{i}" for i in range(6)] + ["fT1"]
    text = _held(("fT0", "fT1"), free)
    assert text.startswith("free (projection): fM0, fM1, fM2, fM3 and 2 more")
    assert "fT1" not in text and text.endswith("any others held at zero")
