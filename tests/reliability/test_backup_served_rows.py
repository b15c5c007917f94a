"""Served batches travel through `export` and `import`: the bytes of their compact rows go as
base64 text (RFC 4648, section 4) in their table file, and the windows' 64-bit starts as JSON
integers; after the import the serving report is the same document and the chain verifies."""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import pytest

from tests.after_release.served_files import shadow_day
from tests.after_release.test_serving_record import live_and_shadow  # noqa: F401 - a fixture
from tests.conftest import Cli, run_cli
from tests.reliability.test_backup import _other, fresh_catalogue_url, refused_import

pytestmark = pytest.mark.reliability


def _export_with_served_rows(cli: Cli, tmp_path: Path, moved_at) -> Path:
    path, _ = shadow_day(tmp_path / "day.parquet", moved_at, 300)
    cli.json("serving", "record", "m", str(path))
    folder = tmp_path / "export"
    cli.json("export", str(folder))
    return folder


def test_served_rows_survive_export_and_import_across_databases(cli, tmp_path, live_and_shadow):  # noqa: F811
    folder = _export_with_served_rows(cli, tmp_path, live_and_shadow)
    line = json.loads((folder / "tables" / "served_rows.jsonl").read_text().splitlines()[0])
    assert isinstance(line["content"], str) and isinstance(line["window_start"], int)
    report = cli.json("serving", "report", "m")
    with fresh_catalogue_url(_other(cli.url), tmp_path) as there:
        imported = run_cli(["--db", there, "import", str(folder)])
        assert imported.exit_code == 0, imported.output
        assert Cli(there).json("audit", "verify")["ok"] is True
        assert Cli(there).json("serving", "report", "m") == report


def test_served_rows_that_are_not_base64_are_refused_and_change_nothing(
        cli, tmp_path, live_and_shadow):  # noqa: F811
    folder = _export_with_served_rows(cli, tmp_path, live_and_shadow)
    table = folder / "tables" / "served_rows.jsonl"
    lines = table.read_text().splitlines()
    first = json.loads(lines[0])
    first["content"] = "not base64!"
    table.write_text("\n".join([json.dumps(first, sort_keys=True, separators=(",", ":")),
                                *lines[1:]]) + "\n")
    # The manifest is made to agree, so it is the value itself that is refused.
    manifest_path = folder / "manifest.json"
    manifest = json.loads(manifest_path.read_text())
    manifest["files"]["tables/served_rows.jsonl"].update(
        sha256=hashlib.sha256(table.read_bytes()).hexdigest(), bytes=table.stat().st_size)
    manifest.pop("seal", None)
    manifest_path.write_text(json.dumps(manifest))
    line = refused_import(folder, tmp_path)
    assert "served_rows" in line and "not base64 text" in line
