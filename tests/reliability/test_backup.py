"""`export DIR` and `import DIR`: the whole catalogue out of one snapshot and back in, across
SQLite and PostgreSQL, with every digest equal; damaged or misplaced input changes nothing."""

from __future__ import annotations

import json
import subprocess
import sys
import time
import uuid
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from urllib.parse import quote

import pytest

from registry.service.backup import export_catalogue
from registry.store import migrate
from tests.conftest import POSTGRES_URL, Cli, run_cli
from tests.reliability.crash import evaluation, promotion, rollback, set_up
from tests.reliability.harness import ROOT, assert_catalogue_sound, process_env, read_state

pytestmark = pytest.mark.reliability


@contextmanager
def fresh_catalogue_url(backend: str, folder: Path) -> Iterator[str]:
    """An uninitialised catalogue: a new SQLite file, or a new PostgreSQL schema."""
    if backend == "sqlite":
        yield f"sqlite:///{folder / f'{uuid.uuid4().hex[:8]}.db'}"
        return
    import psycopg
    from sqlalchemy.engine import make_url

    schema = f"t_{uuid.uuid4().hex[:16]}"
    conninfo = make_url(POSTGRES_URL).set(drivername="postgresql").render_as_string(
        hide_password=False)
    with psycopg.connect(conninfo, autocommit=True) as connection:
        connection.execute(f'CREATE SCHEMA "{schema}"')
    try:
        yield f"{POSTGRES_URL}?options={quote(f'-csearch_path={schema}')}"
    finally:
        with psycopg.connect(conninfo, autocommit=True) as connection:
            connection.execute(f'DROP SCHEMA "{schema}" CASCADE')


def _fill(cli: Cli, tmp_path: Path) -> None:
    """Versions, datasets, an evaluation, promotions and a rollback: every table has rows."""
    set_up(cli, tmp_path)
    cli.json(*evaluation(cli, tmp_path, 0))
    cli.json(*promotion(cli, tmp_path, 0), user="tomas.lindqvist")
    cli.json(*rollback(cli, tmp_path, 1), user="tomas.lindqvist")
    cli.json("approve", "m", "1", "--for", "live", user="priya.raman")


def _file_digests(folder: Path) -> dict:
    return json.loads((folder / "manifest.json").read_text())["files"]


def _other(url: str) -> str:
    if url.startswith("sqlite") and POSTGRES_URL:
        return "postgresql"
    return "sqlite"


def test_export_and_import_across_databases_keeps_every_digest(cli, tmp_path):
    _fill(cli, tmp_path)
    first = tmp_path / "first"
    cli.json("export", str(first))
    with fresh_catalogue_url(_other(cli.url), tmp_path) as there:
        assert run_cli(["--db", there, "import", str(first)]).exit_code == 0
        assert Cli(there).json("audit", "verify")["ok"] is True
        second = tmp_path / "second"
        Cli(there).json("export", str(second))
        # Ids were kept and sequences reset: a new write after the import works.
        Cli(there).json("model", "create", "after-import", user="mara.kowalczyk")
        with fresh_catalogue_url(cli.url.split(":")[0].split("+")[0], tmp_path) as back:
            assert run_cli(["--db", back, "import", str(second)]).exit_code == 0
            third = tmp_path / "third"
            Cli(back).json("export", str(third))
            assert Cli(back).json("audit", "verify")["ok"] is True
    assert _file_digests(first) == _file_digests(second) == _file_digests(third)
    assert sorted(p.name for p in (first / "blobs").iterdir()) == \
        sorted(p.name for p in (third / "blobs").iterdir())
    manifest = json.loads((first / "manifest.json").read_text())
    assert manifest["audit_head"]["sequence"] == manifest["files"][
        "tables/audit_events.jsonl"]["rows"]


def _exported_is_one_snapshot(folder: Path) -> None:
    manifest = json.loads((folder / "manifest.json").read_text())
    events = [json.loads(line) for line in
              (folder / "tables" / "audit_events.jsonl").read_text().splitlines()]
    versions = (folder / "tables" / "versions.jsonl").read_text().splitlines()
    head = manifest["audit_head"]
    assert head["sequence"] == len(events) and (not events or events[-1]["hash"] == head["hash"])
    assert len(versions) == sum(e["action"] == "version.register" for e in events)


