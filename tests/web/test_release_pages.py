"""The version page lists each release statement with its key id and a download link."""

from __future__ import annotations

import re

from registry.app import create_app

from tests.catalogue.stage_helpers import register, set_up_model

ADMIN, APPROVER = "mara.kowalczyk", "tomas.lindqvist"


def test_the_version_page_lists_statements_with_key_id_and_download(cli, tmp_path):
    set_up_model(cli, tmp_path, {}, skippable=("shadow", "canary"))
    key_id = cli.json("key", "create", user=ADMIN)["id"]
    register(cli, tmp_path, "v1")
    cli.json("promote", "m", "1", "--to", "live", user=APPROVER)
    envelope = tmp_path / "live.release.json"
    assert cli("release", "show", "m", "--stage", "live", "-o", str(envelope)).exit_code == 0

    app = create_app(cli.url, config={"TESTING": False})
    try:
        client = app.test_client()
        page = client.get("/models/m/versions/1").get_data(as_text=True)
        assert "Release statements" in page and key_id[:16] in page
        links = re.findall(r'href="(/models/m/releases/[0-9a-f]{64}\.json)"', page)
        assert len(links) == 1
        download = client.get(links[0])
        assert download.status_code == 200 and download.data == envelope.read_bytes()
        assert "attachment" in download.headers["Content-Disposition"]
        assert client.get("/models/m/releases/" + "0" * 64 + ".json").status_code == 404
        assert client.get("/models/m/releases/nonsense.json").status_code == 404
        quiet = client.get("/models/m/versions/1").get_data(as_text=True)
        assert quiet == page
    finally:
        app.extensions["lockkeeper"].close()
