"""The command line as a new user meets it, on the demo catalogue: the reads, the suggestions,
the versions written three ways, and mistakes refused in one line before anything changes."""

from __future__ import annotations

import json
import time
from pathlib import Path

import pytest
from click.testing import CliRunner

from registry.cli import demo
from registry.cli import main
from tests.cli_errors import assert_one_line_error
from tests.conftest import BACKENDS, fresh_catalogue_url

SEED = Path(__file__).resolve().parents[1] / "seed_data" / "brackwater"


@pytest.fixture(scope="module", params=BACKENDS)
def demo_url(request, tmp_path_factory):
    with fresh_catalogue_url(request.param, tmp_path_factory.mktemp("demo")) as url:
        demo.play(url, demo.run_in_process, lambda line: None)
        yield url


@pytest.fixture
def run(demo_url):
    def invoke(*arguments: str, user: str = "ines.okafor"):
        return CliRunner().invoke(main, ["--db", demo_url, "--as", user, *arguments])
    return invoke


def as_json(result, expect: int = 0):
    assert result.exit_code == expect, result.output
    return json.loads(result.stdout)


# --- versions: MODEL VERSION, MODEL vN and MODEL@N are one thing --------------------------


@pytest.mark.parametrize("written", [["main-burst-risk", "2"], ["main-burst-risk", "v2"],
                                     ["main-burst-risk@2"]])
def test_a_version_may_be_written_three_ways(run, written):
    report = as_json(run("check", *written, "--to", "shadow", "--json"), expect=1)
    assert (report["model"], report["version"]) == ("main-burst-risk", 2)


def test_a_version_given_twice_is_refused_by_name(run):
    assert_one_line_error(run("check", "main-burst-risk@2", "3", "--to", "shadow"),
                          "VERSION", "given twice")


def test_an_unknown_version_lists_those_that_exist(run):
    assert_one_line_error(run("check", "main-burst-risk", "7", "--to", "live"),
                          "has no version 7", "v1, v2, v3, v4")


# --- suggestions by closeness -------------------------------------------------------------


@pytest.mark.parametrize("arguments, suggestion", [
    (["status", "main-burst-rsk"], "did you mean main-burst-risk?"),
    (["dataset", "show", "brackwater-training"], "did you mean brackwater-training-set?"),
    (["check", "main-burst-risk", "2", "--to", "canery"], "did you mean canary?"),
    (["lineage", "dataset/brackwater-telemetry-extrct", "--down"],
     "did you mean brackwater-telemetry-extract?"),
    (["user", "grant", "nadia.haddad", "publsher"], "did you mean publisher?"),
    (["audit", "log", "--action", "stge"], "did you mean stage?"),
])
def test_a_misspelt_name_is_answered_with_the_nearest_one(run, arguments, suggestion):
    assert_one_line_error(run(*arguments), suggestion)


def test_a_misspelt_waiver_is_refused_before_any_evidence_is_gathered(run):
    started = time.perf_counter()
    error = as_json(run("promote", "main-burst-risk", "2", "--to", "canary", "--waive",
                        "slice-gard", "--reason", "reviewed", "--json", user="tomas.lindqvist"),
                    expect=2)["error"]
    assert "did you mean slice-guard?" in error["message"]
    assert error["place"] == "waiver of slice-gard"
    assert time.perf_counter() - started < 2.0  # gathering evidence takes seconds; this does not


# --- verdicts and reads -------------------------------------------------------------------


def test_the_live_holders_own_check_says_it_holds_live(run):
    report = as_json(run("check", "main-burst-risk", "1", "--to", "shadow", "--json"), expect=1)
    notes = [note for result in report["results"] for note in result["notes"]]
    assert "version 1 itself holds live: there is no other version to compare against" in notes
    assert not any("no version holds the top of the ladder" in note for note in notes)


def test_status_and_model_show_flag_holders_downstream_of_the_recall(run):
    status = as_json(run("status", "main-burst-risk", "--json"))
    flagged = {f["version"]: f for f in status["recalled_upstream"]}
    assert flagged[1]["stages"] == ["live"]
    assert flagged[1]["recalled"] == ["brackwater-telemetry-extract"]
    assert "FLAGGED: v1 (live) is downstream of recalled brackwater-telemetry-extract" in \
        run("status", "main-burst-risk").stdout
    versions = as_json(run("model", "show", "main-burst-risk", "--json"))["versions"]
    assert all(v["recalled_upstream"] == ["brackwater-telemetry-extract"] for v in versions)
    night_flow = as_json(run("status", "night-flow-leak", "--json"))
    assert night_flow["recalled_upstream"] == []


