"""Recording served batches and outcomes in the catalogue: what is kept, what is refused, and
that sending a batch again changes nothing (SQLite, and PostgreSQL when configured)."""

from __future__ import annotations

from datetime import timedelta

import numpy as np
import pyarrow as pa
import pytest

from tests.after_release.served_files import (now, served_table, shadow_day, write_outcomes,
                                              write_served)
from tests.catalogue.stage_helpers import register, set_up_model


@pytest.fixture
def live_and_shadow(cli, tmp_path):
    """v1 live, v2 in shadow, v3 registered only; the time after the moves."""
    set_up_model(cli, tmp_path, {"canary": ["shadow-agreement"]})
    for tag in ("v1", "v2", "v3"):
        register(cli, tmp_path, tag)
    approver = "tomas.lindqvist"
    for stage in ("shadow", "canary", "live"):
        cli.json("promote", "m", "1", "--to", stage, user=approver)
    cli.json("promote", "m", "2", "--to", "shadow", user=approver)
    return now() + timedelta(milliseconds=5)


class Error:
    """The one line a refused command prints on stderr: `lockkeeper: PLACE: MESSAGE`."""

    def __init__(self, line: str) -> None:
        self.line = line

    def __getitem__(self, part: str) -> str:
        return self.line  # `place` and `message` are both read from the line


def error_of(cli, *arguments: str, expect: int = 2, user: str = "ines.okafor") -> Error:
    result = cli(*arguments, user=user)
    assert result.exit_code == expect, result.output
    assert result.stdout == ""
    return Error(result.stderr.strip())


def test_a_batch_is_kept_per_version_and_window_and_sending_it_again_changes_nothing(
        cli, tmp_path, live_and_shadow):
    path, _ = shadow_day(tmp_path / "day.parquet", live_and_shadow, 300)
    first = cli.json("serving", "record", "m", str(path))
    assert first["recorded"] and first["rows"] == 600 and first["task"] == "binary"
    assert {(w["version"], w["rows"]) for w in first["windows"]} == {(1, 300), (2, 300)}
    again = cli.json("serving", "record", "m", str(path))
    assert not again["recorded"] and again["digest"] == first["digest"]
    report = cli.json("serving", "report", "m")
    assert report["versions"]["1"]["rows"] == 300 and report["versions"]["2"]["rows"] == 300
    assert cli("audit", "verify").exit_code == 0


@pytest.mark.parametrize("order", ["in time order", "shuffled"])
def test_a_batch_across_windows_is_kept_in_each_window_it_touches(cli, tmp_path, live_and_shadow,
                                                                  order):
    """A window is a UTC day by default: rows either side of midnight go to two windows, also
    when the rows are not sent in time order; a batch in one window is the common case."""
    midnight = (live_and_shadow + timedelta(days=2)).replace(hour=0, minute=0, second=0,
                                                             microsecond=0)
    times = [midnight - timedelta(hours=2) + timedelta(minutes=10 * i) for i in range(30)]
    if order == "shuffled":
        times = [times[i] for i in np.random.default_rng(4).permutation(30)]
    before = sum(t < midnight for t in times)
    path = write_served(tmp_path / "b.parquet", served_table(
        [f"r{i}" for i in range(30)], times, [1] * 30, np.linspace(0, 1, 30)))
    recorded = cli.json("serving", "record", "m", str(path))
    assert [(w["window"][:10], w["rows"]) for w in recorded["windows"]] == [
        ((midnight - timedelta(days=1)).strftime("%Y-%m-%d"), before),
        (midnight.strftime("%Y-%m-%d"), 30 - before)]
    assert before == 12


def test_several_files_are_recorded_in_turn_each_its_own_batch(cli, tmp_path, live_and_shadow):
    days = [shadow_day(tmp_path / f"day{n}.parquet", live_and_shadow + timedelta(days=n), 50 + n,
                       seed=n)[0] for n in range(3)]
    alone = cli.json("serving", "record", "m", str(days[1]))
    together = cli.json("serving", "record", "m", *map(str, days))
    assert [b["file"] for b in together["batches"]] == list(map(str, days))
    assert [b["recorded"] for b in together["batches"]] == [True, False, True]
    assert together["batches"][1]["digest"] == alone["digest"]
    assert (together["recorded"], together["rows"]) == (2, 2 * 50 + 2 * 52)
    report = cli.json("serving", "report", "m")
    assert report["versions"]["1"]["rows"] == 50 + 51 + 52
    text = cli("serving", "record", "m", *map(str, days), user="ines.okafor")
    assert text.exit_code == 0 and text.stdout.count("already recorded") == 3
    assert cli("audit", "verify").exit_code == 0


