"""A catalogue made at revision 0007 upgrades to the stored shapes of revision 0009
(docs/stored-shapes.md) and the digests of stored bytes of revision 0010 in place, on SQLite and PostgreSQL: every `--json` read prints what it
printed before the upgrade, every page answers, `audit verify` passes, and a later change to a
converted row is named.

fixtures/demo-catalogue-rev0007.db is the demo catalogue as `lockkeeper demo` built it with the
code of revision 0007 (features as TOML inside JSON, zlib-compressed JSON predictions), and
fixtures/demo-catalogue-rev0007.reads.json what that code printed for each read command of
tests/catalogue/upgrade_reads.py. Both were committed as made; never regenerate them.
"""

from __future__ import annotations

import json
import shutil
import sqlite3
from collections.abc import Iterator
from datetime import UTC, datetime
from pathlib import Path

import pyarrow as pa
import pytest
from sqlalchemy import Engine, MetaData, select, text

from registry.app import create_app
from tests.catalogue.upgrade_reads import MODEL, NIGHT_FLOW, READS, TELEMETRY, key
from tests.conftest import BACKENDS, fresh_catalogue_url, run_cli

FIXTURES = Path(__file__).parent / "fixtures"
FIXTURE = FIXTURES / "demo-catalogue-rev0007.db"
BEFORE = json.loads((FIXTURES / "demo-catalogue-rev0007.reads.json").read_text("utf-8"))
SEED = Path(__file__).resolve().parents[2] / "seed_data"


def _at_rev0007(backend: str, folder: Path) -> Iterator[str]:
    """The fixture on the backend asked for, still at revision 0007: the file itself on SQLite;
    on PostgreSQL, a schema made by the revisions up to 0007 holding the fixture's rows."""
    target = folder / "catalogue.db"
    shutil.copy(FIXTURE, target)
    if backend == "sqlite":
        yield f"sqlite:///{target}"
        return
    from registry.store import migrate
    from registry.store.catalogue import open_catalogue

    with fresh_catalogue_url(backend, folder) as url:
        source, copy = open_catalogue(f"sqlite:///{target}"), open_catalogue(url, must_exist=False)
        try:
            migrate.upgrade(copy, "0007")
            _copy_rows(source.engine, copy.engine)
        finally:
            source.close()
            copy.close()
        yield url


def _copy_rows(source: Engine, target: Engine) -> None:
    """Every row as stored, parents first; SQLite hands back times without their zone, which
    the catalogue always wrote in UTC. Then each id sequence continues after the copied ids.

    The tables are read as revision 0007 made them (reflected from both ends), not as today's
    code declares them: later revisions change them (blobs lose their content to pieces)."""
    stored, made = MetaData(), MetaData()
    stored.reflect(source)
    made.reflect(target)
    with source.connect() as reading, target.begin() as writing:
        for table in stored.sorted_tables:
            if table.name == "alembic_version":
                continue
            rows = [{name: (value.replace(tzinfo=UTC) if isinstance(value, datetime)
                            and value.tzinfo is None else value)
                     for name, value in row.items()}
                    for row in reading.execute(select(table)).mappings()]
            if rows:
                writing.execute(made.tables[table.name].insert(), rows)
            if "id" in table.columns and table.columns["id"].autoincrement in (True, "auto"):
                writing.execute(text(
                    f"SELECT setval(pg_get_serial_sequence('{table.name}', 'id'), "
                    f"coalesce((SELECT max(id) FROM {table.name}), 0) + 1, false)"))


@pytest.fixture(scope="module", params=BACKENDS)
def upgraded(request, tmp_path_factory) -> Iterator[str]:
    folder = tmp_path_factory.mktemp(f"rev0007-{request.param}")
    for url in _at_rev0007(request.param, folder):
        result = run_cli(["--db", url, "init", "--json"])
        assert result.exit_code == 0, result.output
        report = json.loads(result.stdout)
        assert (report["revision_before"], report["revision"]) == ("0007", "0010")
        yield url


