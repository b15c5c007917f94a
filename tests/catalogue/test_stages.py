"""Stages: promote, approve, roll back, retire, history; refusals that name the place at fault."""

from __future__ import annotations

import json

import pytest
from sqlalchemy import text
from sqlalchemy.exc import IntegrityError

from tests.catalogue.stage_helpers import register, set_up_model, string_diameter_schema

SCHEMA_GATES = ["reads-live-feed", "rollback-safe", "output-readable"]
LADDER_GATES = {"shadow": SCHEMA_GATES, "canary": SCHEMA_GATES,
                "live": SCHEMA_GATES + ["approved"]}
APPROVER = "tomas.lindqvist"


def climb_to_live(cli, version: int) -> None:
    for stage in ("shadow", "canary"):
        cli.json("promote", "m", str(version), "--to", stage, user=APPROVER)
    cli.json("approve", "m", str(version), "--for", "live", user="priya.raman")
    cli.json("promote", "m", str(version), "--to", "live", user=APPROVER)


@pytest.fixture
def line(cli, tmp_path):
    set_up_model(cli, tmp_path, LADDER_GATES)
    return cli


def test_a_version_climbs_the_ladder_to_live(line, tmp_path):
    v1 = register(line, tmp_path, "v1")
    climb_to_live(line, v1)
    status = line.json("status", "m")
    assert status["stages"]["live"] == [1] and status["stages"]["candidate"] == []
    events = [(e["stage"], e["event"]) for e in line.json("history", "m")["events"]]
    assert ("live", "entered") in events and ("shadow", "moved-on") in events


def test_check_is_a_dry_run(line, tmp_path):
    v1 = register(line, tmp_path, "v1")
    result = line("check", "m", str(v1), "--to", "shadow", "--json", user=APPROVER)
    assert result.exit_code == 0 and json.loads(result.stdout)["would_move"] is True
    assert line.json("status", "m")["stages"]["shadow"] == []


def test_live_without_an_approval_is_refused_naming_the_gate(line, tmp_path):
    v1 = register(line, tmp_path, "v1")
    for stage in ("shadow", "canary"):
        line.json("promote", "m", str(v1), "--to", stage, user=APPROVER)
    outcome = line.json("promote", "m", str(v1), "--to", "live", user=APPROVER, expect=1)
    failed = [r for r in outcome["report"]["results"] if not r["passed"]]
    assert [r["gate"] for r in failed] == ["approved"]
    assert line.json("status", "m")["stages"]["live"] == []
    attempts = line.json("history", "m")["attempts"]
    assert attempts[-1]["passed"] is False  # the refused attempt is stored with its report


def test_a_new_live_version_displaces_the_old_and_rollback_restores_it(line, tmp_path):
    climb_to_live(line, register(line, tmp_path, "v1"))
    v2 = register(line, tmp_path, "v2")
    climb_to_live(line, v2)
    status = line.json("status", "m")
    assert status["stages"]["live"] == [2] and status["stages"]["candidate"] == [1]
    outcome = line.json("rollback", "m", "--stage", "live", user=APPROVER)
    assert outcome["moved"] is True and outcome["version"] == 1 and outcome["displaced"] == 2
    assert {r["gate"] for r in outcome["report"]["results"]} == set(SCHEMA_GATES)
    status = line.json("status", "m")
    assert status["stages"]["live"] == [1] and status["stages"]["candidate"] == [2]
    assert line.json("audit", "verify")["ok"] is True


def test_rollback_with_no_earlier_holder_is_a_clear_error(line, tmp_path):
    climb_to_live(line, register(line, tmp_path, "v1"))
    result = line("rollback", "m", "--stage", "live", user=APPROVER)
    assert result.exit_code == 2 and "no earlier holder" in result.stderr


def test_incompatible_input_schema_is_refused_with_its_schema_path(line, tmp_path):
    climb_to_live(line, register(line, tmp_path, "v1"))
    v2 = register(line, tmp_path, "v2", schema=string_diameter_schema())
    outcome = line.json("promote", "m", str(v2), "--to", "shadow", user=APPROVER, expect=1)
    feed = next(r for r in outcome["report"]["results"] if r["gate"] == "reads-live-feed")
    assert feed["passed"] is False and "/fields/diameter_mm/type" in feed["summary"]


