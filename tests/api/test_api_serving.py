"""Served batches, outcomes and the report over HTTP: the same use cases as the command line."""

from __future__ import annotations

import io
from datetime import timedelta

from tests.after_release.served_files import now, shadow_day, write_outcomes
from tests.api.api_helpers import problem, set_up_model


def _upload(path, name="file") -> dict:
    return {name: (io.BytesIO(path.read_bytes()), path.name)}


def test_a_served_batch_and_its_outcomes_over_http(api, tmp_path):
    set_up_model(api, tmp_path)
    api.register("m", tmp_path, tag="v1")
    api.register("m", tmp_path, tag="v2")
    assert api.post("/models/m/versions/1/promote", {"stage": "live"}, role="approver").json[
        "moved"]
    assert api.post("/models/m/versions/2/promote", {"stage": "shadow"},
                    role="approver").json["moved"]
    path, served = shadow_day(tmp_path / "day.parquet", now() + timedelta(milliseconds=5), 50)
    first = api.post("/models/m/served", role="publisher", data=_upload(path),
                     content_type="multipart/form-data")
    assert first.status_code == 201, first.data
    assert first.json["rows"] == 100
    again = api.post("/models/m/served", role="publisher", data=_upload(path),
                     content_type="multipart/form-data")
    assert again.status_code == 200 and again.json["recorded"] is False
    outcomes = write_outcomes(tmp_path / "o.csv", served["ids"][:10] + ["elsewhere"],
                              [0, 1] * 5 + [1])
    joined = api.post("/models/m/outcomes", role="publisher", data=_upload(outcomes),
                      content_type="multipart/form-data")
    assert joined.status_code == 201, joined.data
    assert (joined.json["joined"], joined.json["unknown_rows"]) == (10, 1)
    report = api.get("/models/m/serving-report")
    assert report.status_code == 200
    assert report.json["versions"]["2"]["agreement"]["rows"] == 50


def test_a_bad_row_is_a_problem_naming_it_and_readers_cannot_record(api, tmp_path):
    set_up_model(api, tmp_path)
    api.register("m", tmp_path, tag="v1")
    path, _ = shadow_day(tmp_path / "day.parquet", now(), 5, versions=(1,))
    refused = problem(api.post("/models/m/served", role="publisher", data=_upload(path),
                               content_type="multipart/form-data"))
    assert refused["status"] == 400 and "v1 never served" in refused["detail"]
    forbidden = api.post("/models/m/served", role="reader", data=_upload(path),
                         content_type="multipart/form-data")
    assert forbidden.status_code == 403
    assert problem(api.get("/models/m/serving-report?window=5x"))["status"] == 400
