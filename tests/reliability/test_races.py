"""Sixteen processes register, promote, approve, roll back and retire on one model at once:
version numbers stay dense, no exclusive stage ever has two holders, every failure is clean."""

from __future__ import annotations

import json
import subprocess
import sys
import time
from collections import Counter
from pathlib import Path

import pytest
from sqlalchemy import text

from tests.catalogue.stage_helpers import register, set_up_model
from tests.reliability.harness import ROOT, assert_catalogue_sound, process_env

RACERS = 16
EXCLUSIVE = ("live", "canary")


def _race(url: str, folder: Path, seconds: float) -> list[dict]:
    folder.mkdir()
    racers = [subprocess.Popen(
        [sys.executable, "-m", "tests.reliability.race_worker", url, str(seed), str(seconds),
         str(folder)], env=process_env(), cwd=ROOT, stderr=subprocess.PIPE, text=True)
        for seed in range(RACERS)]
    while len(list(folder.glob("ready-*"))) < RACERS:  # start together, after every import
        assert all(r.poll() is None for r in racers), [r.stderr.read() for r in racers]
        time.sleep(0.05)
    (folder / "go").touch()
    for racer in racers:
        _, err = racer.communicate(timeout=seconds + 600)
        assert racer.returncode == 0, err
    return [json.loads(line) for path in folder.glob("outcomes-*.jsonl")
            for line in path.read_text().splitlines()]


def _replay_audit(connection) -> dict[str, int | None]:
    """Replay the audit log's stage moves; each must displace exactly the replayed holder."""
    holder: dict[str, int | None] = {stage: None for stage in EXCLUSIVE}
    rows = connection.execute(text(
        "SELECT sequence, action, subject, details_json FROM audit_events WHERE action IN "
        "('stage.promote', 'stage.rollback', 'version.retire') ORDER BY sequence")).all()
    for sequence, action, subject, details_json in rows:
        details = json.loads(details_json)

        def place(version: int, stage: str) -> None:
            for other in EXCLUSIVE:  # moving up the ladder leaves the stage held below
                if holder[other] == version:
                    holder[other] = None
            if stage in EXCLUSIVE:
                holder[stage] = version

        if action == "stage.promote":
            version = int(subject.rsplit("/", 1)[1])
            stage = details["stage"]
            if stage in EXCLUSIVE and holder[stage] != version:
                assert details["displaced_version"] == holder[stage], (sequence, holder)
            place(version, stage)
        elif action == "stage.rollback":
            stage = details["stage"]
            assert holder[stage] == details["from_version"], (sequence, holder)
            holder[stage] = None
            place(details["to_version"], stage)
        else:
            version = int(subject.rsplit("/", 1)[1])
            for stage in EXCLUSIVE:
                if holder[stage] == version:
                    holder[stage] = None
    return holder


def _replay_stage_events(connection) -> dict[str, int | None]:
    """Replay the stage_events timeline: a version enters an exclusive stage only when empty."""
    holder: dict[str, int | None] = {stage: None for stage in EXCLUSIVE}
    rows = connection.execute(text(
        "SELECT e.id, e.stage, e.event, v.number FROM stage_events e "
        "JOIN versions v ON v.id = e.version_id ORDER BY e.id")).all()
    for event_id, stage, event, number in rows:
        if stage not in EXCLUSIVE:
            continue
        if event in ("entered", "restored"):
            assert holder[stage] is None, f"event {event_id}: v{number} entered {stage} " \
                                          f"while v{holder[stage]} held it"
            holder[stage] = number
        else:  # replaced, moved-on, rolled-back, retired
            assert holder[stage] == number, (event_id, event, stage, number, holder)
            holder[stage] = None
    return holder


def check_race(url: str, tmp_path: Path, seconds: float, catalogue) -> dict:
    outcomes = _race(url, tmp_path / "race", seconds)
    crashed = [o for o in outcomes if o["crashed"]]
    assert not crashed, crashed[:3]
    codes = Counter(o["exit"] for o in outcomes)
    assert set(codes) <= {0, 1, 2, 3}, codes
    # A failure is clean when it is one `lockkeeper:` line on stderr, or a refusal whose
    # --json report (the gate report) is the one document on stdout.
    unclean = [o for o in outcomes if o["exit"] != 0 and not (
        (o["stderr"].startswith("lockkeeper: ") and len(o["stderr"].strip().splitlines()) == 1)
        or (o["exit"] == 1 and o["stdout_is_json"] and not o["stderr"].strip()))]
    assert not unclean, unclean[:3]
    with catalogue.engine.connect() as connection:
        numbers = list(connection.execute(text(
            "SELECT number FROM versions ORDER BY number")).scalars())
        assert numbers == list(range(1, len(numbers) + 1)), "version numbers not dense"
        from_audit = _replay_audit(connection)
        from_events = _replay_stage_events(connection)
        held = dict(connection.execute(text(
            "SELECT h.stage, v.number FROM stage_holdings h JOIN versions v ON "
            "v.id = h.version_id WHERE h.is_exclusive")).all())
    now = {stage: held.get(stage) for stage in EXCLUSIVE}
    assert from_audit == from_events == now
    assert_catalogue_sound(url)
    actions = Counter((o["arguments"][0], o["exit"]) for o in outcomes)
    return {"operations": len(outcomes), "versions": len(numbers),
            "outcomes": {f"{a} exit {c}": n for (a, c), n in sorted(actions.items())}}


def _set_up(cli, tmp_path: Path) -> None:
    set_up_model(cli, tmp_path, {"live": ["approved"]}, skippable=("shadow", "canary"))
    for tag in ("a", "b", "c"):
        register(cli, tmp_path, tag)


@pytest.mark.reliability
@pytest.mark.timeout(600)
def test_sixteen_racing_processes_keep_numbers_dense_and_stages_single(cli, tmp_path,
                                                                      catalogue):
    _set_up(cli, tmp_path)
    print(json.dumps(check_race(cli.url, tmp_path, 8, catalogue)))


@pytest.mark.soak
@pytest.mark.timeout(1800)
def test_sixteen_processes_racing_for_thirty_seconds(cli, tmp_path, catalogue):
    _set_up(cli, tmp_path)
    print("SOAK race", json.dumps(check_race(cli.url, tmp_path, 30, catalogue)))
