"""The files a dataset was made from: recorded, shown, covered by `audit verify`, and listed
on the dataset's web page."""

from __future__ import annotations

import hashlib
import shutil

from sqlalchemy import text

from registry.app import create_app
from registry.cli.demo import BRACKWATER

TELEMETRY = BRACKWATER / "datasets" / "brackwater-telemetry-extract"
SCHEMA = BRACKWATER / "schemas" / "brackwater-telemetry-extract.avsc"
DISTRICTS = ["HILLCREST", "NORTHGATE", "OLD_TOWN", "RIVERSIDE", "SALTMARSH"]


def expected_sources(folder=TELEMETRY) -> list[dict]:
    """Path, size and SHA-256 of each file, computed here with hashlib."""
    return [{"path": path.relative_to(folder).as_posix(), "size": path.stat().st_size,
             "sha256": hashlib.sha256(path.read_bytes()).hexdigest()}
            for path in sorted(folder.rglob("*.avro"))]


def add_telemetry(cli, *extra: str, folder=TELEMETRY, expect: int = 0):
    return cli.json("dataset", "add", "telemetry", str(folder), "--schema", str(SCHEMA),
                    *extra, expect=expect)


def test_a_folder_is_registered_with_its_files(cli):
    added = add_telemetry(cli)
    assert added["rows"] == 2400 and added["sources"] == expected_sources()
    assert [s["path"] for s in added["sources"]] == [f"district={d}/part-0.avro"
                                                      for d in DISTRICTS]
    shown = cli.json("dataset", "show", "telemetry")
    assert shown["sources"] == expected_sources()
    assert set(shown["profile"]["district"]["categories"]["counts"]) == set(DISTRICTS)
    text_output = cli("dataset", "show", "telemetry").stdout
    assert "files               5" in text_output and "district=SALTMARSH/part-0.avro" in text_output
    assert cli.json("audit", "verify")["ok"] is True


def test_the_folder_and_the_single_file_hold_the_same_records(cli):
    folder = add_telemetry(cli)
    single = cli.json("dataset", "fingerprint",
                      str(BRACKWATER / "datasets" / "brackwater-telemetry-extract.avro"))
    assert folder["content_digest"] == single["content_digest"]


def test_registering_the_same_folder_again_changes_nothing(cli):
    add_telemetry(cli)
    again = add_telemetry(cli, "--workers", "2")
    assert again["created"] is False and again["sources"] == expected_sources()
    assert len(cli.json("dataset", "list")["datasets"]) == 1


def test_the_same_records_from_other_files_are_another_registration(cli, tmp_path):
    add_telemetry(cli)
    moved = tmp_path / "telemetry"
    shutil.copytree(TELEMETRY, moved)
    (moved / "district=SALTMARSH" / "part-0.avro").rename(moved / "district=SALTMARSH" / "a.avro")
    result = cli("dataset", "add", "telemetry", str(moved), "--schema", str(SCHEMA),
                 "--source-uri", str(TELEMETRY.resolve()))
    assert result.exit_code == 2 and "already registered" in result.stderr
    assert "source files" in result.stderr


def test_audit_verify_finds_an_edited_source_file_row(cli, catalogue):
    add_telemetry(cli)
    with catalogue.engine.begin() as connection:
        connection.execute(text("UPDATE dataset_sources SET sha256 = :s WHERE position = 2"),
                           {"s": "0" * 64})
    report = cli.json("audit", "verify", expect=1)
    assert report["ok"] is False
    assert any(f["place"] == "dataset/telemetry" for f in report["findings"])


def test_a_single_file_dataset_records_its_one_file(cli):
    path = BRACKWATER / "datasets" / "brackwater-live-sample.avro"
    added = cli.json("dataset", "add", "live", str(path))
    assert added["sources"] == [{"path": "brackwater-live-sample.avro",
                                 "size": path.stat().st_size,
                                 "sha256": hashlib.sha256(path.read_bytes()).hexdigest()}]


def test_the_dataset_page_lists_the_files(cli, catalogue_url):
    add_telemetry(cli)
    app = create_app(catalogue_url, config={"TESTING": False})
    try:
        html = app.test_client().get("/datasets/telemetry").get_data(as_text=True)
    finally:
        app.extensions["lockkeeper"].close()
    assert '<h2 id="files">Files</h2>' in html and "Made from 5 files" in html
    for source in expected_sources():
        assert f"<code>{source['path']}</code>" in html and source["sha256"] in html
