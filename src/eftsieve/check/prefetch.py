"""Reading ahead: the next chunk of a partition is read on a second thread while this
one classifies the current chunk.

The reading (Parquet decoding in pyarrow, the numpy copies and range checks of
:meth:`eftsieve.io.samples.SamplesSource.iter_part`, or the Gaussian draws) releases the
GIL for most of its time, as does the classification of a block (numpy's element-wise
loops), so on two cores the two overlap: the stream of a 2-column Parquet file spent
about a third of its time reading (benchmarks/bench_stream.py, issue 18).

The chunks come out in the order the reader made them and unchanged, so nothing that
the check computes depends on reading ahead.  An error of the reader (an
:class:`eftsieve.errors.InputError` naming a bad row) is raised by the consumer at the
place where the bad chunk would have come, after every chunk before it; a consumer that
stops early (an error in the classification, or a closed generator) stops the reader,
which then closes its iterator (and the file) on its own thread.  At most ``depth``
chunks wait in the queue, so the memory grows by that many chunks at most (one by
default: with the chunk being read and the one being checked, three chunks at a time).
"""

from __future__ import annotations

import queue
import threading
from collections.abc import Iterator
from typing import TypeVar

T = TypeVar("T")

#: seconds between the reader's checks whether the consumer has gone away
POLL = 0.1


def read_ahead(items: Iterator[T], depth: int = 1, name: str = "eftsieve-read-ahead"
               ) -> Iterator[T]:
    """Yield the items of ``items`` in order, produced on a daemon thread up to ``depth``
    items ahead of the consumer.

    Parameters
    ----------
    items
        The iterator to drain (it is advanced and closed on the reader thread only).
    depth
        Items held ready beyond the one being produced (at least 1).
    name
        The reader thread's name.
    """
    q: queue.Queue = queue.Queue(maxsize=max(1, depth))
    stop = threading.Event()

    def put(entry: tuple) -> bool:
        while not stop.is_set():
            try:
                q.put(entry, timeout=POLL)
                return True
            except queue.Full:
                continue
        return False

    def run() -> None:
        try:
            for item in items:
                if not put(("item", item)):
                    return
            put(("end", None))
        except BaseException as err:  # noqa: BLE001 - handed to the consumer, re-raised
            put(("error", err))
        finally:
            close = getattr(items, "close", None)
            if close is not None:
                close()

    thread = threading.Thread(target=run, name=name, daemon=True)
    thread.start()
    try:
        while True:
            kind, value = q.get()
            if kind == "item":
                yield value
            elif kind == "end":
                return
            else:
                raise value
    finally:
        stop.set()
        thread.join()