def test_retire_takes_a_version_out_of_every_stage(line, tmp_path):
    climb_to_live(line, register(line, tmp_path, "v1"))
    outcome = line.json("retire", "m", "1", "--reason", "replaced", user=APPROVER)
    assert outcome["left_stages"] == ["live"]
    status = line.json("status", "m")
    assert status["stages"]["live"] == [] and status["stages"]["retired"] == [1]


def test_the_database_itself_refuses_two_holders_of_an_exclusive_stage(line, tmp_path, catalogue):
    climb_to_live(line, register(line, tmp_path, "v1"))
    register(line, tmp_path, "v2")
    with pytest.raises(IntegrityError):
        with catalogue.engine.begin() as connection:
            connection.execute(text(
                "INSERT INTO stage_holdings (model_id, version_id, stage, is_exclusive, since) "
                "SELECT model_id, id, 'live', true, CURRENT_TIMESTAMP FROM versions "
                "WHERE number = 2"))


def _error(result, code=2):
    assert result.exit_code == code, result.output
    assert len(result.stderr.strip().splitlines()) == 1, result.stderr
    return result.stderr


def test_unknown_stage_is_refused(line, tmp_path):
    register(line, tmp_path, "v1")
    assert "unknown stage" in _error(line("promote", "m", "1", "--to", "production", user=APPROVER))


def test_skipping_a_stage_the_policy_forbids_is_refused(line, tmp_path):
    register(line, tmp_path, "v1")
    assert "skip" in _error(line("promote", "m", "1", "--to", "live", user=APPROVER))
    assert line.json("status", "m")["stages"]["live"] == []


def test_a_policy_with_an_unknown_gate_is_refused(line, tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("[stages.live.gates]\nno-regresion = true\n")
    assert "no-regresion" in _error(line("model", "policy", "set", "m", str(bad),
                                         user="mara.kowalczyk"))


def test_a_policy_with_bad_settings_is_refused(line, tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("[stages.live.gates.approved]\ncount = 0\n")
    assert "stages.live.gates.approved.count" in _error(
        line("model", "policy", "set", "m", str(bad), user="mara.kowalczyk"))


def test_a_waiver_without_the_approver_role_is_refused(line, tmp_path):
    register(line, tmp_path, "v1")
    result = line("promote", "m", "1", "--to", "shadow", "--waive", "reads-live-feed",
                  "--reason", "trust me", user="ines.okafor")
    assert _error(result)
    assert line.json("status", "m")["stages"]["shadow"] == []


def test_a_waiver_without_a_reason_is_refused(line, tmp_path):
    register(line, tmp_path, "v1")
    assert "reason" in _error(line("promote", "m", "1", "--to", "shadow", "--waive",
                                   "reads-live-feed", user=APPROVER))


def test_approving_ones_own_version_is_refused(line, tmp_path):
    register(line, tmp_path, "v1")  # the manifest's author is ines.okafor
    line.json("user", "grant", "ines.okafor", "approver", user="mara.kowalczyk")
    assert "four eyes" in _error(line("approve", "m", "1", "--for", "live", user="ines.okafor"))


def test_a_waiver_is_recorded_in_the_report_and_the_audit_log(line, tmp_path, catalogue):
    climb_to_live(line, register(line, tmp_path, "v1"))
    v2 = register(line, tmp_path, "v2", schema=string_diameter_schema())
    outcome = line.json("promote", "m", str(v2), "--to", "shadow", "--waive", "reads-live-feed",
                        "--waive", "rollback-safe", "--reason", "feed is being migrated too",
                        user=APPROVER)
    assert outcome["moved"] is True
    waived = {r["gate"] for r in outcome["report"]["results"] if r["waived"]}
    assert waived == {"reads-live-feed", "rollback-safe"}
    with catalogue.engine.connect() as connection:
        details = connection.execute(text(
            "SELECT details_json FROM audit_events WHERE action = 'stage.promote' "
            "ORDER BY sequence DESC")).scalars().first()
    assert "feed is being migrated too" in details


def test_once_an_admin_exists_writes_need_their_roles(line, tmp_path):
    from tests.catalogue.helpers import write_version_files

    document, manifest = write_version_files(tmp_path / "x")
    assert "publisher" in _error(line("register", "m", str(document), "--manifest",
                                      str(manifest), user="priya.raman"))
    assert "admin" in _error(line("model", "create", "other", user="ines.okafor"))
    assert line.json("model", "show", "m")["versions"] == []
