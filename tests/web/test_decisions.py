"""Every decision and its reasons where people look, on the demo catalogue (`lockkeeper demo`):
waivers with their approver and reason, refusals with their gate and place, recalls reaching
what is live, and a timeline bar for every holding the command line's history reports."""

from __future__ import annotations

import html as markup
import json
import re

import pytest

from registry.cli.demo import SALTMARSH_WAIVER
from registry.app import create_app
from tests.conftest import run_cli
from tests.web.conftest import build_demo

EXTRACT = "brackwater-telemetry-extract"


def text_of(page: str) -> str:
    """The words of a page as a reader sees them: tags dropped, entities read, spaces joined."""
    words = " ".join(markup.unescape(re.sub(r"<[^>]+>", " ", page)).split())
    return re.sub(r" ([:;,.)])", r"\1", words)


def test_the_waiver_and_its_reason_show_on_the_model_and_version_pages(demo_client):
    for url in ("/models/main-burst-risk", "/models/main-burst-risk/versions/2"):
        words = text_of(demo_client.get(url).get_data(as_text=True))
        assert "slice-guard at slice district=SALTMARSH" in words, url
        assert f"tomas.lindqvist: “{SALTMARSH_WAIVER}”" in words, url


def test_approvals_show_with_their_approver_and_note(demo_client):
    words = text_of(demo_client.get("/models/main-burst-risk/versions/2").get_data(as_text=True))
    assert "approved for live by priya.raman: “accepted the Saltmarsh waiver”" in words


def test_version_4_says_it_was_refused_and_where(demo_client):
    words = text_of(demo_client.get("/models/main-burst-risk/versions/4").get_data(as_text=True))
    status = words[words.index("Holds candidate"):]
    assert status.startswith("Holds candidate; refused for shadow by reads-live-feed at "
                             "/fields/diameter_mm/type and feature-meaning at diameter_mm")
    # Linked for evaluation but never evaluated: said once, plainly, not contradicted.
    assert "but no evaluation on it has been recorded" in words
    assert "Not evaluated yet" not in words


def test_the_front_page_flags_live_v1_as_downstream_of_the_recalled_extract(demo_client):
    page = demo_client.get("/").get_data(as_text=True)
    row = page[page.index('href="/models/main-burst-risk"'):]
    row = row[:row.index("</tr>")]
    assert re.search(r'stage-live">live</span> <a href="/models/main-burst-risk/versions/1">v1</a>'
                     r'\s*<span class="badge flagged">downstream of recalled ' + EXTRACT, row)
    night = page[page.index('href="/models/night-flow-leak"'):]
    assert "downstream of recalled" not in night[:night.index("</tr>")]


def test_the_recalled_dataset_lists_every_downstream_version_with_its_stage(demo_client):
    words = text_of(demo_client.get(f"/datasets/{EXTRACT}").get_data(as_text=True))
    listed = words[words.index("Versions downstream of this recall"):words.index("Profile")]
    for number, stage in ((1, "live"), (2, "candidate"), (3, "candidate"), (4, "candidate")):
        assert f"main-burst-risk v{number} {stage}" in listed


def test_lineage_from_the_extract_reaches_the_stages_at_its_default_depth(demo_client):
    page = demo_client.get(f"/lineage?node=dataset/{EXTRACT}").get_data(as_text=True)
    assert 'data-node="model/main-burst-risk/stage/live"' in page
    assert "brackwater-telemetry-extract</text>" in page  # the full label, not cut


def test_the_timeline_has_a_bar_per_holding(demo_url, demo_client):
    history = json.loads(run_cli(["--db", demo_url, "history", "main-burst-risk",
                                  "--json"]).output)
    holdings = [e for e in history["events"] if e["event"] in ("entered", "restored")]
    page = demo_client.get("/models/main-burst-risk").get_data(as_text=True)
    bars = re.findall(r'<g class="holder[^"]*"><title>(v\d+) in (\w+):', page)
    assert sorted(bars) == sorted((f"v{e['version']}", e["stage"]) for e in holdings)
    marks = re.findall(r'<a class="mark (\w+)" href="[^"#]*#report-(\d+)"', page)
    assert len(marks) == len(history["attempts"])
    assert {kind for kind, _ in marks} == {"promotion", "refusal", "rollback"}
    for _, report in marks:  # every mark opens a report on the page
        assert f'id="report-{report}"' in page