def test_history_names_the_report_of_a_refusal_and_report_show_opens_it(run):
    text = run("history", "main-burst-risk").stdout
    refused = [line for line in text.splitlines() if "refused: v2 into canary" in line]
    report_id = int(refused[0].rsplit("report show ", 1)[1].rstrip(")"))
    report = as_json(run("report", "show", str(report_id), "--json"))
    assert (report["id"], report["version"], report["stage"], report["passed"]) == (
        report_id, 2, "canary", False)
    shown = run("report", "show", str(report_id)).stdout
    assert "refused (10 passed, 1 failed of 11 gates)" in shown
    assert_one_line_error(run("report", "show", "999"), "no gate report 999")


def test_a_waived_gate_is_counted_as_waived_not_passed(run):
    history = as_json(run("history", "main-burst-risk", "--json"))
    waived = [a for a in history["attempts"] if a["passed"] and a["version"] == 2
              and a["stage"] == "canary"]
    shown = run("report", "show", str(waived[0]["id"])).stdout
    assert "allowed (10 passed, 1 waived of 11 gates)" in shown


def test_audit_log_reads_newest_first_with_filters(run):
    everything = as_json(run("audit", "log", "--limit", "1000", "--json"))["events"]
    sequences = [e["sequence"] for e in everything]
    assert sequences == sorted(sequences, reverse=True) and len(sequences) > 30
    stage_moves = as_json(run("audit", "log", "--model", "main-burst-risk", "--action", "stage",
                              "--actor", "tomas.lindqvist", "--json"))["events"]
    assert stage_moves and all(e["action"].startswith("stage.") and
                               e["subject"].startswith("model/main-burst-risk/")
                               for e in stage_moves)
    recall = as_json(run("audit", "log", "--dataset", "brackwater-telemetry-extract",
                         "--action", "dataset.recall", "--json"))["events"]
    assert [e["actor"] for e in recall] == ["ines.okafor"]
    assert as_json(run("audit", "log", "--limit", "2", "--json"))["events"] == everything[:2]
    assert as_json(run("audit", "log", "--since", "2999-01-01", "--json"))["events"] == []
    assert_one_line_error(run("audit", "log", "--since", "yesterday"), "--since")
    assert_one_line_error(run("audit", "log", "--limit", "0"), "--limit")


def test_text_times_are_to_the_second_in_utc(run):
    line = run("audit", "log", "--limit", "1").stdout.splitlines()[0]
    assert line.split()[2].endswith("Z") and "." not in line.split()[2]


def test_model_list_writes_every_version_with_its_v(run):
    text = run("model", "list").stdout
    assert "candidate: v2, v3, v4" in text


# --- input checks: refused by name, nothing changed ----------------------------------------


def test_lineage_both_ways_and_conflicting_formats(run):
    both = as_json(run("lineage", "main-burst-risk@2", "--up", "--down", "--json"))
    assert both["direction"] == "both"
    assert_one_line_error(run("lineage", "main-burst-risk@2", "--up", "--json", "--format",
                              "text"), "--format", "--json and --format text")


def test_a_second_dataset_registration_names_the_fields_that_differ(run, demo_url):
    before = as_json(run("audit", "log", "--limit", "1", "--json"))["events"]
    result = run("dataset", "add", "brackwater-evaluation-set",
                 str(SEED / "datasets" / "brackwater-evaluation-set.parquet"), "--role",
                 "evaluation", "--derived-from", "brackwater-asset-register", "--key",
                 "segment_id", "--exclude", "burst_within_90d")
    error_line = result.stderr
    assert result.exit_code == 2
    assert "derived from (brackwater-asset-register, brackwater-telemetry-extract registered, " \
           "brackwater-asset-register now)" in error_line
    assert "records" not in error_line and "key columns" not in error_line
    assert as_json(run("audit", "log", "--limit", "1", "--json"))["events"] == before


def test_an_empty_document_is_not_registered(run, tmp_path):
    empty = tmp_path / "empty.pfa.json"
    empty.write_bytes(b"")
    result = run("register", "main-burst-risk", str(empty), "--manifest",
                 str(SEED / "manifests" / "main-burst-risk-v2.toml"))
    assert_one_line_error(result, "empty.pfa.json", "is empty")
    assert len(as_json(run("model", "show", "main-burst-risk", "--json"))["versions"]) == 4


def test_missing_folder_and_empty_paths_read_alike(run, tmp_path):
    empty = tmp_path / "empty.toml"
    empty.write_text("")
    document = str(SEED / "documents" / "main-burst-risk-v2.pfa.json")
    for path, words in ((tmp_path / "none.toml", "no such file"), (tmp_path, "is a folder"),
                        (empty, "is empty")):
        line = run("register", "main-burst-risk", document, "--manifest", str(path)).stderr
        assert line.startswith(f"lockkeeper: {path}: {words}"), line
        assert "Errno" not in line


def test_reading_a_catalogue_that_does_not_exist_creates_nothing(tmp_path):
    url = f"sqlite:///{tmp_path / 'nodir' / 'none.db'}"
    result = CliRunner().invoke(main, ["--db", url, "status", "main-burst-risk"])
    assert_one_line_error(result, "does not exist", "lockkeeper init")
    assert not (tmp_path / "nodir").exists()
