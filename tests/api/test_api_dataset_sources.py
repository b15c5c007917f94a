"""The remote client fingerprints a folder on its side and sends the fingerprint with the
list of files; the API checks that list."""

from __future__ import annotations

from registry.datasets import fingerprint_dataset
from registry.cli.demo import BRACKWATER

from tests.api.api_helpers import problem
from tests.api.test_remote_cli import remote  # noqa: F401 - the remote server fixture
from tests.catalogue.test_dataset_sources import SCHEMA, TELEMETRY, expected_sources


def test_the_remote_client_fingerprints_the_folder_and_sends_its_files(remote):  # noqa: F811
    added = remote("publisher", "dataset", "add", "telemetry", str(TELEMETRY),
                   "--schema", str(SCHEMA), "--workers", "2")
    assert added["rows"] == 2400 and added["sources"] == expected_sources()
    assert remote("reader", "dataset", "show", "telemetry")["sources"] == expected_sources()


def test_a_bad_list_of_files_is_refused_and_nothing_is_registered(api):
    fingerprint = fingerprint_dataset(
        [str(BRACKWATER / "datasets" / "brackwater-live-sample.avro")]).fingerprint.to_dict()
    for sources in ([{"path": "a.avro", "size": -1, "sha256": "0" * 64}],
                    [{"path": "a.avro", "size": 1, "sha256": "not hex"}],
                    [{"path": "a.avro", "size": 1, "sha256": "0" * 64, "extra": 1}],
                    [{"path": "a.avro", "size": 1, "sha256": "0" * 64}] * 2):
        response = api.post("/datasets", {"name": "live", "fingerprint": fingerprint,
                                          "sources": sources}, role="publisher")
        assert response.status_code == 400, (sources, response.data)
        assert problem(response)["status"] == 400
    assert api.get("/datasets").json["datasets"] == []


def test_an_uploaded_file_is_recorded_under_the_name_it_was_sent_with(api):
    import hashlib
    import io

    path = BRACKWATER / "datasets" / "brackwater-live-sample.avro"
    response = api.post("/datasets", role="publisher", content_type="multipart/form-data",
                        data={"name": "live", "file": (io.BytesIO(path.read_bytes()),
                                                       "live-sample.avro")})
    assert response.status_code == 201, response.data
    assert response.json["sources"] == [{"path": "live-sample.avro",
                                         "size": path.stat().st_size,
                                         "sha256": hashlib.sha256(path.read_bytes()).hexdigest()}]
