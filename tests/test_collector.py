"""The paused cyclic collector: nested and concurrent pauses (common practice, no source)."""

from __future__ import annotations

import gc
import threading

from kinetics.collector import collector_paused, fewer_passes


def test_nested_pauses_turn_the_collector_on_after_the_outer_block():
    assert gc.isenabled()
    with collector_paused():
        with collector_paused():
            assert not gc.isenabled()
        assert not gc.isenabled()  # the outer block still holds it
    assert gc.isenabled()


def test_a_collector_that_was_off_stays_off():
    gc.disable()
    try:
        with collector_paused():
            assert not gc.isenabled()
        assert not gc.isenabled()
    finally:
        gc.enable()


def test_no_pause_leaves_the_collector_alone():
    with collector_paused(False):
        assert gc.isenabled()
    assert gc.isenabled()


def test_threads_pausing_together_turn_it_on_when_the_last_is_done():
    inside = threading.Barrier(2)
    first_out = threading.Event()
    seen = []

    def first():
        with collector_paused():
            inside.wait()
        first_out.set()

    def second():
        with collector_paused():
            inside.wait()
            first_out.wait()
            seen.append(gc.isenabled())  # the first thread left; this one still holds it

    threads = [threading.Thread(target=first), threading.Thread(target=second)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert seen == [False]
    assert gc.isenabled()


def test_fewer_passes_raises_the_youngest_threshold_and_restores_it():
    before = gc.get_threshold()
    with fewer_passes(12_345):
        assert gc.get_threshold() == (max(12_345, before[0]), *before[1:])
    assert gc.get_threshold() == before
    with fewer_passes(1):  # never lowered
        assert gc.get_threshold() == before
