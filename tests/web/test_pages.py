"""The pages over a populated catalogue: content, escaping, headers, and bad input as 4xx."""

from __future__ import annotations

import re
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pytest

from registry.app import CONTENT_SECURITY_POLICY, create_app
from tests.conftest import run_cli
from tests.web.conftest import RECALL_REASON, populate

REPO = Path(__file__).resolve().parents[2]
TELEMETRY = "dataset/brackwater-telemetry-extract"
PAGES = [
    "/",
    "/models/main-burst-risk",
    "/models/night-flow-leak",
    "/models/markup-check",
    "/models/main-burst-risk/versions/1",
    "/models/main-burst-risk/versions/3",
    "/models/night-flow-leak/versions/1",
    "/models/main-burst-risk/compare?a=2&b=3",
    "/models/main-burst-risk/compare?a=1&b=4",
    "/models/main-burst-risk/versions/4",
    "/events",
    "/events?model=main-burst-risk&page=1",
    f"/lineage?node={TELEMETRY}",
    "/lineage?node=main-burst-risk@2&direction=up&depth=4",
    "/lineage?node=model/main-burst-risk/stage/live&direction=up",
    "/datasets/brackwater-telemetry-extract",
    "/datasets/brackwater-training-set?against=brackwater-evaluation-set",
    "/datasets/night-flow-live-sample",
    "/models/main-burst-risk/after-release",
]
CAUTION = "gates support but do not replace review"


@pytest.mark.parametrize("url", PAGES)
def test_every_page_renders_with_the_caution_and_a_strict_policy(client, url):
    response = client.get(url)
    assert response.status_code == 200, response.data[:500]
    html = response.get_data(as_text=True)
    assert CAUTION in " ".join(html.split())
    policy = response.headers["Content-Security-Policy"]
    assert policy == CONTENT_SECURITY_POLICY
    assert "default-src 'self'" in policy and "unsafe-inline" not in policy
    assert "<script" not in html  # no script at all, inline or not
    assert not re.search(r"\sstyle=", html)  # inline styles would need 'unsafe-inline'
    assert not re.search(r"(src|href)=\"(https?:)?//", html)  # nothing from elsewhere


def test_markup_in_a_description_is_shown_as_text(client):
    html = client.get("/models/markup-check").get_data(as_text=True)
    assert "&lt;script&gt;window.scriptRan = true;&lt;/script&gt;&lt;b&gt;bold?&lt;/b&gt; &amp; more" in html
    assert "<b>bold?</b>" not in html
    catalogue = client.get("/").get_data(as_text=True)
    assert "&lt;script&gt;" in catalogue and "<script>" not in catalogue


def test_lineage_nodes_are_links_that_recentre_and_mark_the_recall(client):
    html = client.get(f"/lineage?node={TELEMETRY}").get_data(as_text=True)
    svg = html[html.index("<svg class=\"lineage\""):html.index("</svg>", html.index("<svg class=\"lineage\""))]
    links = re.findall(r'<a href="([^"]+)" class="node ([^"]+)" data-node="([^"]+)"', svg)
    for href, classes, node in links:
        assert href.startswith("/lineage?node=") and "direction=" in href
    classes = {node: cls for _, cls, node in links}
    # telemetry, the two sets derived from it, versions 1 to 4, and, at the default depth,
    # the stages those versions hold or held
    assert {n for n in classes if n.startswith(("dataset/", "model/main-burst-risk/version/"))} \
        == {TELEMETRY, "dataset/brackwater-training-set", "dataset/brackwater-evaluation-set",
            *(f"model/main-burst-risk/version/{n}" for n in (1, 2, 3, 4))}
    assert "model/main-burst-risk/stage/live" in classes
    assert "recalled" in classes[TELEMETRY].split()
    assert "flagged" in classes["model/main-burst-risk/version/2"].split()
    assert "version · holds live · flagged" in svg  # the version box says what it holds
    assert "The same graph as text" in html


def test_version_page_shows_schemas_features_metrics_and_the_recall(client):
    html = client.get("/models/main-burst-risk/versions/2").get_data(as_text=True)
    for expected in ("repairs_5y", "brackwater.scores.BurstRisk", "PipeMaterial",
                     "roc_auc", "By district", "SALTMARSH", "kPa", "Recalled data upstream",
                     RECALL_REASON.split()[0], "trained on"):
        assert expected in html, expected
    assert "average_precision" in html and " records" in html


