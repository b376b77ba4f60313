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


class _Node:
    """A container the collector tracks (an instance with a __dict__), weakly referable."""


def _in_generation(obj, generation: int) -> bool:
    return any(o is obj for o in gc.get_objects(generation=generation))


def test_what_survives_the_last_pause_moves_to_the_oldest_generation_unexamined(restore_gc):
    # Python's gc docs: freeze() moves every tracked object to the permanent generation,
    # unfreeze() puts those back into the oldest one; get_objects(generation=...) lists one
    # generation. A pause's survivors so skip the young collections' walks.
    gc.enable()
    with paused():
        made = _Node()
        assert _in_generation(made, 0)  # new, young, while the collector is off
    assert _in_generation(made, 2)
    assert not _in_generation(made, 0)
    assert gc.get_freeze_count() == 0  # the permanent generation left empty, as found


def test_a_nested_pause_ending_moves_nothing(restore_gc):
    gc.enable()
    with paused():
        with paused():
            made = _Node()
        assert _in_generation(made, 0)  # the outer pause still holds: nothing moved yet
    assert _in_generation(made, 2)


def test_cycles_made_in_a_pause_are_still_freed_by_a_collection(restore_gc):
    import weakref

    gc.enable()
    with paused():
        a, b = _Node(), _Node()
        a.other, b.other = b, a  # a cycle only the cyclic collector frees
        alive = weakref.ref(a)
        del a, b
    assert alive() is not None  # waiting in the oldest generation
    gc.collect()
    assert alive() is None


def test_objects_the_application_froze_stay_frozen(restore_gc):
    # an application may freeze its objects (e.g. before it forks); the pause's unfreeze would
    # release them too, so it moves nothing then
    gc.enable()
    gc.freeze()
    try:
        frozen = gc.get_freeze_count()
        assert frozen > 0
        with paused():
            made = _Node()
        assert gc.get_freeze_count() == frozen
        assert not _in_generation(made, 2)
    finally:
        gc.unfreeze()


def test_a_collector_off_before_the_pause_moves_nothing(restore_gc):
    gc.disable()
    with paused():
        made = _Node()
    assert _in_generation(made, 0)
    assert not gc.isenabled()