def test_a_refused_file_among_several_ends_the_run_and_those_before_it_stay(
        cli, tmp_path, live_and_shadow):
    good, _ = shadow_day(tmp_path / "good.parquet", live_and_shadow, 40)
    bad = _batch(tmp_path, "bad.parquet", live_and_shadow, scores=[0.1, 0.2, 1.3, 0.4])
    after, _ = shadow_day(tmp_path / "after.parquet", live_and_shadow + timedelta(days=1), 30)
    error = error_of(cli, "serving", "record", "m", str(good), str(bad), str(after))
    assert f"{bad}, row 3, column score: " in error["place"]
    assert "the 1 file before it is recorded" in error["message"]
    report = cli.json("serving", "report", "m")
    assert report["versions"]["1"]["rows"] == 40  # the first file only
    first = error_of(cli, "serving", "record", "m", str(bad), str(good))
    assert f"{bad}, row 3, column score: " in first["place"] and "before it" not in first["place"]
    assert cli.json("serving", "report", "m")["versions"]["1"]["rows"] == 40
    assert cli("audit", "verify").exit_code == 0


def test_outcomes_join_whenever_they_arrive_and_unknown_rows_are_counted(
        cli, tmp_path, live_and_shadow):
    path, served = shadow_day(tmp_path / "day.parquet", live_and_shadow, 400)
    cli.json("serving", "record", "m", str(path))
    rng = np.random.default_rng(3)
    labels = (rng.random(400) < served["base"]).astype(int)
    ids = served["ids"] + ["never-served-1", "never-served-2"]
    outcomes = write_outcomes(tmp_path / "outcomes.csv", ids, list(labels) + [0, 1],
                              observed_at=live_and_shadow + timedelta(days=7))
    recorded = cli.json("serving", "outcomes", "m", str(outcomes))
    assert (recorded["rows"], recorded["joined"], recorded["unknown_rows"]) == (402, 400, 2)
    report = cli.json("serving", "report", "m")
    assert report["outcomes"]["unknown_rows"] == 2
    (window,) = report["windows"]
    quality = {e["version"]: e["quality"] for e in window["versions"]}
    # scikit-learn's roc_auc_score is the reference for the live AUC
    from sklearn.metrics import roc_auc_score
    assert quality[1]["value"] == pytest.approx(roc_auc_score(labels, served["scores"][1]))
    assert quality[1]["method"] == "delong"
    assert quality[1]["ci_low"] < quality[1]["value"] < quality[1]["ci_high"]
    agreement = next(e["agreement"] for e in window["versions"] if e["version"] == 2)
    expected = np.mean((served["scores"][1] >= 0.5) == (served["scores"][2] >= 0.5))
    assert agreement["against"] == 1 and agreement["rows"] == 400
    assert agreement["share_agreeing"] == pytest.approx(expected)


def test_the_shadow_agreement_gate_reads_the_served_rows(cli, tmp_path, live_and_shadow):
    refused = cli.json("check", "m", "2", "--to", "canary", user="tomas.lindqvist", expect=1)
    assert "scored no live row" in str(refused)
    path, _ = shadow_day(tmp_path / "day.parquet", live_and_shadow, 1200, noise=0.02)
    cli.json("serving", "record", "m", str(path))
    report = cli.json("check", "m", "2", "--to", "canary", user="tomas.lindqvist")
    result = next(r for r in report["results"] if r["gate"] == "shadow-agreement")
    assert result["passed"] and result["evidence"]["agreement"]["rows"] == 1200


# --- every bad input of the issue: refused whole, row and column named, nothing stored ------------

def _nothing_stored(cli) -> None:
    report = cli.json("serving", "report", "m")
    assert report["windows"] == [] and report["versions"] == {}


def _batch(tmp_path, name, start, **changes):
    rows = 4
    columns = dict(row_ids=[f"r{i}" for i in range(rows)],
                   served_at=[start + timedelta(seconds=i) for i in range(rows)],
                   versions=[1] * rows, scores=[0.1, 0.4, 0.6, 0.9])
    columns.update(changes)
    return write_served(tmp_path / name, served_table(**columns))


