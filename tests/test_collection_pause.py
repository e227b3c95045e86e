"""The collector is paused during an analysis and left as it was found afterwards."""

from __future__ import annotations

import gc
import threading

import pytest

from engine.collection_pause import collector_paused


@pytest.fixture
def collector_enabled():
    was = gc.isenabled()
    gc.enable()
    yield
    if not was:
        gc.disable()


def test_paused_inside_and_enabled_after_even_on_error(collector_enabled) -> None:
    with pytest.raises(ValueError), collector_paused():
        assert not gc.isenabled()
        raise ValueError("cancelled")
    assert gc.isenabled()


def test_a_collector_disabled_before_stays_disabled(collector_enabled) -> None:
    gc.disable()
    with collector_paused():
        pass
    assert not gc.isenabled()


def test_overlapping_analyses_enable_it_when_the_last_ends(collector_enabled) -> None:
    inside, release = threading.Event(), threading.Event()

    def other_analysis() -> None:
        with collector_paused():
            inside.set()
            release.wait(5)

    worker = threading.Thread(target=other_analysis)
    with collector_paused():
        worker.start()
        inside.wait(5)
    assert not gc.isenabled()  # the other analysis still runs
    release.set()
    worker.join(5)
    assert gc.isenabled()
