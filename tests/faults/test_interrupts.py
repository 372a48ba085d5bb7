"""Interrupted, concurrent and full-disk runs (issue 17), as real processes.

* SIGINT and SIGTERM at several points of a long check: exit 130 / 143, one line, no
  traceback, the previous complete output set untouched, nothing left beside it.
* Two runs into one folder: the second fails at once (exit 2, "another eftsieve run");
  the first completes and its set checks out against its manifest.
* A full disk: a 1 MiB tmpfs when the test runs as root and mount works (else skipped;
  the catalogue's injected ENOSPC cases cover the same path in-process).
"""

from __future__ import annotations

import hashlib
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from tests.faults.builders import GOOD_CARD, card_text

SRC = str(Path(__file__).resolve().parents[2] / "src")
#: draws of the long run: long enough that every signal point below lands mid-run
LONG_DRAWS = "200000000"
#: draws of the first of two concurrent runs: it must outlast the second one's start-up
BUSY_DRAWS = "80000000"


def _env() -> dict[str, str]:
    return {**os.environ, "PYTHONPATH": SRC + os.pathsep + os.environ.get("PYTHONPATH", "")}


def _cli(*args: str) -> list[str]:
    return [sys.executable, "-m", "eftsieve.cli", *args]


def _digest(root: Path) -> dict[str, str]:
    return {p.relative_to(root).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(root.rglob("*")) if p.is_file()}


@pytest.fixture(scope="module")
def setup(tmp_path_factory, su2_region):
    """A card, a region file and a complete previous output set."""
    d = tmp_path_factory.mktemp("interrupts")
    (d / "card.yaml").write_text(card_text(GOOD_CARD, "card.yaml"))
    su2_region.save(d / "region.json")
    prev = d / "prev"
    rc = subprocess.run(_cli("check", str(d / "card.yaml"), "--region", str(d / "region.json"),
                             "-o", str(prev), "--draws", "2000", "--no-plots"),
                        env=_env(), capture_output=True, text=True, timeout=120)
    assert rc.returncode == 0, rc.stderr
    return d, prev


def _long_run(d: Path, out: Path, draws: str = LONG_DRAWS) -> subprocess.Popen:
    return subprocess.Popen(_cli("check", str(d / "card.yaml"), "--region",
                                 str(d / "region.json"), "-o", str(out), "--draws", draws,
                                 "--chunk-rows", "200000", "--no-plots"),
                            env=_env(), stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True)


def _leftovers(out: Path) -> list[str]:
    return [p.name for p in out.parent.iterdir() if p.name.startswith(f".{out.name}.")]


def _wait_for_lock(out: Path, proc: subprocess.Popen, timeout: float = 60) -> None:
    lock = out.parent / f".{out.name}.lock"
    end = time.monotonic() + timeout
    while not lock.exists():
        assert proc.poll() is None, proc.communicate()
        assert time.monotonic() < end, "the run never took its lock"
        time.sleep(0.05)


@pytest.mark.parametrize("sig,code,word", [(signal.SIGINT, 130, "interrupted (Ctrl-C)"),
                                           (signal.SIGTERM, 143, "terminated (SIGTERM)")])
@pytest.mark.parametrize("delay", [pytest.param(0.0, marks=pytest.mark.slow), 1.5,
                                   pytest.param(3.0, marks=pytest.mark.slow)])
def test_signal_leaves_previous_set(setup, tmp_path, sig, code, word, delay):
    d, prev = setup
    out = tmp_path / "out"
    shutil.copytree(prev, out)
    before = _digest(out)
    proc = _long_run(d, out)
    try:
        _wait_for_lock(out, proc)  # the run is past its imports and holds the folder
        time.sleep(delay)
        assert proc.poll() is None, "the long run ended before the signal; raise LONG_DRAWS"
        proc.send_signal(sig)
        _, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.communicate()
    assert proc.returncode == code, err
    assert "Traceback" not in err
    assert err.strip().splitlines() == [f"eftsieve check: {word}, exit {code}; the output "
                                        f"folder {out} still holds the previous complete "
                                        "run"], err
    assert _digest(out) == before
    assert _leftovers(out) == []


