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
