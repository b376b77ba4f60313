"""verify.collector.paused: the cyclic garbage collector paused around a burst of objects and
its state restored, when nested and when pauses of several threads overlap (Python's gc
module: isenabled, disable and enable act on the whole process)."""

from __future__ import annotations

import gc
import threading

import pytest

from verify.collector import paused


@pytest.fixture
def restore_gc():
    was = gc.isenabled()
    yield
    if was:
        gc.enable()
    else:
        gc.disable()


@pytest.mark.parametrize("before", [True, False])
def test_nested_pauses_restore_the_state_before_the_first(restore_gc, before):
    gc.enable() if before else gc.disable()
    with paused():
        assert not gc.isenabled()
        with paused():
            assert not gc.isenabled()
        assert not gc.isenabled()  # the outer pause still holds
    assert gc.isenabled() is before


def test_an_error_inside_still_restores(restore_gc):
    gc.enable()
    with pytest.raises(ZeroDivisionError), paused():
        raise ZeroDivisionError("inside the pause")
    assert gc.isenabled()


def test_overlapping_pauses_of_two_threads_leave_the_collector_on(restore_gc):
    # the interleaving that left it off for good when each pause read gc.isenabled() on its
    # own: B begins while A holds the pause (reads "off"), A ends, B ends
    gc.enable()
    a_in, b_in, a_out = threading.Event(), threading.Event(), threading.Event()
    seen = {}

    def a():
        with paused():
            a_in.set()
            b_in.wait(5)
        a_out.set()

    def b():
        a_in.wait(5)
        with paused():
            b_in.set()
            a_out.wait(5)
            seen["inside"] = gc.isenabled()

    threads = [threading.Thread(target=a), threading.Thread(target=b)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(10)
    assert seen == {"inside": False}  # B's pause still held after A's ended
    assert gc.isenabled()  # and the last pause to end switched it back on


def test_a_pause_leaves_the_older_generations_counts_as_they_were(restore_gc):
    # Python's gc docs: get_count() gives each generation's count of collections (or
    # allocations) towards its next collection. Promoting a pause's survivors with
    # gc.freeze()/gc.unfreeze() zeroed them all, so in a loop of evaluations the older
    # collections, and the cycles only they free, never came: a pause must not touch them.
    gc.enable()
    gc.collect()
    for _ in range(5):
        gc.collect(0)  # each young collection counts one towards the next older one
    before = gc.get_count()[1]
    assert before == 5
    with paused():
        made = [[] for _ in range(10)]
    assert gc.get_count()[1] == before
    assert made
