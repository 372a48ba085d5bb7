"""The published-limits part of the demo on its INVENTED VBS analysis."""

from __future__ import annotations

import json

import pytest

from eftsieve.demo import examples_dir
from eftsieve.demo_limits import run_vbs_demo
from eftsieve.io.outset import output_set


@pytest.mark.slow  # about 25 s (a transverse-w region build); `make demo` runs the same job
def test_vbs_demo_writes_both_output_sets(tmp_path):
    lines: list[str] = []
    out = tmp_path / "demo"
    with output_set(out, [examples_dir()]) as stage:
        summaries = run_vbs_demo(examples_dir(), stage, out, lines.append)
    assert "INVENTED" in lines[0]
    for sub in ("limits_intervals", "limits_hepdata"):
        assert (out / sub / "report.html").is_file() and sub in summaries
    s = json.loads((out / "limits_intervals" / "summary.json").read_text())
    assert {t["status"] for t in s["intervals"]} == {"truncated", "excluded"}
    h = json.loads((out / "limits_hepdata" / "summary.json").read_text())
    assert len(h["scans"]) == 1 and len(h["contours"]) == 1
    assert 0 < h["scans"][0]["p_inside"] < 1 and 0 < h["contours"][0]["fraction_inside"] < 1
