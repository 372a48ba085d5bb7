"""The demo runs the whole job on the invented example and writes every output."""

from __future__ import annotations

import json

import pytest

from eftsieve.cli.main import main


@pytest.mark.slow  # about 80 s; `make demo` runs the same job, and CI runs `make test` only
def test_demo_end_to_end(tmp_path, capsys):
    out = tmp_path / "demo"
    assert main(["demo", "-o", str(out)]) == 0
    text = capsys.readouterr().out
    assert "INVENTED" in text and "p_inside" in text and "report" in text
    for sub, files in {"check_gaussian": ["summary.json", "report.html", "flagged.csv"],
                       "check_posterior": ["summary.json", "corner.png", "region.png"],
                       "impose_gaussian": ["samples.parquet", "corner_before_after.png"],
                       "impose_posterior": ["samples.parquet", "report.md"],
                       "check_su3": ["summary.json", "region.json"],
                       "check_su3_as_su2": ["summary.json"]}.items():
        for f in files:
            assert (out / sub / f).is_file(), f"{sub}/{f}"
    s = json.loads((out / "check_posterior" / "summary.json").read_text())
    assert s["n_inside"] + s["n_marginal"] + s["n_outside"] + s["n_uncertain"] \
        == s["n_total"] == 10528
    # the invented fit partly violates the one-loop t-derivative bounds (the demo asks for
    # both families); the loop-consistent truncation allowance calls most of those points
    # uncertain and the rest outside
    assert 0 < s["p_certainly_inside"] < s["p_inside"] < 1 and s["n_uncertain"] > 0
    imp = json.loads((out / "impose_posterior" / "summary.json").read_text())
    assert imp["n_samples"] + imp["n_dropped"] == imp["n_read"] == s["n_total"]
    s3 = json.loads((out / "check_su3" / "summary.json").read_text())
    assert s3["theory"] == "chpt-su3" and s3["settings"]["marginal_band"] == 1e-6
    assert s3["n_marginal"] < 0.01 * s3["n_total"]
