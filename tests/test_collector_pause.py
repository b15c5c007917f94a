"""The collector pause around recording a served batch (registry/collector_pause.py)."""

from __future__ import annotations

import gc
import threading
from unittest.mock import Mock

import pytest

from registry.collector_pause import collector_paused


@pytest.fixture(autouse=True)
def collector_as_it_was():
    enabled = gc.isenabled()
    yield
    (gc.enable if enabled else gc.disable)()


def test_the_collector_is_off_inside_and_on_again_after_even_when_the_work_fails():
    gc.enable()
    with pytest.raises(RuntimeError), collector_paused():
        assert not gc.isenabled()
        raise RuntimeError("the batch was refused")
    assert gc.isenabled()


def test_a_collector_someone_else_turned_off_stays_off():
    gc.disable()
    with collector_paused():
        assert not gc.isenabled()
    assert not gc.isenabled()


def test_overlapping_pauses_on_two_threads_turn_it_on_only_when_the_last_leaves():
    gc.enable()
    first_inside, second_done = threading.Event(), threading.Event()
    seen = []

    def second() -> None:
        first_inside.wait()
        with collector_paused():
            pass
        seen.append(gc.isenabled())  # the first pause is still open
        second_done.set()

    worker = threading.Thread(target=second)
    worker.start()
    with collector_paused():
        first_inside.set()
        second_done.wait()
        assert not gc.isenabled()
    worker.join()
    assert seen == [False]
    assert gc.isenabled()


def test_recording_runs_with_the_collector_paused(monkeypatch):
    from registry.service import serving

    states = []

    def read(*_arguments, **_options):
        states.append(("read", gc.isenabled()))
        return "checked"

    def keep(_catalogue, _model, _actor, checked):
        states.append(("keep", gc.isenabled()))
        return {"recorded": checked == "checked"}

    monkeypatch.setattr(serving, "_read", read)
    monkeypatch.setattr(serving, "_keep", keep)
    gc.enable()
    assert serving.record_served(Mock(), "m", "batch.parquet", Mock()) == {"recorded": True}
    assert states == [("read", False), ("keep", False)] and gc.isenabled()
    states.clear()
    answers = list(serving.record_served_batches(Mock(), "m", ["a.parquet", "b.parquet"], Mock()))
    assert answers == [{"recorded": True}] * 2
    assert states and all(not enabled for _, enabled in states) and gc.isenabled()
