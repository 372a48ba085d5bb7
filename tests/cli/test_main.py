"""main(): interruptions end with one line and the conventional exit codes (128 + signal)."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time

from eftsieve.cli import theories as theories_mod
from eftsieve.cli.main import main


def test_sigterm_is_one_line_and_143(monkeypatch, capsys):
    def slow(args):
        os.kill(os.getpid(), signal.SIGTERM)
        time.sleep(30)          # the handler interrupts this
        return 0

    monkeypatch.setattr(theories_mod, "cmd_theories", slow)
    before = signal.getsignal(signal.SIGTERM)
    assert main(["theories"]) == 143
    assert capsys.readouterr().err == "eftsieve theories: terminated (SIGTERM), exit 143\n"
    assert signal.getsignal(signal.SIGTERM) is before   # handler restored


def test_keyboard_interrupt_is_one_line_and_130(monkeypatch, capsys):
    def interrupted(args):
        raise KeyboardInterrupt

    monkeypatch.setattr(theories_mod, "cmd_theories", interrupted)
    assert main(["theories"]) == 130
    assert capsys.readouterr().err == "eftsieve theories: interrupted (Ctrl-C), exit 130\n"


def test_terminating_a_real_run_leaves_no_partial_file(tmp_path):
    """SIGTERM to a running `eftsieve demo`: exit 143, one line, no temporary files."""
    out = tmp_path / "demo"
    proc = subprocess.Popen([sys.executable, "-m", "eftsieve.cli", "demo", "-o", str(out)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    deadline = time.monotonic() + 120
    lock = tmp_path / ".demo.lock"  # the run holds its output folder: it is working
    while not lock.exists() and time.monotonic() < deadline:
        time.sleep(0.2)
    time.sleep(2.0)
    proc.send_signal(signal.SIGTERM)
    stdout, stderr = proc.communicate(timeout=120)
    assert proc.returncode == 143, stderr
    assert stderr.strip().splitlines() == ["eftsieve demo: terminated (SIGTERM), exit 143; "
                                           f"nothing was written to {out}"]
    assert not out.exists()  # atomic output sets: nothing from the interrupted run
    assert not list(tmp_path.glob(".demo.*"))  # no staging folder or lock left
