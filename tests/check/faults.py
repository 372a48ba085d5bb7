"""Picklable partition hooks that inject faults into Dask workers (see dask_check's hook).

They run in the worker processes, which import this module by name; state shared with
the test lives in marker files.
"""

from __future__ import annotations

import os
import signal
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from eftsieve.io.samples import FilePart


@dataclass(frozen=True)
class KillOnce:
    """Kill the worker process the first time partition ``index`` starts.

    Attributes
    ----------
    marker
        A file created just before the kill; its presence lets later attempts through.
    index
        The partition to hit.
    """

    marker: str
    index: int

    def __call__(self, part: FilePart) -> None:
        if part.index == self.index and not Path(self.marker).exists():
            Path(self.marker).write_text(str(os.getpid()))
            os.kill(os.getpid(), signal.SIGKILL)

    def to_dict(self) -> dict[str, Any]:
        return {"marker": self.marker, "index": self.index}


@dataclass(frozen=True)
class KillAlways:
    """Kill the worker process every time partition ``index`` starts.

    Attributes
    ----------
    index
        The partition to hit.
    """

    index: int

    def __call__(self, part: FilePart) -> None:
        if part.index == self.index:
            os.kill(os.getpid(), signal.SIGKILL)

    def to_dict(self) -> dict[str, Any]:
        return {"index": self.index}


@dataclass(frozen=True)
class FailAlways:
    """Raise OSError every time partition ``index`` starts, logging each attempt.

    Attributes
    ----------
    log
        A file that gets one line per attempt.
    index
        The partition to hit.
    """

    log: str
    index: int

    def __call__(self, part: FilePart) -> None:
        with open(self.log, "a", encoding="utf-8") as fh:
            fh.write(f"{part.index}\n")
        if part.index == self.index:
            raise OSError(f"injected read failure in {part.path.name}")

    def to_dict(self) -> dict[str, Any]:
        return {"log": self.log, "index": self.index}


@dataclass(frozen=True)
class Sleep:
    """Sleep before partition ``index`` starts (a slow or hung worker).

    Attributes
    ----------
    seconds
        How long.
    index
        The partition to hit.
    """

    seconds: float
    index: int

    def __call__(self, part: FilePart) -> None:
        if part.index == self.index:
            time.sleep(self.seconds)

    def to_dict(self) -> dict[str, Any]:
        return {"seconds": self.seconds, "index": self.index}
