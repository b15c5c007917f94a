"""Moving versions over HTTP, and the hot path a scoring service polls."""

from __future__ import annotations

from tests.api.api_helpers import problem, set_up_model


def test_register_promote_and_poll_the_stage_holder(api, tmp_path):
    set_up_model(api, tmp_path)
    registered = api.register("m", tmp_path)
    assert registered.status_code == 201, registered.data
    assert registered.json["version"] == 1 and registered.json["created"] is True
    promoted = api.post("/models/m/versions/1/promote", {"stage": "live"}, role="approver")
    assert promoted.status_code == 200, promoted.data
    assert promoted.json["moved"] is True

    holder = api.get("/models/m/stages/live")
    assert holder.status_code == 200, holder.data
    assert holder.json["version"] == 1
    assert holder.json["document_digest"] == registered.json["document_digest"]
    assert len(holder.json["input_schema_fingerprint"]) == 64
    assert holder.headers["ETag"].startswith('"')


def test_stage_lookup_answers_304_while_the_holder_is_unchanged(api, tmp_path):
    set_up_model(api, tmp_path)
    api.register("m", tmp_path, tag="v1")
    api.register("m", tmp_path, tag="v2")
    api.post("/models/m/versions/1/promote", {"stage": "live"}, role="approver")
    first = api.get("/models/m/stages/live")
    etag = first.headers["ETag"]
    again = api.get("/models/m/stages/live", headers={"If-None-Match": etag})
    assert again.status_code == 304 and again.data == b""
    assert again.headers["ETag"] == etag
    # RFC 9110 section 13.1.2: If-None-Match uses weak comparison, so W/ matches too.
    assert api.get("/models/m/stages/live",
                   headers={"If-None-Match": "W/" + etag}).status_code == 304

    assert api.post("/models/m/versions/2/promote", {"stage": "live"},
                    role="approver").json["moved"]
    changed = api.get("/models/m/stages/live", headers={"If-None-Match": etag})
    assert changed.status_code == 200 and changed.json["version"] == 2
    assert changed.headers["ETag"] != etag


def test_stage_nobody_holds_is_a_not_found_problem_of_its_own(api, tmp_path):
    set_up_model(api, tmp_path)
    response = api.get("/models/m/stages/live")
    document = problem(response)
    assert response.status_code == 404
    assert document["type"].endswith("/stage-not-held")
    assert document["title"] == "No version holds this stage"
    unknown = api.get("/models/no-such-model/stages/live")
    assert unknown.status_code == 404 and problem(unknown)["type"].endswith("/not-found")


def test_rollback_and_retire_and_history(api, tmp_path):
    set_up_model(api, tmp_path)
    api.register("m", tmp_path, tag="v1")
    api.register("m", tmp_path, tag="v2")
    api.post("/models/m/versions/1/promote", {"stage": "live"}, role="approver")
    api.post("/models/m/versions/2/promote", {"stage": "live"}, role="approver")
    rolled = api.post("/models/m/stages/live/rollback", role="approver")
    assert rolled.status_code == 200, rolled.data
    assert rolled.json["moved"] and rolled.json["version"] == 1
    assert api.get("/models/m/status").json["stages"]["live"] == [1]
    retired = api.post("/models/m/versions/2/retire", {"reason": "superseded"}, role="approver")
    assert retired.status_code == 200 and retired.json["retired"] is True
    events = api.get("/models/m/history").json["events"]
    assert [e["event"] for e in events if e["version"] == 2][-1] == "entered"
    report_id = rolled.json["report_id"]
    assert api.get(f"/reports/{report_id}").json["passed"] is True


def test_check_is_a_dry_run(api, tmp_path):
    set_up_model(api, tmp_path)
    api.register("m", tmp_path)
    checked = api.post("/models/m/versions/1/check", {"stage": "live"}, role="reader")
    assert checked.status_code == 200, checked.data
    assert checked.json["would_move"] is True
    assert api.get("/models/m/status").json["stages"]["live"] == []


def test_promotion_that_lost_a_race_is_a_409_conflict(api, tmp_path):
    set_up_model(api, tmp_path)
    api.register("m", tmp_path, tag="v1")
    api.register("m", tmp_path, tag="v2")
    api.post("/models/m/versions/1/promote", {"stage": "live"}, role="approver")
    stale = api.post("/models/m/versions/2/promote", {"stage": "live", "expect_holder": None},
                     role="approver")
    assert stale.status_code == 409
    assert problem(stale)["type"].endswith("/conflict")
    assert api.get("/models/m/status").json["stages"]["live"] == [1]


def test_a_change_made_elsewhere_is_seen_by_the_next_lookup(api, cli, tmp_path):
    set_up_model(api, tmp_path)
    api.register("m", tmp_path, tag="v1")
    api.register("m", tmp_path, tag="v2")
    api.post("/models/m/versions/1/promote", {"stage": "live"}, role="approver")
    assert api.get("/models/m/stages/live").json["version"] == 1  # now cached by the server
    # Another writer (the CLI, another server process) moves the stage.
    cli.json("promote", "m", "2", "--to", "live", user="tomas.lindqvist")
    assert api.get("/models/m/stages/live").json["version"] == 2
    cli.json("token", "revoke", "1", user="mara.kowalczyk")
    assert api.get("/models/m/stages/live", role="reader").status_code == 401