def _json(url: str, *arguments: str):
    result = run_cli(["--db", url, *arguments, "--json"])
    assert result.exit_code == 0, (arguments, result.output)
    return json.loads(result.stdout)


def test_the_fixture_is_still_at_revision_0007_in_the_old_shapes():
    with sqlite3.connect(FIXTURE) as connection:
        (revision,) = connection.execute("SELECT version_num FROM alembic_version").fetchone()
        (features,) = connection.execute(
            "SELECT features_json FROM versions ORDER BY id LIMIT 1").fetchone()
    assert revision == "0007"
    assert list(json.loads(features)) == ["toml"]


def test_audit_verify_passes_after_the_upgrade(upgraded):
    verified = _json(upgraded, "audit", "verify")
    assert verified["ok"] is True, verified["findings"]
    assert verified["evaluations"] == 4 and verified["versions"] == 5


@pytest.mark.parametrize("arguments", [a for a in READS if a[:2] != ("audit", "log")], ids=key)
def test_every_read_prints_what_it_printed_before_the_upgrade(upgraded, arguments):
    assert _json(upgraded, *arguments) == BEFORE[key(arguments)]


def test_the_audit_log_gains_two_conversion_events_and_keeps_the_rest(upgraded):
    arguments = ("audit", "log", "--limit", "500")
    before, after = BEFORE[key(arguments)], _json(upgraded, *arguments)
    bytes_digests, shapes = after["events"][0], after["events"][1]
    assert {shapes["action"], bytes_digests["action"]} == {"catalogue.convert"}
    assert shapes["subject"] == bytes_digests["subject"] == "catalogue"
    details = shapes["details"]
    assert details["revision"] == "0009"
    assert (details["features"], details["evaluations"], details["predictions"]) == (5, 1, 4)
    assert details["blobs_removed"] == 4
    # every served_rows row of the demo (the only bytes the chain covers) recorded again
    assert (bytes_digests["details"]["revision"], bytes_digests["details"]["rows"]) == \
        ("0010", 42)
    assert after["events"][2:] == before["events"]


def test_rows_are_in_the_new_shapes_after_the_upgrade(upgraded):
    from registry.evaluation.record import read_evaluation_record
    from registry.features import definitions_from_json
    from registry.store.catalogue import open_catalogue

    catalogue = open_catalogue(upgraded)
    try:
        with catalogue.engine.connect() as connection:
            features = connection.execute(text("SELECT features_json FROM versions")).scalars()
            for stored in features:
                assert definitions_from_json(stored, origin="stored").paths
            evaluations = connection.execute(text(
                "SELECT metrics_json, predictions_digest FROM evaluations")).all()
            # The stored bytes are the blob's pieces in order (registry/store/blob_store.py).
            rows = [(metrics_json, b"".join(bytes(piece) for piece in connection.execute(text(
                "SELECT content FROM blob_chunks WHERE digest = :d ORDER BY position"),
                {"d": digest}).scalars())) for metrics_json, digest in evaluations]
    finally:
        catalogue.close()
    assert len(rows) == 4
    for metrics_json, content in rows:
        record = read_evaluation_record(metrics_json)
        # pyarrow's own IPC reader is the reference for the stored predictions.
        table = pa.ipc.open_file(pa.BufferReader(bytes(content))).read_all()
        assert table.schema.metadata[b"task"] == record.task.encode()
        assert table.num_rows == record.n


def test_the_same_predictions_sent_again_find_the_converted_evaluation(upgraded):
    predictions = SEED / "brackwater" / "predictions" / "main-burst-risk-v2.csv"
    again = _json(upgraded, "evaluate", MODEL, "2", "--dataset", "brackwater-evaluation-set",
                  "--predictions", str(predictions), "--slice", "district")
    assert again["created"] is False


