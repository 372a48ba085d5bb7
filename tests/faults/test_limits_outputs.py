"""``eftsieve limits`` writes its output folder like check and impose (issues 17 and 21):
one complete run or the previous one.

In-process: Ctrl-C and SIGTERM while the report is half written, and while a region is
being built; a folder locked by another run.  As a real process: SIGTERM in the middle of
a long run (a HEPData record of central values checked with many draws).  Each asserts
the exit code, the one line, the previous set byte for byte (or nothing in a fresh
folder) and that no staging or lock file is left beside it.  The catalogue's
``limits-*`` cases cover bad inputs, a full disk and a read-only parent.
"""

from __future__ import annotations

import hashlib
import os
import signal
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

import pytest

from eftsieve.cli.main import Terminated, main
from eftsieve.io.outset import verify_manifest
from tests.faults.builders import GOOD_INTERVAL_CARD, write_record

SRC = str(Path(__file__).resolve().parents[2] / "src")
#: draws of the long real-process run: several seconds on the 2-core machine
LONG_DRAWS = "40000000"
CENTRAL = {"independent_variables": [{"header": {"name": "Coefficient"},
                                      "values": [{"value": "fS0"}, {"value": "fS1"}]}],
           "dependent_variables": [{"header": {"name": "Value"}, "values": [
               {"value": 0.5, "errors": [{"symerror": 0.3}]},
               {"value": 0.2, "errors": [{"symerror": 0.3}]}]}]}


def _digest(root: Path) -> dict[str, str]:
    return {p.relative_to(root).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(root.rglob("*")) if p.is_file()}


def _leftovers(out: Path) -> list[str]:
    return [p.name for p in out.parent.iterdir() if p.name.startswith(f".{out.name}.")]


@pytest.fixture(scope="module")
def setup(tmp_path_factory) -> tuple[Path, Path]:
    """An interval card, the higgs-quartic region and a complete previous limits set."""
    from eftsieve.region.build import build_region

    d = tmp_path_factory.mktemp("limits_outputs")
    (d / "limits.csv").write_text(GOOD_INTERVAL_CARD, encoding="utf-8")
    build_region("higgs-quartic", {}).save(d / "higgs.json")
    prev = d / "prev"
    assert main(["limits", str(d / "limits.csv"), "--region", str(d / "higgs.json"), "-o",
                 str(prev), "--no-plots", "-q"]) == 0
    assert verify_manifest(prev) == []
    return d, prev


def _argv(d: Path, out: Path, region: bool = True) -> list[str]:
    return ["limits", str(d / "limits.csv"), *(["--region", str(d / "higgs.json")]
                                               if region else []),
            "-o", str(out), "--no-plots", "-q"]


def _one_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    return lines[0]


@pytest.mark.parametrize("exc,code,word", [(KeyboardInterrupt, 130, "interrupted (Ctrl-C)"),
                                           (Terminated, 143, "terminated (SIGTERM)")])
def test_signal_while_writing_keeps_previous_set(setup, tmp_path, monkeypatch, capsys, exc,
                                                 code, word):
    """The report is half written into the staging folder when the signal arrives."""
    import shutil

    d, prev = setup
    out = tmp_path / "out"
    shutil.copytree(prev, out)
    before = _digest(out)

    def half(result: Any, stage: Path, **kw: Any) -> None:
        (Path(stage) / "summary.json").write_text("{\"half\": ")
        raise exc()
    monkeypatch.setattr("eftsieve.report.limits_report.write_limits_outputs", half)
    assert main(_argv(d, out)) == code
    line = _one_line(capsys.readouterr().err)
    assert line == (f"eftsieve limits: {word}, exit {code}; the output folder "
                    f"{out.resolve()} still holds the previous complete run")
    assert _digest(out) == before
    assert _leftovers(out) == []


def test_ctrl_c_while_building_the_region_leaves_a_fresh_folder_empty(setup, tmp_path,
                                                                       monkeypatch, capsys):
    d, _ = setup
    out = tmp_path / "fresh"

    def interrupted(*args: Any, **kw: Any) -> None:
        raise KeyboardInterrupt
    monkeypatch.setattr("eftsieve.region.build.build_region", interrupted)
    assert main(_argv(d, out, region=False)) == 130
    line = _one_line(capsys.readouterr().err)
    assert line == (f"eftsieve limits: interrupted (Ctrl-C), exit 130; nothing was written "
                    f"to {out.resolve()}")
    assert not out.exists()
    assert _leftovers(out) == []


def test_second_run_into_a_locked_folder_fails_at_once(setup, tmp_path, capsys):
    import shutil

    from eftsieve.io.outset import _lock

    d, prev = setup
    out = tmp_path / "locked"
    shutil.copytree(prev, out)
    before = _digest(out)
    with _lock(out.resolve()):
        assert main(_argv(d, out)) == 2
    line = _one_line(capsys.readouterr().err)
    assert "another eftsieve run is writing this output folder" in line and "fix:" in line
    assert _digest(out) == before
    assert _leftovers(out) == []


def test_sigterm_to_a_real_run_keeps_previous_set(setup, tmp_path):
    """A real process checking a record's central values with many draws."""
    import shutil

    d, prev = setup
    write_record(tmp_path, "rec", {"central.yaml": CENTRAL})
    out = tmp_path / "out"
    shutil.copytree(prev, out)
    before = _digest(out)
    env = {**os.environ, "PYTHONPATH": SRC + os.pathsep + os.environ.get("PYTHONPATH", "")}
    proc = subprocess.Popen([sys.executable, "-m", "eftsieve", "limits", str(tmp_path / "rec"),
                             "--theory", "higgs-quartic", "--region", str(d / "higgs.json"),
                             "-o", str(out), "--no-plots", "--draws", LONG_DRAWS],
                            env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    lock = out.parent / f".{out.name}.lock"
    try:
        end = time.monotonic() + 60
        while not lock.exists():
            assert proc.poll() is None, proc.communicate()
            assert time.monotonic() < end, "the run never took its lock"
            time.sleep(0.05)
        time.sleep(1.0)
        assert proc.poll() is None, "the run ended before the signal; raise LONG_DRAWS"
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.communicate()
    assert proc.returncode == 143, err
    assert err.strip().splitlines() == [f"eftsieve limits: terminated (SIGTERM), exit 143; "
                                        f"the output folder {out} still holds the previous "
                                        "complete run"], err
    assert _digest(out) == before
    assert _leftovers(out) == []
