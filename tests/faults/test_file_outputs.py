"""``region -o FILE [--plot PNG]`` and ``cite -o FILE`` write like check and impose
(issue 17, items 1, 2 and 4): under the output-set lock, atomically, all files or none.

Each test holds a previous run's files and asserts that a failed, interrupted or
concurrent run leaves them byte for byte, that its one line names the file and the fix,
and that no staging or lock file is left beside them.
"""

from __future__ import annotations

import errno
import hashlib
from pathlib import Path
from typing import Any

import pytest

from eftsieve.cli.main import main
from eftsieve.io.outset import _lock


def _sha(p: Path) -> str:
    return hashlib.sha256(p.read_bytes()).hexdigest()


def _leftovers(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.startswith("."))


@pytest.fixture
def previous(tmp_path, su2_region) -> dict[str, Path]:
    """A previous region file, region plot and BibTeX file (stand-ins for the plot)."""
    files = {"region": tmp_path / "region.json", "plot": tmp_path / "region.png",
             "bib": tmp_path / "refs.bib"}
    su2_region.save(files["region"])
    files["plot"].write_bytes(b"previous plot")
    files["bib"].write_text("@article{previous}\n")
    return files


def _one_error_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    return lines[0]


@pytest.mark.parametrize("verb", ["region", "cite"])
def test_second_writer_fails_at_once(verb, previous, capsys):
    target = previous["region" if verb == "region" else "bib"]
    before = _sha(target)
    argv = ["region", "-o", str(target)] if verb == "region" else \
        ["cite", "--theory", "chpt-su2", "-o", str(target)]
    with _lock(target.resolve()):  # another run holds the file
        assert main(argv) == 2
    line = _one_error_line(capsys.readouterr().err)
    assert "another eftsieve run is writing" in line
    assert str(target.name) in line and "fix:" in line
    assert _sha(target) == before
    assert _leftovers(target.parent) == []


def test_region_interrupted_keeps_previous_files(previous, monkeypatch, capsys):
    def interrupted(*args: Any, **kw: Any) -> None:
        raise KeyboardInterrupt
    monkeypatch.setattr("eftsieve.api.build_region", interrupted)
    before = {k: _sha(p) for k, p in previous.items()}
    assert main(["region", "-o", str(previous["region"]), "--plot",
                 str(previous["plot"])]) == 130
    line = _one_error_line(capsys.readouterr().err)
    assert line == (f"eftsieve region: interrupted (Ctrl-C), exit 130; the output file "
                    f"{previous['region'].resolve()} still holds the previous complete run")
    assert {k: _sha(p) for k, p in previous.items()} == before
    assert _leftovers(previous["region"].parent) == []


def test_region_plot_failure_keeps_both_previous_files(previous, monkeypatch, capsys):
    """The region file is not replaced when its plot fails: both files, or neither."""
    from eftsieve.errors import InputError

    def broken(region: Any, path: Any, **kw: Any) -> None:
        Path(path).write_bytes(b"half a plot")
        raise InputError(path, "--plot", "cannot draw", "a test fault")
    monkeypatch.setattr("eftsieve.report.plots.save_region_plot", broken)
    before = {k: _sha(p) for k, p in previous.items()}
    assert main(["region", "-o", str(previous["region"]), "--plot",
                 str(previous["plot"])]) == 2
    assert "cannot draw" in _one_error_line(capsys.readouterr().err)
    assert {k: _sha(p) for k, p in previous.items()} == before
    assert _leftovers(previous["region"].parent) == []


@pytest.mark.parametrize("verb", ["region", "cite"])
def test_full_disk_keeps_previous_file(verb, previous, monkeypatch, capsys):
    def full(path: Any, data: bytes) -> Path:
        raise OSError(errno.ENOSPC, "No space left on device", str(path))
    monkeypatch.setattr("eftsieve.io.atomic.atomic_write_bytes", full)
    target = previous["region" if verb == "region" else "bib"]
    before = _sha(target)
    argv = ["region", "-o", str(target)] if verb == "region" else \
        ["cite", "--theory", "chpt-su2", "-o", str(target)]
    assert main(argv) == 2
    line = _one_error_line(capsys.readouterr().err)
    assert "no space left" in line and target.name in line
    assert _sha(target) == before
    assert _leftovers(target.parent) == []


def test_region_and_cite_replace_previous_files(previous, capsys):
    """A good run replaces the files and leaves no lock or staging file."""
    assert main(["region", "-o", str(previous["region"])]) == 0
    assert main(["cite", "--region", str(previous["region"]), "-o",
                 str(previous["bib"])]) == 0
    assert "@" in previous["bib"].read_text() and "previous" not in \
        previous["bib"].read_text()
    assert _leftovers(previous["region"].parent) == []