def test_registering_a_converted_version_again_finds_it(upgraded):
    # The converted features give the registration digest a registration computes today.
    folder = SEED / "brackwater"
    again = _json(upgraded, "register", MODEL,
                  str(folder / "documents" / "main-burst-risk-v3.pfa.json"),
                  "--manifest", str(folder / "manifests" / "main-burst-risk-v3.toml"))
    assert (again["version"], again["created"]) == (3, False)


def test_a_second_init_converts_nothing(upgraded):
    head = _json(upgraded, "audit", "log", "--limit", "1")["events"][0]
    assert _json(upgraded, "init")["revision"] == "0010"
    assert _json(upgraded, "audit", "log", "--limit", "1")["events"][0] == head


# Each page with a name it must show.
PAGES = [
    ("/", MODEL),
    ("/events", MODEL),
    (f"/models/{MODEL}", MODEL),
    (f"/models/{NIGHT_FLOW}", NIGHT_FLOW),
    *((f"/models/{MODEL}/versions/{number}", MODEL) for number in (1, 2, 3, 4)),
    (f"/models/{NIGHT_FLOW}/versions/1", "night-flow-evaluation-set"),
    (f"/models/{MODEL}/versions/2/impact?stage=live", "district=SALTMARSH roc_auc"),
    (f"/models/{MODEL}/compare?a=1&b=2", "repairs_5y"),
    (f"/models/{MODEL}/after-release", MODEL),
    (f"/lineage?node=dataset/{TELEMETRY}", TELEMETRY),
    (f"/lineage?node={MODEL}@2&direction=up", TELEMETRY),
    (f"/datasets/{TELEMETRY}", TELEMETRY),
    ("/datasets/brackwater-training-set?against=brackwater-evaluation-set",
     "brackwater-evaluation-set"),
]


@pytest.mark.parametrize(("page", "shown"), PAGES, ids=[page for page, _ in PAGES])
def test_every_page_answers_after_the_upgrade(upgraded, page, shown):
    response = create_app(upgraded).test_client().get(page)
    assert response.status_code == 200, (page, response.data[:300])
    assert shown.encode() in response.data


def test_the_feature_comparison_reads_the_converted_definitions(upgraded):
    # v3 keeps the pressure field readable through an alias but switches kPa to psi: the
    # semantic diff of registry.features must still see it in the converted definitions.
    page = create_app(upgraded).test_client().get(f"/models/{MODEL}/compare?a=2&b=3")
    assert page.status_code == 200
    assert b"[psi]" in page.data and b"breaking" in page.data


@pytest.fixture(params=BACKENDS)
def upgraded_copy(request, tmp_path) -> Iterator[str]:
    for url in _at_rev0007(request.param, tmp_path):
        result = run_cli(["--db", url, "init"])
        assert result.exit_code == 0, result.output
        yield url


@pytest.mark.parametrize(("statement", "place"), [
    ("UPDATE versions SET features_json = replace(features_json, 'kPa', 'Pa') "
     "WHERE number = 1 AND model_id = (SELECT id FROM models WHERE name = 'main-burst-risk')",
     "versions"),
    ("UPDATE evaluations SET metrics_json = replace(metrics_json, '\"n\": 60', '\"n\": 61')",
     "evaluations"),
])
def test_a_change_to_a_converted_row_is_named(upgraded_copy, statement, place):
    from registry.store.catalogue import open_catalogue

    catalogue = open_catalogue(upgraded_copy)
    try:
        with catalogue.engine.begin() as connection:
            assert connection.execute(text(statement)).rowcount >= 1
    finally:
        catalogue.close()
    verified = _json_any(upgraded_copy, "audit", "verify")
    assert verified["ok"] is False
    assert any(finding["table"] == place for finding in verified["findings"]), \
        verified["findings"]


def _json_any(url: str, *arguments: str):
    result = run_cli(["--db", url, *arguments, "--json"])
    return json.loads(result.stdout)


