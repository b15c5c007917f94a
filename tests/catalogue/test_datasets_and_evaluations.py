"""Datasets and evaluations in the catalogue: registration, idempotency, bad input, key checks."""

from __future__ import annotations

import csv
from pathlib import Path

import pytest

from registry.cli.demo import BRACKWATER

DATA, SCHEMAS, PREDICTIONS = BRACKWATER / "datasets", BRACKWATER / "schemas", BRACKWATER / "predictions"


def _one_line(result, code=2):
    assert result.exit_code == code, result.output
    assert len(result.stderr.strip().splitlines()) == 1, result.stderr
    return result.stderr


def add_sources(cli):
    cli.json("dataset", "add", "assets", str(DATA / "brackwater-asset-register.csv"),
             "--schema", str(SCHEMAS / "brackwater-asset-register.avsc"))
    cli.json("dataset", "add", "telemetry", str(DATA / "brackwater-telemetry-extract.avro"))


def add_evaluation_set(cli, name="evaluation"):
    return cli.json("dataset", "add", name, str(DATA / "brackwater-evaluation-set.parquet"),
                    "--role", "evaluation", "--derived-from", "assets", "--derived-from",
                    "telemetry", "--key", "segment_id", "--exclude", "burst_within_90d")


def test_a_dataset_is_registered_with_its_parents_and_fingerprint(cli):
    add_sources(cli)
    summary = add_evaluation_set(cli)
    assert summary["rows"] == 950 and summary["derived_from"] == ["assets", "telemetry"]
    shown = cli.json("dataset", "show", "evaluation")
    assert shown["content_digest"] == summary["content_digest"]
    assert "pipe_material" in shown["profile"]
    assert cli.json("audit", "verify")["ok"] is True


def test_registering_the_same_dataset_again_changes_nothing(cli):
    add_sources(cli)
    add_evaluation_set(cli)
    assert add_evaluation_set(cli)["created"] is False


def test_the_same_name_with_other_content_is_refused(cli):
    add_sources(cli)
    add_evaluation_set(cli)
    result = cli("dataset", "add", "evaluation", str(DATA / "brackwater-training-set.parquet"),
                 "--role", "evaluation", "--key", "segment_id")
    assert "already registered" in _one_line(result)


def test_an_unknown_parent_is_refused_and_nothing_is_stored(cli):
    result = cli("dataset", "add", "child", str(DATA / "brackwater-evaluation-set.parquet"),
                 "--derived-from", "nowhere")
    assert "unknown dataset" in _one_line(result)
    assert cli.json("dataset", "list")["datasets"] == []


def test_a_missing_file_is_refused(cli, tmp_path):
    assert "no such file" in _one_line(cli("dataset", "add", "x", str(tmp_path / "absent.csv")))


def test_a_value_that_does_not_parse_names_its_row_and_column(cli, tmp_path):
    bad = tmp_path / "assets.csv"
    rows = list(csv.reader((DATA / "brackwater-asset-register.csv").open()))
    column = rows[0].index("diameter_mm")
    rows[3][column] = "wide"
    with bad.open("w", newline="") as handle:
        csv.writer(handle).writerows(rows)
    line = _one_line(cli("dataset", "add", "assets", str(bad), "--schema",
                         str(SCHEMAS / "brackwater-asset-register.avsc")))
    assert "diameter_mm" in line and "row" in line
    assert cli.json("dataset", "list")["datasets"] == []


def test_dataset_compare_accepts_catalogue_names(cli):
    add_sources(cli)
    add_evaluation_set(cli)
    cli.json("dataset", "add", "training", str(DATA / "brackwater-training-set.parquet"),
             "--role", "training", "--key", "segment_id", "--exclude", "burst_within_90d")
    compared = cli.json("dataset", "compare", "training", "evaluation")
    assert compared["overlap"]["containment"] == 0.0
    assert "pipe_age_years" in compared["drift"]


@pytest.fixture
def evaluated_line(cli, tmp_path):
    from tests.catalogue.stage_helpers import set_up_people

    set_up_people(cli)
    cli.json("model", "create", "main-burst-risk", user="mara.kowalczyk")
    add_sources(cli)
    add_evaluation_set(cli)
    cli.json("register", "main-burst-risk",
             str(BRACKWATER / "documents" / "main-burst-risk-v1.pfa.json"), "--manifest",
             str(_manifest_without_lineage(tmp_path)))
    return cli


def _manifest_without_lineage(tmp_path: Path) -> Path:
    source = (BRACKWATER / "manifests" / "main-burst-risk-v1.toml").read_text()
    kept = [line for line in source.splitlines() if not line.startswith(("trained_on",
                                                                         "evaluated_on"))]
    folder = tmp_path / "manifests"
    folder.mkdir()
    manifest = folder / "v1.toml"
    manifest.write_text("\n".join(kept).replace("../", str(BRACKWATER) + "/") + "\n")
    return manifest


def test_evaluate_stores_metrics_computed_from_the_predictions(evaluated_line):
    summary = evaluated_line.json("evaluate", "main-burst-risk", "1", "--dataset", "evaluation",
                                  "--predictions", str(PREDICTIONS / "main-burst-risk-v1.csv"),
                                  "--slice", "district")
    # The seed generator's own figure, checked there against scikit-learn's roc_auc_score.
    assert summary["metrics"]["roc_auc"] == pytest.approx(0.7677, abs=1e-4)
    assert set(summary["slices"]["district"]["values"]) >= {"SALTMARSH", "OLD_TOWN"}
    again = evaluated_line.json("evaluate", "main-burst-risk", "1", "--dataset", "evaluation",
                                "--predictions", str(PREDICTIONS / "main-burst-risk-v1.csv"),
                                "--slice", "district")
    assert again["created"] is False


def test_predictions_whose_row_ids_do_not_match_the_dataset_are_refused(evaluated_line, tmp_path):
    rows = list(csv.reader((PREDICTIONS / "main-burst-risk-v1.csv").open()))
    short = tmp_path / "short.csv"
    with short.open("w", newline="") as handle:
        csv.writer(handle).writerows(rows[:-5])
    line = _one_line(evaluated_line("evaluate", "main-burst-risk", "1", "--dataset",
                                    "evaluation", "--predictions", str(short)))
    assert "row ids" in line
    # Nothing was stored: a correct run afterwards creates the evaluation.
    created = evaluated_line.json("evaluate", "main-burst-risk", "1", "--dataset", "evaluation",
                                  "--predictions", str(PREDICTIONS / "main-burst-risk-v1.csv"))
    assert created["created"] is True


def test_evaluating_on_a_dataset_that_is_not_an_evaluation_set_is_refused(evaluated_line):
    line = _one_line(evaluated_line("evaluate", "main-burst-risk", "1", "--dataset", "assets",
                                    "--predictions", str(PREDICTIONS / "main-burst-risk-v1.csv")))
    assert "evaluation" in line


def test_bad_predictions_are_refused_with_one_line(evaluated_line, tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("row_id,label,score\nSM-1,1,1.7\n")
    assert _one_line(evaluated_line("evaluate", "main-burst-risk", "1", "--dataset",
                                    "evaluation", "--predictions", str(bad)))
