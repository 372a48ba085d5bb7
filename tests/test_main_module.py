"""``python -m eftsieve`` runs the command line (src/eftsieve/__main__.py)."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

SRC = str(Path(__file__).resolve().parents[1] / "src")


def _run(*args: str) -> subprocess.CompletedProcess:
    env = {**os.environ, "PYTHONPATH": SRC + os.pathsep + os.environ.get("PYTHONPATH", "")}
    return subprocess.run([sys.executable, "-m", "eftsieve", *args], capture_output=True,
                          text=True, env=env, timeout=120)


def test_python_m_eftsieve_version():
    from eftsieve._version import __version__

    out = _run("--version")
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == f"eftsieve {__version__}"


def test_python_m_eftsieve_gives_the_verbs_exit_codes():
    """A bad input through ``python -m eftsieve``: the CLI's one line and exit code 2."""
    out = _run("limits", str(Path(SRC).parent / "no_such_card.csv"))
    assert out.returncode == 2, out.stderr
    assert out.stderr.strip().splitlines() == [
        f"eftsieve limits: error: {Path(SRC).parent / 'no_such_card.csv'}: file not found "
        "(fix: check the path)"]
