"""Evidence the catalogue gathers for the gates: leakage from sketches, live-sample counts."""

from __future__ import annotations

import json
from pathlib import Path

from registry.cli.demo import BRACKWATER

from tests.catalogue.stage_helpers import set_up_model

DATA, SCHEMAS = BRACKWATER / "datasets", BRACKWATER / "schemas"
APPROVER = "tomas.lindqvist"


def _version_files(folder: Path, schema: dict, tag: str, trained_on: str, evaluated_on: str):
    folder.mkdir(parents=True)
    (folder / "input.avsc").write_text(json.dumps(schema))
    (folder / "model.bin").write_bytes(tag.encode())
    (folder / "manifest.toml").write_text(
        f'description = "{tag}"\ncode_revision = "abc"\nauthor = "ines.okafor"\n'
        f'input_schema = "input.avsc"\ntrained_on = ["{trained_on}"]\n'
        f'evaluated_on = ["{evaluated_on}"]\n')
    return folder / "model.bin", folder / "manifest.toml"


def _register(cli, tmp_path, tag, schema, trained_on="training", evaluated_on="evaluation"):
    document, manifest = _version_files(tmp_path / tag, schema, tag, trained_on, evaluated_on)
    return cli.json("register", "m", str(document), "--manifest", str(manifest))["version"]


def _add(cli, name, file, role):
    cli.json("dataset", "add", name, str(DATA / file), "--role", role, "--key", "segment_id",
             "--exclude", "burst_within_90d")


def _result(outcome, gate):
    return next(r for r in outcome["report"]["results"] if r["gate"] == gate)


def test_an_evaluation_set_copied_from_training_is_caught_as_leakage(cli, tmp_path):
    set_up_model(cli, tmp_path, {"shadow": ["no-leakage"]})
    _add(cli, "training", "brackwater-training-set.parquet", "training")
    _add(cli, "evaluation", "brackwater-training-set.parquet", "evaluation")  # the same rows
    schema = json.loads((SCHEMAS / "segment-v2.avsc").read_text())
    version = _register(cli, tmp_path, "v1", schema)
    outcome = cli.json("promote", "m", str(version), "--to", "shadow", user=APPROVER, expect=1)
    leakage = _result(outcome, "no-leakage")
    assert leakage["passed"] is False and "1.0000" in leakage["summary"]


def test_a_break_the_live_sample_never_exercises_is_reported_with_its_counts(cli, tmp_path):
    set_up_model(cli, tmp_path, {"shadow": ["reads-live-feed", "live-data-check"]},
                 skippable=("canary",))
    _add(cli, "training", "brackwater-training-set.parquet", "training")
    _add(cli, "evaluation", "brackwater-evaluation-set.parquet", "evaluation")
    cli.json("dataset", "add", "live-sample", str(DATA / "brackwater-live-sample.avro"),
             "--role", "live-sample", "--feed-of", "m")
    schema = json.loads((SCHEMAS / "segment-v2.avsc").read_text())
    first = _register(cli, tmp_path, "v1", schema)
    cli.json("approve", "m", str(first), "--for", "live", user="priya.raman")
    cli.json("promote", "m", str(first), "--to", "live", user=APPROVER)
    narrower = json.loads(json.dumps(schema))
    for field in narrower["fields"]:
        if field["name"] == "pipe_material":
            field["type"]["symbols"].remove("ASBESTOS_CEMENT")
    second = _register(cli, tmp_path, "v2", narrower)
    outcome = cli.json("promote", "m", str(second), "--to", "shadow", user=APPROVER, expect=1)
    assert _result(outcome, "reads-live-feed")["passed"] is False
    data_check = _result(outcome, "live-data-check")
    # The live sample holds no ASBESTOS_CEMENT row (seed_data's own property test says so), so
    # the static break is never exercised by live data; the default policy lets it pass.
    assert data_check["passed"] is True
    assert "ASBESTOS_CEMENT" in json.dumps(data_check["evidence"])