def test_units_times_and_events_read_as_plain_words(client):
    html = client.get("/models/main-burst-risk/versions/3").get_data(as_text=True)
    assert '<abbr title="UCUM code [psi]">psi</abbr>' in html
    assert '<abbr title="UCUM code a">years</abbr>' in html
    assert '<abbr title="UCUM code Cel">degrees Celsius</abbr>' in html
    assert not re.search(r">\d{4}-\d\d-\d\dT", html)  # times to the second, not raw ISO
    events = client.get("/events").get_data(as_text=True)
    assert "promoted main-burst-risk v2 to live" in events
    assert ">stage.promote<" not in events and "to_stage" not in events  # kinds in words


def test_model_page_shows_timeline_and_gate_reports_collapsed(client):
    html = client.get("/models/main-burst-risk").get_data(as_text=True)
    assert "Timeline" in html and '<svg class="timeline"' in html
    assert "feature-meaning" in html and "mean_pressure unit changed" in html
    assert '<details class="report refused" id="report-' in html
    assert "<dt>checked</dt>" in html and " open>" not in html


def test_dataset_page_draws_distributions_with_axes_and_named_categories(client):
    html = client.get("/datasets/brackwater-asset-register").get_data(as_text=True)
    assert html.count('<rect class="bar single"') >= 12
    assert "distribution of pipe_age_years" in html and "distribution of pipe_material" in html
    assert '<text class="tick end"' in html and ">SALTMARSH</text>" in html  # axis, category
    assert ">total</text>" not in html  # not the counts' bookkeeping


def test_drift_against_another_dataset_comes_from_the_dataset_comparison(client):
    html = client.get("/datasets/brackwater-training-set?against=brackwater-evaluation-set"
                      ).get_data(as_text=True)
    # Disjoint segments (SCENARIO.md): the training and evaluation sets share no record.
    assert "Jaccard similarity 0;" in html
    assert re.search(r"<code>pipe_age_years</code> <span class=\"badge level-\w+\">\w+</span> "
                     r"<span class=\"small\">PSI \d", html)
    assert '<path class="outline"' in html  # the current distribution over the reference
    assert "<code>segment_id</code> <span class=\"badge" not in html  # the key is left out


def test_comparison_lists_schema_feature_and_metric_differences(client):
    html = client.get("/models/main-burst-risk/compare?a=2&b=3").get_data(as_text=True)
    assert "mean_pressure_psi" in html and "[psi]" in html
    assert "renamed" in html  # registry.schema's diff: linked by an alias
    # registry.features' semantic diff: the unit change the feature gate catches (SCENARIO.md)
    assert re.search(r"unit changed</td><td>kPa</td><td><abbr title=\"UCUM code \[psi\]\">psi</abbr>"
                     r"</td><td><span class=\"badge failed\">breaking", html)
    assert "roc_auc" in html and re.search(r"[+-]\d", html)
    assert "Both input schemas as written, side by side" in html


@pytest.mark.parametrize("url, status", [
    ("/models/nope", 404),
    ("/models/NOPE", 404),
    ("/models/%3Cscript%3E", 404),
    ("/models/main-burst-risk/versions/99", 404),
    ("/models/main-burst-risk/versions/abc", 404),
    ("/models/main-burst-risk/versions/-1", 404),
    ("/models/nope/versions/1", 404),
    ("/datasets/nope", 404),
    ("/datasets/..", 404),
    ("/datasets/brackwater-training-set?against=nope", 404),
    ("/datasets/brackwater-training-set?against=Bad%20Name", 400),
    ("/datasets/brackwater-training-set?against=brackwater-training-set", 400),
    ("/datasets/brackwater-training-set?against=a&against=b", 400),
    ("/models/main-burst-risk/compare", 400),
    ("/models/main-burst-risk/compare?a=1", 400),
    ("/models/main-burst-risk/compare?a=x&b=2", 400),
    ("/models/main-burst-risk/compare?a=1&b=2.5", 400),
    ("/models/main-burst-risk/compare?a=0&b=2", 400),
    ("/models/main-burst-risk/compare?a=1&b=99999999999", 400),
    ("/models/main-burst-risk/compare?a=1&b=99", 404),
    ("/models/main-burst-risk/compare?a=2&b=2", 400),
    ("/events?page=0", 400),
    ("/events?page=x", 400),
    ("/events?person=%3Cscript%3E", 400),
    ("/events?action=nope", 400),
    ("/?models=sideways", 400),
    ("/?datasets=x", 400),
    ("/models/nope/compare?a=1&b=2", 404),
    ("/lineage", 400),
    ("/lineage?node=", 400),
    ("/lineage?node=%3Cscript%3E", 400),
    ("/lineage?node=a/b/c", 400),
    ("/lineage?node=dataset/nope", 404),
    ("/lineage?node=nope@1", 404),
    ("/lineage?node=main-burst-risk@99", 404),
    ("/lineage?node=model/main-burst-risk/stage/nowhere", 404),
    (f"/lineage?node={TELEMETRY}&depth=-1", 400),
    (f"/lineage?node={TELEMETRY}&depth=99", 400),
    (f"/lineage?node={TELEMETRY}&depth=1e3", 400),
    (f"/lineage?node={TELEMETRY}&direction=sideways", 400),
    (f"/lineage?node={TELEMETRY}&node=x", 400),
    ("/lineage?node=" + "a" * 400, 400),
    ("/lineage?node=%00", 400),
    ("/no/such/page", 404),
    ("/static/../registry/app.py", 404),
])
def test_bad_input_is_a_4xx_page_never_a_500(client, url, status):
    response = client.get(url)
    assert response.status_code == status, response.get_data(as_text=True)[:400]
    html = response.get_data(as_text=True)
    assert CAUTION in " ".join(html.split()) and "Traceback" not in html
    assert response.headers["Content-Security-Policy"] == CONTENT_SECURITY_POLICY


