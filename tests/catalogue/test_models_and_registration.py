"""Model lines and registration: numbering, idempotency, immutability, bad input."""

from __future__ import annotations

from tests.catalogue.helpers import write_version_files


def test_model_create_list_show_round_trip(cli):
    created = cli.json("model", "create", "main-burst-risk", "--description", "bursts in 90 days")
    assert created["name"] == "main-burst-risk"
    listed = cli.json("model", "list")
    assert [m["name"] for m in listed["models"]] == ["main-burst-risk"]
    shown = cli.json("model", "show", "main-burst-risk")
    assert shown["model"]["description"] == "bursts in 90 days"
    assert shown["versions"] == []


def test_versions_are_numbered_one_two_three(cli, tmp_path):
    cli.json("model", "create", "m")
    numbers = []
    for n in range(3):
        document, manifest = write_version_files(tmp_path / f"v{n}", document=f"doc {n}".encode())
        numbers.append(cli.json("register", "m", str(document), "--manifest", str(manifest))["version"])
    assert numbers == [1, 2, 3]


def test_identical_registration_is_idempotent(cli, tmp_path):
    cli.json("model", "create", "m")
    document, manifest = write_version_files(tmp_path)
    first = cli.json("register", "m", str(document), "--manifest", str(manifest))
    again = cli.json("register", "m", str(document), "--manifest", str(manifest))
    assert first["created"] is True and again["created"] is False
    assert again["version"] == first["version"] == 1
    assert len(cli.json("model", "show", "m")["versions"]) == 1


def test_same_document_with_new_metadata_is_a_new_version(cli, tmp_path):
    cli.json("model", "create", "m")
    document, manifest = write_version_files(tmp_path / "a", description="first")
    cli.json("register", "m", str(document), "--manifest", str(manifest))
    document, manifest = write_version_files(tmp_path / "b", description="second")
    assert cli.json("register", "m", str(document), "--manifest", str(manifest))["version"] == 2


def test_status_lists_every_stage_and_a_new_version_starts_as_candidate(cli, tmp_path):
    cli.json("model", "create", "m")
    assert cli.json("status", "m")["stages"] == {
        "candidate": [], "shadow": [], "canary": [], "live": [], "retired": []}
    document, manifest = write_version_files(tmp_path)
    cli.json("register", "m", str(document), "--manifest", str(manifest))
    assert cli.json("status", "m")["stages"]["candidate"] == [1]


def _assert_one_line_error(result, code=2):
    assert result.exit_code == code, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert "Traceback" not in result.output
    return lines[0]


def test_duplicate_model_name_is_refused(cli):
    cli.json("model", "create", "m")
    line = _assert_one_line_error(cli("model", "create", "m"))
    assert "already exists" in line


def test_unknown_model_is_a_clear_error(cli, tmp_path):
    document, manifest = write_version_files(tmp_path)
    assert "unknown model" in _assert_one_line_error(
        cli("register", "nope", str(document), "--manifest", str(manifest)))
    assert "unknown model" in _assert_one_line_error(cli("model", "show", "nope"))


def test_missing_document_or_manifest_writes_nothing(cli, tmp_path):
    cli.json("model", "create", "m")
    document, manifest = write_version_files(tmp_path)
    assert "no such file" in _assert_one_line_error(
        cli("register", "m", str(tmp_path / "absent.bin"), "--manifest", str(manifest)))
    assert "no such file" in _assert_one_line_error(
        cli("register", "m", str(document), "--manifest", str(tmp_path / "absent.toml")))
    assert cli.json("model", "show", "m")["versions"] == []


def test_manifest_that_is_not_toml_is_refused(cli, tmp_path):
    cli.json("model", "create", "m")
    document, manifest = write_version_files(tmp_path)
    manifest.write_text("this is = = not toml")
    assert "not valid TOML" in _assert_one_line_error(
        cli("register", "m", str(document), "--manifest", str(manifest)))
    assert cli.json("model", "show", "m")["versions"] == []


def test_manifest_without_input_schema_is_refused(cli, tmp_path):
    cli.json("model", "create", "m")
    document, manifest = write_version_files(tmp_path)
    manifest.write_text('description = "no schema"\n')
    assert "input_schema" in _assert_one_line_error(
        cli("register", "m", str(document), "--manifest", str(manifest)))
    assert cli.json("model", "show", "m")["versions"] == []


def test_invalid_model_name_is_refused(cli):
    assert "invalid model name" in _assert_one_line_error(cli("model", "create", "../etc"))
