"""Progress on a terminal, only after a delay: a bar for long checks, a clock for long
region builds.

:class:`DelayedBar` is told the total number of rows (when known) and every block
classified; it opens a tqdm bar on stderr once the check has run for
:data:`DELAY_S` seconds, so short checks print nothing extra.  The CLI enables it only
when stderr is a terminal and neither ``--quiet`` nor ``--json`` is given.
:class:`Heartbeat` says what is being built and for how long (a region build of many
coordinates takes up to minutes and reports nothing on the way); the same rules apply.
"""

from __future__ import annotations

import contextlib
import sys
import threading
import time
from typing import Any, TextIO

#: seconds a check runs before its progress bar appears
DELAY_S = 2.0


class DelayedBar:
    """Rows classified so far, shown as a tqdm bar after :data:`DELAY_S` seconds.

    Parameters
    ----------
    delay
        Seconds before the bar appears.
    stream
        Where the bar is drawn (stderr by default).
    clock
        A monotonic clock (for tests).
    """

    def __init__(self, delay: float = DELAY_S, stream: TextIO | None = None,
                 clock: Any = time.monotonic) -> None:
        self.delay = delay
        self.stream = stream if stream is not None else sys.stderr
        self.clock = clock
        self.total: int | None = None
        self.done = 0
        self.bar: Any = None
        self.t0 = clock()

    def start(self, total: int | None) -> None:
        """The check begins; ``total`` rows (None when a file does not say)."""
        self.total, self.done, self.t0 = total, 0, self.clock()

    def update(self, rows: int) -> None:
        """``rows`` more rows classified."""
        self.done += int(rows)
        if self.bar is not None:
            self.bar.update(int(rows))
        elif self.clock() - self.t0 >= self.delay:
            from tqdm import tqdm

            self.bar = tqdm(total=self.total, initial=self.done, unit="rows",
                            unit_scale=True, desc="checking", file=self.stream,
                            leave=False, dynamic_ncols=True)

    def close(self) -> None:
        """Remove the bar (if it was shown)."""
        if self.bar is not None:
            self.bar.close()
            self.bar = None


def progress_for(quiet: bool, as_json: bool, stream: TextIO | None = None) -> DelayedBar | None:
    """A delayed bar when ``stream`` (stderr) is a terminal and output is not suppressed."""
    stream = stream if stream is not None else sys.stderr
    if quiet or as_json or not getattr(stream, "isatty", lambda: False)():
        return None
    return DelayedBar(stream=stream)


class Heartbeat:
    """``building the aqgc-dim8 region ... 12 s`` on one line of ``stream`` from
    ``delay`` seconds on, redrawn every ``interval`` seconds by a daemon thread, erased
    when the block ends (a context manager)."""

    def __init__(self, what: str, stream: TextIO | None = None, delay: float = DELAY_S,
                 interval: float = 1.0, clock: Any = time.monotonic) -> None:
        self.what = what
        self.stream = stream if stream is not None else sys.stderr
        self.delay, self.interval, self.clock = delay, interval, clock
        self.stop = threading.Event()
        self.width = 0
        self.thread = threading.Thread(target=self._run, daemon=True)

    def _run(self) -> None:
        t0 = self.clock()
        if self.stop.wait(self.delay):
            return
        while True:
            line = f"{self.what} ... {self.clock() - t0:.0f} s"
            self.stream.write("\r" + line.ljust(self.width))
            self.stream.flush()
            self.width = len(line)
            if self.stop.wait(self.interval):
                return

    def __enter__(self) -> Heartbeat:
        self.thread.start()
        return self

    def __exit__(self, *exc: Any) -> None:
        self.stop.set()
        self.thread.join()
        if self.width:
            self.stream.write("\r" + " " * self.width + "\r")
            self.stream.flush()


def heartbeat(what: str, quiet: bool = False, stream: TextIO | None = None
              ) -> contextlib.AbstractContextManager[Any]:
    """A :class:`Heartbeat` when ``stream`` (stderr) is a terminal and output is not
    suppressed, else a block that shows nothing."""
    stream = stream if stream is not None else sys.stderr
    if quiet or not getattr(stream, "isatty", lambda: False)():
        return contextlib.nullcontext()
    return Heartbeat(what, stream)


#: a region build at least this long (seconds) is worth keeping: the CLI says how
REUSE_HINT_S = 10.0


def reuse_hint(theory: str, seconds: float, path: str) -> str | None:
    """The line that tells how to skip a long region build next time (None when the build
    was quick).  The region sits inside the run's output folder, which a later run may not
    use as an input folder, hence 'copy'."""
    if seconds < REUSE_HINT_S:
        return None
    return (f"the {theory} region took {seconds:.0f} s to build; to skip that next time, "
            f"copy {path} out of the output folder and pass it with --region")