def _revision_and_head(url: str) -> tuple[str | None, tuple]:
    from registry.store import migrate
    from registry.store.catalogue import open_catalogue

    catalogue = open_catalogue(url)
    try:
        with catalogue.engine.connect() as connection:
            head = tuple(connection.execute(text("SELECT sequence, hash FROM audit_head")).one())
            features = tuple(connection.execute(text(
                "SELECT features_json FROM versions ORDER BY id")).scalars())
        return migrate.current_revision(catalogue), (head, features)
    finally:
        catalogue.close()


def _refused_init(url: str) -> dict:
    result = run_cli(["--db", url, "init", "--json"])
    assert result.exit_code == 2, result.output
    return json.loads(result.stdout)["error"]


@pytest.mark.parametrize("backend", BACKENDS)
def test_a_row_in_no_known_shape_stops_the_upgrade_and_changes_nothing(backend, tmp_path):
    for url in _at_rev0007(backend, tmp_path):
        from registry.store.catalogue import open_catalogue

        catalogue = open_catalogue(url)
        try:
            with catalogue.engine.begin() as connection:
                connection.execute(text(
                    "UPDATE versions SET features_json = '{\"yaml\": \"x\"}' WHERE id = "
                    "(SELECT max(id) FROM versions)"))
        finally:
            catalogue.close()
        before = _revision_and_head(url)
        error = _refused_init(url)
        assert error["kind"] == "unconvertible-row"
        assert error["place"] == "model/night-flow-leak/version/1"
        assert "nothing was changed" in error["message"]
        assert _revision_and_head(url) == before and before[0] == "0007"


def test_going_back_below_0009_is_refused_once_rows_were_converted(upgraded_copy):
    from registry.errors import UserError
    from registry.store import migrate
    from registry.store.catalogue import open_catalogue

    catalogue = open_catalogue(upgraded_copy)
    try:
        with pytest.raises(UserError, match="restore an export"):
            migrate.downgrade(catalogue, "0007")
        assert migrate.current_revision(catalogue) == "0010"
    finally:
        catalogue.close()


def test_going_back_to_0009_records_the_hex_digests_again_and_up_again_verifies(upgraded_copy):
    from registry.store import migrate
    from registry.store.catalogue import open_catalogue

    catalogue = open_catalogue(upgraded_copy)
    try:
        migrate.downgrade(catalogue, "0009")
        assert migrate.current_revision(catalogue) == "0009"
        migrate.upgrade(catalogue)
    finally:
        catalogue.close()
    assert _json(upgraded_copy, "audit", "verify")["ok"] is True
    newest = _json(upgraded_copy, "audit", "log", "--limit", "2")["events"]
    assert [e["details"]["revision"] for e in newest] == ["0010", "0009"]
    assert [e["details"]["rows"] for e in newest] == [42, 42]


@pytest.mark.parametrize("backend", BACKENDS)
def test_a_served_row_changed_before_the_upgrade_stops_it_and_changes_nothing(backend, tmp_path):
    """Recording the new digest of a row that no longer holds what the chain recorded would
    vouch for the change: the upgrade names the row and stops."""
    for url in _at_rev0007(backend, tmp_path):
        from registry.store.catalogue import open_catalogue

        catalogue = open_catalogue(url)
        try:
            with catalogue.engine.begin() as connection:
                changed = connection.execute(text("SELECT min(id) FROM served_rows")).scalar()
                connection.execute(text(
                    "UPDATE served_rows SET content = :content WHERE id = :id"),
                    {"content": b"not what was served", "id": changed})
        finally:
            catalogue.close()
        before = _revision_and_head(url)
        error = _refused_init(url)
        assert error["kind"] == "changed-row"
        assert error["place"] == f"served_rows id={changed}"
        assert "nothing was changed" in error["message"]
        assert _revision_and_head(url) == before and before[0] == "0007"
