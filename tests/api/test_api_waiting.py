"""`?wait=` on the stage lookup and the status: held until a change, from any process, bounded,
and never holding a database connection while waiting."""

from __future__ import annotations

import subprocess
import sys
import threading
import time

import pytest

from tests.api.api_helpers import make_api, problem, set_up_model

LIVE = "/models/m/stages/live"


def _two_versions_one_live(api, tmp_path) -> str:
    set_up_model(api, tmp_path)
    api.register("m", tmp_path, tag="v1")
    api.register("m", tmp_path, tag="v2")
    assert api.post("/models/m/versions/1/promote", {"stage": "live"},
                    role="approver").json["moved"]
    return api.get(LIVE).headers["ETag"]


class Waiter(threading.Thread):
    """One waiting request on a client of its own; records when it was answered."""

    def __init__(self, api, path: str, etag: str, seconds: float) -> None:
        super().__init__(daemon=True)
        self.client = api.client.application.test_client()
        self.headers = {**api.headers("reader"), "If-None-Match": etag}
        self.path, self.seconds = path, seconds
        self.response = None
        self.answered_at = None

    def run(self) -> None:
        self.response = self.client.get(f"/api/v1{self.path}?wait={self.seconds}",
                                        headers=self.headers)
        self.answered_at = time.monotonic()


@pytest.mark.parametrize("value", ["-1", "61", "60.5", "soon", "nan", "inf", ""])
def test_wait_out_of_range_is_400(api, tmp_path, value):
    etag = _two_versions_one_live(api, tmp_path)
    response = api.get(f"{LIVE}?wait={value}", headers={"If-None-Match": etag})
    assert response.status_code == 400
    assert problem(response)["place"] == "wait"
    assert api.get(f"/models/m/status?wait={value}").status_code == 400


def test_without_if_none_match_the_answer_comes_at_once(api, tmp_path):
    _two_versions_one_live(api, tmp_path)
    started = time.monotonic()
    response = api.get(f"{LIVE}?wait=30")
    assert response.status_code == 200 and response.json["version"] == 1
    assert time.monotonic() - started < 5


def test_nothing_changes_so_the_wait_ends_in_304(api, tmp_path):
    etag = _two_versions_one_live(api, tmp_path)
    started = time.monotonic()
    response = api.get(f"{LIVE}?wait=0.6", headers={"If-None-Match": etag})
    assert response.status_code == 304 and response.headers["ETag"] == etag
    assert time.monotonic() - started >= 0.6


def test_a_promotion_by_another_process_answers_waiting_requests_within_a_second(api, tmp_path):
    etag = _two_versions_one_live(api, tmp_path)
    status_etag = api.get("/models/m/status").headers["ETag"]
    waiters = [Waiter(api, LIVE, etag, 30) for _ in range(5)]
    waiters.append(Waiter(api, "/models/m/status", status_etag, 30))
    for waiter in waiters:
        waiter.start()
    time.sleep(0.5)
    assert all(w.response is None for w in waiters), "answered before anything changed"
    promoted = subprocess.run(
        [sys.executable, "-m", "registry", "--db", api.url, "--as", "tomas.lindqvist",
         "promote", "m", "2", "--to", "live"], capture_output=True, text=True, timeout=120)
    assert promoted.returncode == 0, promoted.stderr
    committed = time.monotonic()
    for waiter in waiters:
        waiter.join(10)
        assert waiter.response is not None
        assert waiter.response.status_code == 200
        assert waiter.answered_at - committed < 1.0
    assert waiters[0].response.json["version"] == 2
    assert waiters[-1].response.json["stages"]["live"] == [2]


def test_a_change_elsewhere_keeps_the_request_waiting(api, tmp_path):
    etag = _two_versions_one_live(api, tmp_path)
    waiter = Waiter(api, LIVE, etag, 1.5)
    waiter.start()
    time.sleep(0.3)
    # Something changes in the catalogue, but not who holds live.
    assert api.post("/models", {"name": "other"}).status_code == 201
    waiter.join(10)
    assert waiter.response.status_code == 304


def test_beyond_the_cap_of_waiting_requests_the_answer_is_503_with_retry_after(cli, tmp_path):
    api = make_api(cli, config={"LOCKKEEPER_MAX_WAITING": 2})
    etag = _two_versions_one_live(api, tmp_path)
    waiters = [Waiter(api, LIVE, etag, 3) for _ in range(2)]
    for waiter in waiters:
        waiter.start()
    time.sleep(0.5)
    refused = api.get(f"{LIVE}?wait=3", headers={"If-None-Match": etag})
    assert refused.status_code == 503
    assert refused.headers["Retry-After"] == "1"
    assert problem(refused)["type"].endswith("/too-many-waiting")
    # A request that does not wait is still answered at once.
    assert api.get(LIVE).status_code == 200
    for waiter in waiters:
        waiter.join(10)
        assert waiter.response.status_code == 304


def test_waiting_requests_hold_no_database_connection(api, tmp_path):
    from registry.api.context import READS_EXTENSION

    etag = _two_versions_one_live(api, tmp_path)
    app = api.client.application
    waiters = [Waiter(api, LIVE, etag, 2) for _ in range(8)]
    for waiter in waiters:
        waiter.start()
    time.sleep(0.8)
    reads = app.extensions[READS_EXTENSION]
    catalogue_pool = reads.catalogue.engine.pool
    in_use = []
    for _ in range(20):
        in_use.append(reads.connections_in_use()
                      + getattr(catalogue_pool, "checkedout", lambda: 0)())
        time.sleep(0.02)
    # Eight requests wait; at most the watching thread's one short read of the audit head
    # is under way at any moment.
    assert max(in_use) <= 1, in_use
    for waiter in waiters:
        waiter.join(10)
        assert waiter.response.status_code == 304
