"""Reading ahead on a second thread: the same items in the same order, errors in place,
and a reader that stops (and closes its file) when the consumer stops."""

from __future__ import annotations

import threading
import time

import pytest

from eftsieve.check.prefetch import read_ahead


def test_items_come_out_unchanged_and_in_order():
    items = [object() for _ in range(50)]
    assert list(read_ahead(iter(items))) == items
    assert list(read_ahead(iter([]))) == []


def test_the_items_are_made_on_another_thread():
    threads = []

    def source():
        for i in range(3):
            threads.append(threading.current_thread())
            yield i

    assert list(read_ahead(source())) == [0, 1, 2]
    assert all(t is not threading.current_thread() for t in threads)


def test_an_error_is_raised_after_every_item_before_it():
    def source():
        yield 1
        yield 2
        raise ValueError("bad row 107")

    got = []
    with pytest.raises(ValueError, match="bad row 107"):
        for x in read_ahead(source()):
            got.append(x)
    assert got == [1, 2]


def test_the_reader_runs_at_most_depth_items_ahead():
    made = []

    def source():
        for i in range(10):
            made.append(i)
            yield i

    it = read_ahead(source(), depth=1)
    assert next(it) == 0
    time.sleep(0.3)  # ample time for the reader to run ahead as far as it may
    # item 0 taken, item 1 waiting in the queue, item 2 made and waiting to be queued
    assert len(made) <= 3
    it.close()


def test_a_consumer_that_stops_stops_the_reader_and_closes_the_source():
    closed = threading.Event()

    def source():
        try:
            yield from range(1_000_000)
        finally:
            closed.set()

    it = read_ahead(source())
    assert next(it) == 0
    it.close()  # what a for loop does when its body raises
    assert closed.wait(5.0)


def test_the_reader_thread_ends_with_the_stream():
    before = {t.ident for t in threading.enumerate()}
    assert sum(read_ahead(iter(range(100)))) == 4950
    left = [t for t in threading.enumerate()
            if t.ident not in before and t.name == "eftsieve-read-ahead"]
    assert not left