def test_writing_methods_are_refused(client):
    assert client.post("/").status_code == 405
    assert client.delete("/models/main-burst-risk").status_code == 405


def test_pages_render_on_every_configured_database(empty_catalogue_url):
    populate(empty_catalogue_url, recall=False)
    app = create_app(empty_catalogue_url)
    try:
        with app.test_client() as client:
            for url in PAGES:
                assert client.get(url).status_code == 200, url
    finally:
        app.extensions["lockkeeper"].close()


def test_an_uninitialised_catalogue_is_a_503_page(tmp_path):
    app = create_app(f"sqlite:///{tmp_path / 'absent.db'}")
    response = app.test_client().get("/")
    assert response.status_code == 503 and "lockkeeper init" in response.get_data(as_text=True)


def test_serve_runs_under_gunicorn_on_loopback(populated_url, tmp_path):
    import socket

    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        port = probe.getsockname()[1]
    process = subprocess.Popen(
        [sys.executable, "-m", "registry", "--db", populated_url, "serve", "--port", str(port),
         "--workers", "1"], cwd=tmp_path, env={"PYTHONPATH": str(REPO), "PATH": "/usr/bin:/bin"},
        stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    try:
        deadline, body = time.monotonic() + 20, None
        while time.monotonic() < deadline and body is None:
            try:
                with urllib.request.urlopen(f"http://127.0.0.1:{port}/", timeout=2) as response:
                    body = response.read().decode()
                    policy = response.headers["Content-Security-Policy"]
            except OSError:
                time.sleep(0.2)
        assert body is not None, process.stderr.read1().decode() if process.poll() else "no answer"
        assert "main-burst-risk" in body and policy == CONTENT_SECURITY_POLICY
    finally:
        process.terminate()
        process.wait(timeout=10)


@pytest.mark.parametrize("arguments", [["serve", "--port", "0"], ["serve", "--port", "x"],
                                       ["serve", "--workers", "0"]])
def test_bad_serve_options_exit_2(populated_url, arguments):
    assert run_cli(["--db", populated_url, *arguments]).exit_code == 2


def test_serve_refuses_an_uninitialised_catalogue(tmp_path):
    result = run_cli(["--db", f"sqlite:///{tmp_path / 'absent.db'}", "serve"])
    assert result.exit_code == 2 and "lockkeeper init" in result.stderr


ODD_FINGERPRINTS = [
    b"not json", b"[]", b'{"profile": "x"}', b'{"profile": {"c": "x"}}',
    b'{"profile": {"c": {"histogram": {"edges": [1], "counts": [1, 2]}, "categories": 3}}}',
    b'{"profile": {"c": {"categories": {"counts": {"a": 2, "b": "x"}}, "mean": "NaN"}}}',
]


def test_stored_json_of_any_shape_renders_without_error(catalogue, catalogue_url, tmp_path):
    """Rows written by other builds may hold less or other JSON; the pages show what is there."""
    from datetime import UTC, datetime

    from registry.store import tables as t
    from registry.store.unit_of_work import UnitOfWork
    from tests.lineage.scenario import MARA
    from registry.service import models
    from registry.service.roles import grant_role
    from tests.catalogue.helpers import write_version_files

    grant_role(catalogue, MARA.name, "admin", MARA)
    grant_role(catalogue, "ines.okafor", "publisher", MARA)  # run_cli acts as ines.okafor
    models.create_model(catalogue, "odd", "", MARA)
    now = datetime(2026, 3, 2, tzinfo=UTC)
    with UnitOfWork(catalogue) as uow:
        for index, content in enumerate(ODD_FINGERPRINTS):
            digest = uow.blobs.put(content)
            uow.session.add(t.Dataset(
                name=f"odd-{index}", role="training", source_uri="", rows=1,
                content_digest="0" * 64, schema_fingerprint="0" * 64,
                schema_json="not json" if index % 2 else '{"type": "record", "fields": 3}',
                fingerprint_digest=digest, registration_digest="0" * 64, created_at=now,
                created_by="x"))
        uow.audit.append("x", "test.odd-rows", "dataset/odd", {})  # rows need their event
        uow.commit()
    document, manifest = write_version_files(
        tmp_path, manifest_extra='trained_on = ["odd-0"]\nevaluated_on = ["odd-1"]\n')
    run_cli(["--db", catalogue_url, "register", "odd", str(document), "--manifest", str(manifest)])
    with UnitOfWork(catalogue) as uow:
        version = uow.session.query(t.Version).one()
        dataset = uow.session.query(t.Dataset).filter_by(name="odd-1").one()
        version_id, dataset_id = version.id, dataset.id
        uow.session.add(t.Evaluation(
            version_id=version_id, dataset_id=dataset_id, dataset_content_digest="0" * 64,
            task="binary", metrics_json='{"metrics": {"roc_auc": "high"}, "slices": {"d": 3}}',
            predictions_digest=uow.blobs.put(b"p"), created_at=now, created_by="x"))
        uow.audit.append("x", "test.odd-rows", "model/odd", {})
        uow.commit()
    app = create_app(catalogue_url)
    try:
        with app.test_client() as client:
            urls = ["/", "/models/odd", "/models/odd/versions/1",
                    "/lineage?node=odd@1"] + [
                f"/datasets/odd-{i}" for i in range(len(ODD_FINGERPRINTS))] + [
                "/datasets/odd-2?against=odd-3"]
            for url in urls:
                response = client.get(url)
                assert response.status_code == 200, (url, response.get_data(as_text=True)[:300])
    finally:
        app.extensions["lockkeeper"].close()


def test_a_neighbourhood_too_large_to_draw_is_listed_instead(tmp_path):
    from datetime import UTC, datetime

    from sqlalchemy import insert

    from registry.store import tables as t
    from registry.store.catalogue import open_catalogue
    from web.views import MAX_DRAWN_NODES

    url = f"sqlite:///{tmp_path / 'wide.db'}"
    assert run_cli(["--db", url, "init"]).exit_code == 0
    catalogue = open_catalogue(url)
    now = datetime(2026, 3, 2, tzinfo=UTC)
    count = MAX_DRAWN_NODES + 10
    with catalogue.engine.begin() as connection:
        connection.execute(insert(t.Blob), [{"digest": "0" * 64, "size": 0}])
        connection.execute(insert(t.Dataset), [
            {"id": i, "name": f"part-{i}", "role": "source", "source_uri": "", "rows": 1,
             "content_digest": "0" * 64, "schema_fingerprint": "0" * 64, "schema_json": "{}",
             "fingerprint_digest": "0" * 64, "registration_digest": "0" * 64,
             "created_at": now, "created_by": "x"} for i in range(1, count + 1)])
        connection.execute(insert(t.DatasetParent), [
            {"child_id": i, "parent_id": 1} for i in range(2, count + 1)])
    catalogue.close()
    app = create_app(url)
    try:
        html = app.test_client().get("/lineage?node=part-1&depth=1").get_data(as_text=True)
    finally:
        app.extensions["lockkeeper"].close()
    assert '<svg class="lineage"' not in html and "more than a drawing can show" in html
    assert html.count('href="/lineage?node=dataset/part-') == count


from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

_ANY_TEXT = st.text(st.characters(blacklist_categories=("Cs",)), max_size=40)


@settings(max_examples=60, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(path=st.sampled_from(["/lineage", "/models/main-burst-risk/compare",
                             "/datasets/brackwater-training-set", "/models/main-burst-risk",
                             "/", "/events"]),
       names=st.lists(st.sampled_from(["node", "depth", "direction", "a", "b", "against", "x",
                                       "name", "models", "datasets", "model", "dataset",
                                       "person", "action", "page"]), max_size=4),
       values=st.lists(_ANY_TEXT, min_size=4, max_size=4))
def test_no_query_string_makes_a_page_fail(client, path, names, values):
    from urllib.parse import urlencode

    query = urlencode(list(zip(names, values)))
    response = client.get(f"{path}?{query}")
    assert response.status_code in (200, 400, 404), (path, query, response.status_code)


@settings(max_examples=60, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(template=st.sampled_from(["/models/{}", "/models/{}/versions/1",
                                 "/models/{}/compare?a=1&b=2", "/datasets/{}",
                                 "/models/main-burst-risk/versions/{}", "/lineage?node={}"]),
       name=_ANY_TEXT)
def test_no_name_in_a_path_makes_a_page_fail(client, template, name):
    from urllib.parse import quote

    response = client.get(template.format(quote(name, safe="")))
    assert response.status_code in (200, 400, 404, 308), (template, name, response.status_code)
