"""Reading ahead on a thread (caselint.mesh.formats.read_ahead): the same values in the
same order as reading one after the other, the next read while the caller works, and a
failed read raised at its turn."""

from __future__ import annotations

import threading

import pytest

from caselint.mesh.formats.read_ahead import read_ahead


def test_values_in_order_the_next_read_while_the_caller_works():
    started = [threading.Event() for _ in range(5)]

    def read(item):
        started[item].set()
        return item * 10

    got = []
    for value in read_ahead(read, range(5)):
        got.append(value)
        # while the caller holds item k, item k + 1 is being read
        if value < 40:
            assert started[value // 10 + 1].wait(timeout=30)
    assert got == [0, 10, 20, 30, 40]
    assert list(read_ahead(read, [])) == []


def test_a_failed_read_is_raised_at_its_turn():
    def read(item):
        if item == 2:
            raise ValueError("folder 2 is damaged")
        return item

    got = []
    with pytest.raises(ValueError, match="folder 2 is damaged"):
        for value in read_ahead(read, range(4)):
            got.append(value)
    assert got == [0, 1]       # the items before it were handed over first


def test_a_caller_that_stops_early_leaves_no_thread_behind():
    before = {t.name for t in threading.enumerate()}
    reads = read_ahead(lambda item: item, range(10))
    assert next(reads) == 0
    reads.close()               # waits for the read in flight
    after = {t.name for t in threading.enumerate()}
    assert not any(name.startswith("caselint-read-ahead") for name in after - before)
