"""`lockkeeper serve` runs one app: the lineage browser and the API side by side."""

from __future__ import annotations

from registry.app import create_app


def test_the_served_app_answers_pages_and_api(catalogue_url):
    client = create_app(catalogue_url).test_client()
    assert client.get("/").status_code == 200
    assert client.get("/api/v1/ping").status_code == 200
    missing = client.get("/api/v1/no-such-thing")
    assert missing.status_code == 404
    assert missing.headers["Content-Type"].startswith("application/problem+json")
    assert client.get("/no-such-page").headers["Content-Type"].startswith("text/html")
