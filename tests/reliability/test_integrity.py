"""`audit verify` finds and names a single flipped byte in any stored schema, feature
definition, document, dataset fingerprint, dataset schema, evaluation, predictions or event."""

from __future__ import annotations

import json
import random

import pytest
from sqlalchemy import text

from registry.service.integrity import verify_catalogue
from tests.reliability.crash import SEED_DATA as SEED
from tests.reliability.crash import evaluation, set_up

pytestmark = pytest.mark.reliability
FLIPS_PER_PLACE = 4

# (what, table, column, key column, how to find the row, the place the finding must name)
PLACES = [
    ("input schema", "versions", "input_schema_json", "id", "number = 1", "model/m/version/1"),
    ("output schema", "versions", "output_schema_json", "id", "number = 1", "model/m/version/1"),
    ("feature definitions", "versions", "features_json", "id", "number = 1",
     "model/m/version/1"),
    ("dataset schema", "datasets", "schema_json", "id", "name = 'brackwater-evaluation-set'",
     "dataset/brackwater-evaluation-set"),
    ("evaluation metrics", "evaluations", "metrics_json", "id", "1 = 1",
     "model/m/version/2/evaluation/brackwater-evaluation-set"),
    ("audit event", "audit_events", "details_json", "sequence", "sequence = 3", "audit event 3"),
]
BLOBS = [
    ("document", "SELECT stored_blob_digest FROM versions WHERE number = 1", "model/m/version/1"),
    ("dataset fingerprint", "SELECT fingerprint_digest FROM datasets",
     "dataset/brackwater-evaluation-set"),
    ("predictions", "SELECT predictions_digest FROM evaluations",
     "model/m/version/2/evaluation/brackwater-evaluation-set"),
]


@pytest.fixture
def filled(cli, tmp_path, catalogue):
    set_up(cli, tmp_path)
    # Version 1 is the Brackwater PFA document with its schemas and feature definitions.
    manifest = tmp_path / "v1.toml"
    manifest.write_text("\n".join(
        line for line in (SEED / "manifests" / "main-burst-risk-v1.toml").read_text().splitlines()
        if not line.startswith(("trained_on", "evaluated_on"))
    ).replace('"../', f'"{SEED}/'))
    cli.json("register", "m", str(SEED / "documents" / "main-burst-risk-v1.pfa.json"),
             "--manifest", str(manifest))
    cli.json(*evaluation(cli, tmp_path, 0))  # version 2, evaluated
    with catalogue.engine.connect() as connection:
        assert connection.execute(text("SELECT count(*) FROM evaluations")).scalar_one() == 1
    assert verify_catalogue(catalogue).ok
    return catalogue


def _flipped(value: bytes, position: int) -> bytes:
    changed = bytearray(value)
    changed[position] ^= 0x01  # stays ASCII, so text columns stay valid UTF-8
    return bytes(changed)


def _names(catalogue, place: str) -> list[str]:
    report = verify_catalogue(catalogue)
    assert not report.ok
    return [f.place for f in report.findings]


@pytest.mark.parametrize("what,table,column,key,where,place", PLACES,
                         ids=[p[0] for p in PLACES])
def test_a_flipped_byte_in_a_stored_column_is_found_and_named(filled, what, table, column, key,
                                                              where, place):
    catalogue = filled
    with catalogue.engine.begin() as connection:
        row_key, value = connection.execute(text(
            f"SELECT {key}, {column} FROM {table} WHERE {where}")).first()
    if value is None:
        pytest.skip(f"no {what} stored in this catalogue")
    rng = random.Random(f"{table}.{column}")
    for position in rng.sample(range(len(value)), min(FLIPS_PER_PLACE, len(value))):
        flipped = _flipped(value.encode("utf-8"), position).decode("utf-8")
        with catalogue.engine.begin() as connection:
            connection.execute(text(f"UPDATE {table} SET {column} = :v WHERE {key} = :k"),
                               {"v": flipped, "k": row_key})
        try:
            assert place in _names(catalogue, place), (what, position, flipped[position - 5:
                                                                           position + 5])
        finally:
            with catalogue.engine.begin() as connection:
                connection.execute(text(f"UPDATE {table} SET {column} = :v WHERE {key} = :k"),
                                   {"v": value, "k": row_key})
    assert verify_catalogue(catalogue).ok


@pytest.mark.parametrize("what,query,place", BLOBS, ids=[b[0] for b in BLOBS])
def test_a_flipped_byte_in_a_stored_blob_is_found_and_named(filled, what, query, place):
    catalogue = filled
    with catalogue.engine.begin() as connection:
        digest = connection.execute(text(query)).scalar_one()
        content = connection.execute(text(  # the first piece of the blob's bytes
            "SELECT content FROM blob_chunks WHERE digest = :d AND position = 0"),
            {"d": digest}).scalar_one()
    rng = random.Random(what)
    edit = "UPDATE blob_chunks SET content = :c WHERE digest = :d AND position = 0"
    for position in rng.sample(range(len(content)), FLIPS_PER_PLACE):
        with catalogue.engine.begin() as connection:
            connection.execute(text(edit), {"c": _flipped(bytes(content), position), "d": digest})
        try:
            names = _names(catalogue, place)
            assert f"blob {digest}" in names and place in names, (what, position, names)
        finally:
            with catalogue.engine.begin() as connection:
                connection.execute(text(edit), {"c": bytes(content), "d": digest})
    assert verify_catalogue(catalogue).ok
