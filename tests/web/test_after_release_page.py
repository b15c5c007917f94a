"""The "after release" page and the states on the model and front pages, on the demo catalogue
(fourteen days of served traffic, outcomes a week late, the pressure alarm from day 10)."""

from __future__ import annotations

import re

import pytest

from registry.app import CONTENT_SECURITY_POLICY, create_app
from tests.conftest import run_cli


@pytest.fixture(scope="module")
def demo_client(tmp_path_factory):
    url = f"sqlite:///{tmp_path_factory.mktemp('demo') / 'demo.db'}"
    assert run_cli(["--db", url, "demo"]).exit_code == 0
    app = create_app(url, config={"TESTING": False})
    yield app.test_client()
    app.extensions["lockkeeper"].close()


def test_the_page_draws_drift_quality_and_agreement_with_tables_beneath(demo_client):
    response = demo_client.get("/models/main-burst-risk/after-release")
    assert response.status_code == 200
    assert response.headers["Content-Security-Policy"] == CONTENT_SECURITY_POLICY
    html = response.get_data(as_text=True)
    assert "<script" not in html and not re.search(r"\sstyle=", html)
    titles = re.findall(r'<title id="[^"]+">([^<]+)</title>', html)
    assert titles == ["Input drift of v1", "Live quality of v1", "Input drift of v2",
                      "Live quality of v2", "Agreement of v2 with v1"]
    assert html.count('role="img"') == 5 and html.count("<table") == 5
    # the pressure alarm from day 10 (2026-11-11), in the chart's caption and the table
    assert "at or above the alarm level: mean_pressure_kpa" in html
    row = re.search(r"<th scope=\"row\">2026-11-11</th>.*?</tr>", html, re.S).group(0)
    assert 'class="level-alarm"' in row
    assert "window start (UTC)" in html and "alarm (0.25 and above)" in html


def test_a_drifting_live_version_shows_on_the_model_and_front_pages(demo_client):
    model = demo_client.get("/models/main-burst-risk").get_data(as_text=True)
    assert re.search(r"Live v1 is <strong>drifting</strong>: input mean_pressure_kpa", model)
    front = demo_client.get("/").get_data(as_text=True)
    assert "live v1 drifting" in front
    calm = demo_client.get("/models/night-flow-leak").get_data(as_text=True)
    assert "drifting" not in calm and "after-release" not in calm


def test_a_model_that_never_served_has_an_empty_page(demo_client):
    html = demo_client.get("/models/night-flow-leak/after-release").get_data(as_text=True)
    assert "Nothing has been served yet" in html