def test_a_version_that_never_served_is_refused(cli, tmp_path, live_and_shadow):
    path = _batch(tmp_path, "b.parquet", live_and_shadow, versions=[1, 1, 3, 1])
    error = error_of(cli, "serving", "record", "m", str(path))
    assert "row 3, column version: " in error["place"] and "v3 never served" in error["message"]
    _nothing_stored(cli)


def test_an_unknown_version_is_refused(cli, tmp_path, live_and_shadow):
    path = _batch(tmp_path, "b.parquet", live_and_shadow, versions=[1, 9, 1, 1])
    error = error_of(cli, "serving", "record", "m", str(path))
    assert "row 2, column version: " in error["place"] and "no version 9" in error["message"]


def test_rows_served_before_the_version_held_any_stage_are_refused(cli, tmp_path,
                                                                   live_and_shadow):
    early = live_and_shadow - timedelta(days=1)
    times = [live_and_shadow, early, live_and_shadow, live_and_shadow]
    path = _batch(tmp_path, "b.parquet", live_and_shadow, served_at=times)
    error = error_of(cli, "serving", "record", "m", str(path))
    assert "row 2, column served_at: " in error["place"]
    assert "before v1 held any stage that serves" in error["message"]
    _nothing_stored(cli)


def test_a_binary_prediction_outside_zero_to_one_is_refused(cli, tmp_path, live_and_shadow):
    path = _batch(tmp_path, "b.parquet", live_and_shadow, scores=[0.1, 0.2, 1.3, 0.4])
    error = error_of(cli, "serving", "record", "m", str(path))
    assert "row 3, column score: 1.3 is not a probability in [0, 1]" in error["message"]
    _nothing_stored(cli)


def test_duplicate_row_ids_within_a_batch_are_refused(cli, tmp_path, live_and_shadow):
    path = _batch(tmp_path, "b.parquet", live_and_shadow, row_ids=["a", "b", "c", "b"])
    error = error_of(cli, "serving", "record", "m", str(path))
    assert "row 4, column row_id: " in error["place"]
    _nothing_stored(cli)


def test_an_empty_batch_is_refused(cli, tmp_path, live_and_shadow):
    path = write_served(tmp_path / "empty.parquet",
                        served_table([], [], [], []))
    error = error_of(cli, "serving", "record", "m", str(path))
    assert "no records" in error["message"]
    _nothing_stored(cli)


def test_input_fields_that_contradict_the_input_schema_are_refused(cli, tmp_path,
                                                                   live_and_shadow):
    # the input schema says diameter_mm is an int
    path = _batch(tmp_path, "b.parquet", live_and_shadow,
                  diameter_mm=pa.array(["100", "150", "wide", "200"]))
    error = error_of(cli, "serving", "record", "m", str(path))
    assert "row 3, column diameter_mm: " in error["place"]
    unknown = _batch(tmp_path, "c.parquet", live_and_shadow, colour=["red"] * 4)
    error = error_of(cli, "serving", "record", "m", str(unknown))
    assert "column colour: " in error["place"] and "input schema" in error["message"]
    _nothing_stored(cli)


def test_a_csv_batch_needs_its_schema_and_then_reads_iso_times(cli, tmp_path, live_and_shadow):
    stamp = (live_and_shadow + timedelta(seconds=1)).strftime("%Y-%m-%dT%H:%M:%S.%fZ")
    path = tmp_path / "b.csv"
    path.write_text(f"row_id,served_at,version,score\na,{stamp},1,0.25\nb,{stamp},1,0.75\n")
    error = error_of(cli, "serving", "record", "m", str(path))
    assert "--schema: " in error["place"]
    schema = tmp_path / "b.avsc"
    schema.write_text('{"type": "record", "name": "Served", "fields": ['
                      '{"name": "row_id", "type": "string"}, {"name": "served_at", '
                      '"type": "string"}, {"name": "version", "type": "int"}, '
                      '{"name": "score", "type": "double"}]}')
    assert cli.json("serving", "record", "m", str(path), "--schema", str(schema))["rows"] == 2


