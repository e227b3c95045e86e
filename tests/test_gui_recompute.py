"""The recompute worker: off the GUI thread, debounced, newest request wins."""

from __future__ import annotations

import threading

import pytest
from PySide6.QtCore import QTimer

from engine import Estimate, LineItem, Settings
from gui.recompute import Recomputer

TIMEOUT_MS = 30_000


def estimate(high: float) -> Estimate:
    return Estimate(
        items=[
            LineItem("Formwork", "uniform", 0.0, None, 100.0),
            LineItem("Rebar", "uniform", 0.0, None, high),
        ]
    )


@pytest.fixture
def recomputer(qtbot):
    worker = Recomputer(delay_ms=50)
    yield worker
    worker.cancel()
    worker.wait()


def test_a_long_simulation_leaves_the_gui_thread_free(recomputer, qtbot):
    items = [LineItem(f"Package {k}", "pert", 1.0, 2.0, 5.0 + k % 3) for k in range(40)]
    settings = Settings(levels=(50.0,), method="simulation", trials=1_000_000, seed=5)
    ticks = []
    timer = QTimer(interval=5)
    timer.timeout.connect(lambda: ticks.append(threading.get_ident()))
    timer.start()
    recomputer.request(Estimate(items=items), settings)
    with qtbot.waitSignal(recomputer.finished, timeout=TIMEOUT_MS) as done:
        recomputer.run_now()
    timer.stop()
    outcome = done.args[0]
    # The GUI thread kept running its timer while the worker computed.
    assert len(ticks) >= 3
    assert set(ticks) == {threading.get_ident()}
    assert outcome.analysis.trials == 1_000_000


def test_a_superseded_result_is_discarded(recomputer, qtbot):
    exact = Settings(levels=(50.0,), method="exact")
    received = []
    recomputer.finished.connect(received.append)
    recomputer.request(estimate(100.0), exact)
    first = recomputer.run_now()
    recomputer.request(estimate(300.0), exact)
    second = recomputer.run_now()
    qtbot.waitUntil(lambda: not recomputer.busy, timeout=TIMEOUT_MS)
    recomputer.wait()
    qtbot.wait(50)
    assert [o.request_id for o in received] == [second] and first < second
    # U(0,100) + U(0,300) is symmetric about 200, so P50 = 200 (convolution of two uniform
    # densities, Johnson, Kotz & Balakrishnan vol. 2, ch. 26).
    assert received[0].analysis.levels[0].value == pytest.approx(200.0, rel=1e-3)
    # A late result carrying the older id (as from a job that finished anyway) is dropped.
    dropped = recomputer.dropped
    recomputer._signals.finished.emit(first, received[0])
    qtbot.wait(20)
    assert len(received) == 1
    assert recomputer.dropped == dropped + 1


def test_a_burst_of_requests_starts_one_job(recomputer, qtbot):
    exact = Settings(levels=(50.0,), method="exact")
    started = []
    recomputer.started.connect(started.append)
    for high in (110.0, 120.0, 130.0, 140.0):
        recomputer.request(estimate(high), exact)
    with qtbot.waitSignal(recomputer.finished, timeout=TIMEOUT_MS) as done:
        pass
    assert started == [1]
    # U(0,100) + U(0,140): symmetric about 120, P50 = 120 (same source).
    assert done.args[0].analysis.levels[0].value == pytest.approx(120.0, rel=1e-3)


def test_input_problems_are_reported_not_raised(recomputer, qtbot):
    bad = Estimate(items=[LineItem("Backfill", "uniform", 50.0, None, 10.0)])
    recomputer.request(bad, Settings(method="exact"))
    with qtbot.waitSignal(recomputer.failed, timeout=TIMEOUT_MS) as failed:
        recomputer.run_now()
    assert "High" in failed.args[0] and "Fix:" in failed.args[0]


def test_a_prepared_request_analyses_what_prepare_returns_and_can_be_cancelled(recomputer, qtbot):
    """`prepare` runs in the worker: its estimate is the one analysed, its finding reaches
    the GUI thread first, and the cancel flag reaches it (as the rows' checks use it)."""
    from engine import Cancelled

    exact = Settings(levels=(50.0,), method="exact")
    threads, found = [], []
    recomputer.prepared.connect(found.append)

    def prepare(cancel, progress):
        threads.append(threading.get_ident())
        progress(1.0)
        return estimate(300.0), "checked"

    recomputer.request(estimate(100.0), exact, prepare)
    with qtbot.waitSignal(recomputer.finished, timeout=TIMEOUT_MS) as done:
        recomputer.run_now()
    assert found == ["checked"] and threads and threading.get_ident() not in threads
    assert [i.high for i in done.args[0].estimate.items] == [100.0, 300.0]

    started = threading.Event()

    def slow(cancel, progress):
        started.set()
        while not cancel():
            threading.Event().wait(0.01)
        raise Cancelled()

    recomputer.request(estimate(100.0), exact, slow)
    with qtbot.waitSignal(recomputer.cancelled, timeout=TIMEOUT_MS):
        recomputer.run_now()
        assert started.wait(10)
        recomputer.cancel()
