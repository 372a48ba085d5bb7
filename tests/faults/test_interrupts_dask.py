"""Ctrl-C and SIGTERM during ``eftsieve check --engine dask`` (issue 17, items 4 and 11).

A real run on a local cluster of two worker processes, in its own session (the
terminal's process group): Ctrl-C is SIGINT to the whole group, as a terminal sends it;
SIGTERM goes to the eftsieve process only, as a process manager sends it.  Each test
asserts: exit 130 / 143; exactly one line on stderr naming the verb, the signal, the
exit code and that the output folder still holds the previous complete run; no
traceback or library log; the previous output set unchanged; nothing left beside it; an
empty temporary folder (the cluster's scratch space is removed); and no process of the
run's session still alive.
"""

from __future__ import annotations

import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from tests.faults.builders import GOOD_CARD, card_text
from tests.faults.test_interrupts import SRC, _digest, _leftovers

pytest.importorskip("distributed")

#: Gaussian draws of the run: one partition that keeps a worker busy for well over 10 s
DRAWS = "40000000"
#: seconds to wait after the workers are up, so that the partition is running
SETTLE = 1.5


def _session_alive(sid: int) -> list[int]:
    """Processes whose session id is ``sid`` (the run's workers, if any survived)."""
    alive = []
    for stat in Path("/proc").glob("[0-9]*/stat"):
        try:
            fields = stat.read_text().rsplit(")", 1)[1].split()
        except OSError:  # the process ended meanwhile
            continue
        if int(fields[3]) == sid and fields[0] != "Z":
            alive.append(int(stat.parent.name))
    return alive


@pytest.fixture(scope="module")
def inputs(tmp_path_factory, su2_region):
    """The card, the region and a previous complete set (local engine: the set does not
    depend on the engine, and this saves a cluster start)."""
    from eftsieve.cli.main import main

    d = tmp_path_factory.mktemp("dask_interrupts")
    (d / "card.yaml").write_text(card_text(GOOD_CARD, "card.yaml"))
    su2_region.save(d / "region.json")
    assert main(["check", str(d / "card.yaml"), "--region", str(d / "region.json"), "-o",
                 str(d / "prev"), "--no-plots", "--draws", "2000", "-q"]) == 0
    return d


def _wait_for_workers(tmp: Path, proc: subprocess.Popen, timeout: float = 90) -> None:
    """Until both workers have made their scratch folders (the cluster is up)."""
    end = time.monotonic() + timeout
    while len(list(tmp.glob("eftsieve-dask-*/dask-scratch-space/worker-*"))) < 4:
        # each worker makes a folder and its lock file
        assert proc.poll() is None, proc.communicate()
        assert time.monotonic() < end, "the local cluster never started"
        time.sleep(0.05)


@pytest.mark.parametrize("sig,code,word,group", [
    (signal.SIGINT, 130, "interrupted (Ctrl-C)", True),
    (signal.SIGTERM, 143, "terminated (SIGTERM)", False),
    pytest.param(signal.SIGINT, 130, "interrupted (Ctrl-C)", False, marks=pytest.mark.slow),
    pytest.param(signal.SIGTERM, 143, "terminated (SIGTERM)", True, marks=pytest.mark.slow)])
def test_dask_check_interrupted_is_one_line(inputs, tmp_path, sig, code, word, group):
    d = inputs
    out = tmp_path / "out"
    tmp = tmp_path / "tmp"
    tmp.mkdir()
    env = {**os.environ, "PYTHONPATH": SRC + os.pathsep + os.environ.get("PYTHONPATH", ""),
           "TMPDIR": str(tmp)}
    argv = [sys.executable, "-m", "eftsieve.cli", "check", str(d / "card.yaml"), "--region",
            str(d / "region.json"), "-o", str(out), "--no-plots", "--engine", "dask"]
    shutil.copytree(d / "prev", out)
    before = _digest(out)
    proc = subprocess.Popen([*argv, "--draws", DRAWS], env=env, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, start_new_session=True)
    try:
        _wait_for_workers(tmp, proc)
        time.sleep(SETTLE)
        assert proc.poll() is None, "the run ended before the signal; raise DRAWS"
        if group:
            os.killpg(proc.pid, sig)  # what a terminal's Ctrl-C does
        else:
            proc.send_signal(sig)
        sent = time.monotonic()
        _, err = proc.communicate(timeout=30)
        took = time.monotonic() - sent
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
            proc.communicate()
    assert proc.returncode == code, err
    assert err.strip().splitlines() == [f"eftsieve check: {word}, exit {code}; the output "
                                        f"folder {out} still holds the previous complete "
                                        "run"], err
    assert took < 15, took
    assert _digest(out) == before
    assert _leftovers(out) == []
    assert list(tmp.iterdir()) == []  # the cluster's scratch folder is gone
    time.sleep(0.5)
    assert _session_alive(proc.pid) == [], "a worker process outlived the run"