def test_comparing_a_version_with_itself_is_refused(demo_client):
    response = demo_client.get("/models/main-burst-risk/compare?a=2&b=2")
    assert response.status_code == 400
    assert "not with itself" in response.get_data(as_text=True)


def test_the_compare_page_shows_the_gates_intervals(demo_client):
    words = text_of(demo_client.get("/models/main-burst-risk/compare?a=1&b=2"
                                    ).get_data(as_text=True))
    assert re.search(r"no-regression v2 against v1, roc_auc \+0\.04839 \+0\.02472 to \+0\.07206",
                     words)


def test_events_page_through_the_whole_audit_log_and_filter(demo_url, demo_client):
    words = text_of(demo_client.get("/events?person=priya.raman").get_data(as_text=True))
    assert "3 events." in words and "approved main-burst-risk v2 for live" in words
    recalls = text_of(demo_client.get(f"/events?dataset={EXTRACT}").get_data(as_text=True))
    assert "recalled the dataset " + EXTRACT in recalls
    assert "added the dataset " + EXTRACT in recalls
    first = text_of(demo_client.get("/events?model=main-burst-risk").get_data(as_text=True))
    assert "registered night-flow-leak" not in first
    assert "tried to promote main-burst-risk v4 to shadow: refused by feature-meaning, " \
           "reads-live-feed" in first  # the audit summary keeps gates in name order


def test_the_catalogue_filters_by_name_and_state(demo_client):
    words = text_of(demo_client.get("/?name=night&datasets=in-use").get_data(as_text=True))
    words = words[:words.index("Recent events")]
    assert "night-flow-leak" in words and "main-burst-risk" not in words
    assert "night-flow-training-set" in words and EXTRACT not in words
    flagged = text_of(demo_client.get("/?models=flagged&datasets=recalled").get_data(as_text=True))
    assert "main-burst-risk" in flagged and "Litres per hour" not in flagged
    assert "Datasets 1 of 8" in flagged


@pytest.mark.timeout(300)
def test_the_decisions_show_on_every_configured_database(empty_catalogue_url):
    build_demo(empty_catalogue_url)
    app = create_app(empty_catalogue_url)
    try:
        client = app.test_client()
        version = text_of(client.get("/models/main-burst-risk/versions/4").get_data(as_text=True))
        assert "refused for shadow by reads-live-feed at /fields/diameter_mm/type" in version
        model = text_of(client.get("/models/main-burst-risk").get_data(as_text=True))
        assert SALTMARSH_WAIVER in model
        assert "downstream of recalled " + EXTRACT in text_of(
            client.get("/").get_data(as_text=True))
        assert client.get("/events?page=2").status_code == 200
    finally:
        app.extensions["lockkeeper"].close()


from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

MODELS = st.sampled_from(["main-burst-risk", "night-flow-leak", "no-such-model"])
DATASETS = st.sampled_from([EXTRACT, "brackwater-training-set", "night-flow-live-sample",
                            "no-such-set"])
NUMBERS = st.integers(min_value=0, max_value=6)
PATHS = st.one_of(
    st.just("/"), st.just("/events"),
    MODELS.map(lambda m: f"/models/{m}"),
    st.tuples(MODELS, NUMBERS).map(lambda p: f"/models/{p[0]}/versions/{p[1]}"),
    MODELS.map(lambda m: f"/models/{m}/compare"),
    DATASETS.map(lambda d: f"/datasets/{d}"),
    st.just("/lineage"))
PARAMETERS = st.sampled_from(["a", "b", "report", "page", "name", "models", "datasets", "model",
                              "dataset", "person", "action", "against", "node", "depth",
                              "direction"])
VALUES = st.one_of(NUMBERS.map(str), MODELS, DATASETS,
                   st.sampled_from(["flagged", "recalled", "in-use", "held", "stage.promote",
                                    "tomas.lindqvist", "both", "up", "down",
                                    "model/main-burst-risk/stage/live", "main-burst-risk@2"]),
                   st.text(max_size=12))


@settings(max_examples=120, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(path=PATHS, query=st.lists(st.tuples(PARAMETERS, VALUES), max_size=4))
def test_no_page_of_the_demo_answers_with_a_server_error(demo_client, path, query):
    from urllib.parse import urlencode

    response = demo_client.get(f"{path}?{urlencode(query)}")
    assert response.status_code < 500, (path, query, response.get_data(as_text=True)[:300])