def test_an_export_taken_while_writes_continue_is_one_snapshot(cli, tmp_path, catalogue):
    _fill(cli, tmp_path)
    for tag in ("x", "y"):
        from tests.catalogue.stage_helpers import register
        register(cli, tmp_path, tag)
    work = tmp_path / "writer"
    work.mkdir()
    writer = subprocess.Popen(
        [sys.executable, "-m", "tests.reliability.race_worker", cli.url, "7", "8", str(work)],
        env=process_env(), cwd=ROOT, stderr=subprocess.PIPE, text=True)
    while not list(work.glob("ready-*")):
        assert writer.poll() is None, writer.stderr.read()
        time.sleep(0.05)
    (work / "go").touch()
    exports = []
    while writer.poll() is None and len(exports) < 40:
        folder = tmp_path / f"export-{len(exports)}"
        export_catalogue(catalogue, folder, migrate.current_revision(catalogue))
        exports.append(folder)
        time.sleep(0.1)
    writer.communicate(timeout=600)
    assert writer.returncode == 0
    heads = {json.loads((f / "manifest.json").read_text())["audit_head"]["sequence"]
             for f in exports}
    assert len(heads) > 1, "the writer made no change while the exports ran"
    for folder in exports:
        _exported_is_one_snapshot(folder)
    with fresh_catalogue_url("sqlite", tmp_path) as copy:
        assert run_cli(["--db", copy, "import", str(exports[-1])]).exit_code == 0
        assert_catalogue_sound(copy)


def test_export_into_a_folder_that_is_not_empty_is_refused(cli, tmp_path):
    (tmp_path / "used").mkdir()
    (tmp_path / "used" / "notes.txt").write_text("keep")
    result = cli("export", str(tmp_path / "used"))
    assert result.exit_code == 2 and "not an empty folder" in result.stderr


def _damaged_export(cli: Cli, tmp_path: Path, damage) -> Path:
    _fill(cli, tmp_path)
    folder = tmp_path / "export"
    cli.json("export", str(folder))
    damage(folder)
    return folder


def _flip_a_blob_byte(folder: Path) -> None:
    blob = max((folder / "blobs").iterdir(), key=lambda p: p.stat().st_size)
    content = bytearray(blob.read_bytes())
    content[len(content) // 2] ^= 0x01
    blob.write_bytes(bytes(content))


def _edit_a_row(folder: Path) -> None:
    path = folder / "tables" / "versions.jsonl"
    path.write_text(path.read_text().replace('"description":"evaluated-0"',
                                             '"description":"rewritten"', 1))


def _remove_the_manifest(folder: Path) -> None:
    (folder / "manifest.json").unlink()


@pytest.mark.parametrize("damage", [_flip_a_blob_byte, _edit_a_row, _remove_the_manifest])
def test_import_of_a_damaged_export_is_refused_and_changes_nothing(cli, tmp_path, damage):
    refused_import(_damaged_export(cli, tmp_path, damage), tmp_path)


def refused_import(folder: Path, tmp_path: Path) -> str:
    """Import `folder` into a new initialised catalogue, see it refused in one line with exit 2
    and nothing changed, and give back that line."""
    with fresh_catalogue_url("sqlite", tmp_path) as target:
        Cli(target).json("init")
        before = read_state(target)
        result = run_cli(["--db", target, "import", str(folder)])
        assert result.exit_code == 2, result.output
        assert len(result.stderr.strip().splitlines()) == 1
        assert read_state(target) == before
    return result.stderr.strip()


def test_import_from_a_missing_folder_is_refused(cli, tmp_path):
    result = cli("import", str(tmp_path / "nowhere"))
    assert result.exit_code == 2 and "no such export folder" in result.stderr


def test_import_into_a_catalogue_that_is_not_empty_is_refused(cli, tmp_path):
    _fill(cli, tmp_path)
    folder = tmp_path / "export"
    cli.json("export", str(folder))
    before = read_state(cli.url)
    result = cli("import", str(folder))
    assert result.exit_code == 2 and "not empty" in result.stderr
    assert read_state(cli.url) == before
