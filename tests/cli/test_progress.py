"""The check's progress bar: on a terminal only, only after a delay, silent otherwise
(issue 16, item 21).  A fake clock and a fake terminal stream stand in for time and tty."""

from __future__ import annotations

import io

from eftsieve.cli.progress import DELAY_S, DelayedBar, progress_for


class FakeTty(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_bar_appears_only_after_the_delay_and_counts_rows() -> None:
    now = [0.0]
    stream = FakeTty()
    bar = DelayedBar(stream=stream, clock=lambda: now[0])
    bar.start(1000)
    bar.update(100)
    now[0] = DELAY_S * 0.9
    bar.update(100)
    assert stream.getvalue() == "", "a short check prints nothing"
    now[0] = DELAY_S + 0.1
    bar.update(300)
    assert "checking" in stream.getvalue() and "500/1.00k" in stream.getvalue()
    bar.close()
    assert bar.bar is None


def test_no_bar_with_quiet_json_or_without_a_terminal() -> None:
    assert progress_for(quiet=True, as_json=False, stream=FakeTty()) is None
    assert progress_for(quiet=False, as_json=True, stream=FakeTty()) is None
    assert progress_for(quiet=False, as_json=False, stream=io.StringIO()) is None
    assert isinstance(progress_for(quiet=False, as_json=False, stream=FakeTty()), DelayedBar)


def test_the_local_check_reports_every_row_to_the_bar() -> None:
    from eftsieve.check.run import run_check
    from eftsieve.check.verdicts import CheckSettings
    from tests.helpers import gaussian_fit, region

    seen: dict[str, int | None] = {"total": None, "rows": 0}

    class Count:
        def start(self, total: int | None) -> None:
            seen["total"] = total

        def update(self, rows: int) -> None:
            seen["rows"] = int(seen["rows"] or 0) + rows

    fit = gaussian_fit([1.0, 2.0], [[0.1, 0.0], [0.0, 0.1]])
    run_check(fit, region(((0, 1), 1.0)), CheckSettings(draws=30_000), progress=Count())
    assert seen == {"total": 30_000, "rows": 30_000}


def test_a_long_region_build_says_what_it_builds_and_for_how_long() -> None:
    import contextlib
    import threading

    from eftsieve.cli.progress import Heartbeat, heartbeat

    stream = FakeTty()
    ticks = threading.Event()

    class Stream(FakeTty):
        def write(self, s: str) -> int:
            n = stream.write(s)
            if "..." in stream.getvalue():
                ticks.set()
            return n

    with Heartbeat("building the toy region", stream=Stream(), delay=0.01, interval=0.01):
        assert ticks.wait(5.0), "the line appears once the delay is over"
    text = stream.getvalue()
    assert text.startswith("\rbuilding the toy region ... 0 s")
    assert text.endswith("\r"), "the line is erased at the end"
    quick = FakeTty()
    with Heartbeat("building the toy region", stream=quick, delay=60.0):
        pass
    assert quick.getvalue() == "", "a short build prints nothing"
    assert isinstance(heartbeat("x", quiet=True, stream=FakeTty()), contextlib.nullcontext)
    assert isinstance(heartbeat("x", stream=io.StringIO()), contextlib.nullcontext)
    assert isinstance(heartbeat("x", stream=FakeTty()), Heartbeat)


def test_a_long_build_tells_how_to_reuse_the_region(tmp_path, capsys, monkeypatch):
    """After a region build of REUSE_HINT_S seconds or more, check names the saved region
    and how to pass it; the region it names is the one the run used, and a run given it
    with --region builds nothing and prints no hint (threshold lowered to 0 s here)."""
    import json
    import shutil
    from pathlib import Path

    import eftsieve.cli.progress as progress
    from eftsieve.cli.main import main

    assert progress.reuse_hint("toy", progress.REUSE_HINT_S - 0.1, "r.json") is None
    cases = Path(__file__).parents[1] / "report" / "verdict_cases"
    monkeypatch.setattr(progress, "REUSE_HINT_S", 0.0)
    out = tmp_path / "o"
    args = ["check", str(cases / "tension.yaml"), "--draws", "2000", "--no-plots"]
    assert main([*args, "-o", str(out)]) == 0
    lines = capsys.readouterr().out.splitlines()
    hint = [ln for ln in lines if "to skip that next time" in ln]
    assert len(hint) == 1
    assert f"copy {out / 'region.json'} out of the output folder" in hint[0]
    kept = tmp_path / "kept_region.json"
    shutil.copy(out / "region.json", kept)
    assert main([*args, "-o", str(tmp_path / "o2"), "--region", str(kept)]) == 0
    assert "to skip that next time" not in capsys.readouterr().out
    first = json.loads((out / "summary.json").read_text())
    again = json.loads((tmp_path / "o2" / "summary.json").read_text())
    assert first["p_inside"] == again["p_inside"]