def test_signal_in_fresh_folder_leaves_nothing(setup, tmp_path):
    d, _ = setup
    out = tmp_path / "fresh"
    proc = _long_run(d, out)
    _wait_for_lock(out, proc)
    time.sleep(0.5)
    proc.send_signal(signal.SIGTERM)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 143, err
    assert err.strip().splitlines() == [f"eftsieve check: terminated (SIGTERM), exit 143; "
                                        f"nothing was written to {out}"], err
    assert not out.exists()
    assert _leftovers(out) == []


def test_second_run_into_locked_folder_fails_at_once(setup, tmp_path):
    """The lock is held here (deterministic); the run started meanwhile refuses at once."""
    from eftsieve.io.outset import _lock

    d, prev = setup
    out = tmp_path / "locked"
    shutil.copytree(prev, out)
    before = _digest(out)
    with _lock(out.resolve()):
        res = subprocess.run(_cli("check", str(d / "card.yaml"), "--region",
                                  str(d / "region.json"), "-o", str(out), "--draws", "2000",
                                  "--no-plots"), env=_env(), capture_output=True, text=True,
                             timeout=120)
    assert res.returncode == 2, res.stderr
    assert res.stderr.strip().splitlines() == [res.stderr.strip()]
    assert "another eftsieve run is writing this output folder" in res.stderr
    assert _digest(out) == before
    assert _leftovers(out) == []


@pytest.mark.slow
def test_two_concurrent_runs(setup, tmp_path):
    """Two real processes into one folder: the second fails, the first completes."""
    from eftsieve.io.outset import verify_manifest

    d, _ = setup
    out = tmp_path / "busy"
    first = _long_run(d, out, draws=BUSY_DRAWS)
    try:
        _wait_for_lock(out, first)
        second = subprocess.run(_cli("check", str(d / "card.yaml"), "--region",
                                     str(d / "region.json"), "-o", str(out), "--draws", "2000",
                                     "--no-plots"), env=_env(), capture_output=True, text=True,
                                timeout=120)
        assert first.poll() is None, "the first run ended too early; raise BUSY_DRAWS"
        assert second.returncode == 2, second.stderr
        assert "another eftsieve run" in second.stderr
        _, err = first.communicate(timeout=600)
    finally:
        if first.poll() is None:
            first.kill()
            first.communicate()
    assert first.returncode == 0, err
    assert verify_manifest(out) == []
    assert _leftovers(out) == []


def _tmpfs(path: Path) -> bool:
    if os.geteuid() != 0 or shutil.which("mount") is None:
        return False
    path.mkdir()
    res = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=1m", "tmpfs", str(path)],
                         capture_output=True)
    return res.returncode == 0


def test_full_disk_tmpfs(setup, tmp_path):
    d, prev = setup
    disk = tmp_path / "disk"
    if not _tmpfs(disk):
        pytest.skip("needs root and tmpfs (the catalogue injects ENOSPC instead)")
    try:
        out = disk / "out"
        shutil.copytree(prev, out)
        before = _digest(out)
        # a mean mostly outside the region: many flagged rows, far more than 1 MiB
        (d / "outside.yaml").write_text(card_text({**GOOD_CARD, "mean": [1.0, 1.6]},
                                                  "outside.yaml"))
        res = subprocess.run(_cli("check", str(d / "outside.yaml"), "--region",
                                  str(d / "region.json"), "-o", str(out), "--draws", "400000",
                                  "--no-plots", "--flagged"), env=_env(),
                             capture_output=True, text=True, timeout=300)
        assert res.returncode == 2, res.stderr
        assert "no space left" in res.stderr
        assert "Traceback" not in res.stderr
        assert _digest(out) == before
        assert _leftovers(out) == []
    finally:
        subprocess.run(["umount", str(disk)], capture_output=True)