def test_outcomes_with_labels_outside_the_tasks_classes_are_refused(cli, tmp_path,
                                                                    live_and_shadow):
    path, served = shadow_day(tmp_path / "day.parquet", live_and_shadow, 10)
    cli.json("serving", "record", "m", str(path))
    outcomes = write_outcomes(tmp_path / "o.csv", served["ids"][:3], [0, "maybe", 1])
    error = error_of(cli, "serving", "outcomes", "m", str(outcomes))
    assert "row 2, column label: " in error["place"] and "binary" in error["message"]
    assert cli.json("serving", "report", "m")["outcomes"]["batches"] == 0


def test_recording_needs_the_publisher_role(cli, tmp_path, live_and_shadow):
    path, _ = shadow_day(tmp_path / "day.parquet", live_and_shadow, 5)
    error = error_of(cli, "serving", "record", "m", str(path), user="tomas.lindqvist")
    assert "needs the publisher role" in error["message"]


def test_a_report_window_must_merge_whole_policy_windows(cli, tmp_path, live_and_shadow):
    error = error_of(cli, "serving", "report", "m", "--window", "6h")
    assert "--window: " in error["place"]
    assert cli.json("serving", "report", "m", "--window", "7d")["window_seconds"] == 7 * 86400


def test_compact_rows_are_dropped_after_the_retention_and_the_summaries_stay(cli, tmp_path,
                                                                            live_and_shadow):
    policy = tmp_path / "retention.toml"
    policy.write_text((tmp_path / "policy.toml").read_text() + "\n[serving]\nretention_days = 1\n")
    cli.json("model", "policy", "set", "m", str(policy), user="mara.kowalczyk")
    first, _ = shadow_day(tmp_path / "d0.parquet", live_and_shadow, 50, prefix="a")
    cli.json("serving", "record", "m", str(first))
    later, _ = shadow_day(tmp_path / "d3.parquet", live_and_shadow + timedelta(days=3), 50,
                          prefix="b")
    assert cli.json("serving", "record", "m", str(later))["dropped_row_sets"] == 2
    report = cli.json("serving", "report", "m")
    assert [sum(e["rows"] for e in w["versions"]) for w in report["windows"]] == [100, 100]
    # the figures of the first day were kept with its window; its rows are gone
    assert report["windows"][0]["versions"][1]["agreement"]["rows"] == 50
    outcomes = write_outcomes(tmp_path / "o.csv", ["a000001", "b000001"], [1, 0])
    assert cli.json("serving", "outcomes", "m", str(outcomes))["unknown_rows"] == 1


def test_a_report_for_one_version_since_a_date(cli, tmp_path, live_and_shadow):
    first, _ = shadow_day(tmp_path / "d0.parquet", live_and_shadow, 20, prefix="a")
    later, _ = shadow_day(tmp_path / "d2.parquet", live_and_shadow + timedelta(days=2), 20,
                          prefix="b")
    cli.json("serving", "record", "m", str(first))
    cli.json("serving", "record", "m", str(later))
    since = (live_and_shadow + timedelta(days=1)).strftime("%Y-%m-%d")
    report = cli.json("serving", "report", "m", "--version", "v2", "--since", since)
    assert len(report["windows"]) == 1
    assert [e["version"] for e in report["windows"][0]["versions"]] == [2]
    assert "v2:" in cli("serving", "report", "m").stdout


def test_an_avro_batch_with_millisecond_timestamps(cli, tmp_path, live_and_shadow):
    import fastavro

    schema = {"type": "record", "name": "Served", "namespace": "scoring.out", "fields": [
        {"name": "row_id", "type": "string"},
        {"name": "served_at", "type": {"type": "long", "logicalType": "timestamp-millis"}},
        {"name": "version", "type": "int"}, {"name": "score", "type": "double"},
        {"name": "diameter_mm", "type": "int"}]}
    moment = live_and_shadow + timedelta(seconds=1)
    path = tmp_path / "batch.avro"
    with path.open("wb") as out:
        fastavro.writer(out, fastavro.parse_schema(schema), [
            {"row_id": f"r{i}", "served_at": moment + timedelta(seconds=i), "version": 1,
             "score": 0.25 * (i % 4), "diameter_mm": 100 + i} for i in range(8)])
    recorded = cli.json("serving", "record", "m", str(path))
    assert recorded["rows"] == 8
    assert recorded["windows"][0]["window"] == moment.strftime("%Y-%m-%dT00:00:00Z")
