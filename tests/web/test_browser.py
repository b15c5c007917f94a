"""The pages in a real browser: headless Chromium from Debian's packages, driven by Playwright.

Playwright's own browser download is never used; the tests point it at /usr/bin/chromium and
are skipped only when that file is absent (.ci/install-browser installs it).
"""

from __future__ import annotations

import os
import threading
from pathlib import Path
from urllib.parse import urlsplit

import pytest
from werkzeug.serving import make_server

from registry.app import create_app
from tests.web.test_pages import PAGES
from web.views import DEFAULT_DEPTH

CHROMIUM = Path("/usr/bin/chromium")
ARTIFACTS = Path(__file__).resolve().parents[2] / "test-artifacts" / "screenshots"  # gitignored
LAUNCH_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking"]
TELEMETRY = "dataset/brackwater-telemetry-extract"

pytestmark = pytest.mark.skipif(not CHROMIUM.exists(),
                                reason="no /usr/bin/chromium: run .ci/install-browser")


def _serve(url: str):
    import logging

    logging.getLogger("werkzeug").setLevel(logging.WARNING)  # one line per request is noise here
    app = create_app(url)
    httpd = make_server("127.0.0.1", 0, app, threaded=True)
    thread = threading.Thread(target=httpd.serve_forever, daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{httpd.server_port}"
    httpd.shutdown()
    app.extensions["lockkeeper"].close()


@pytest.fixture(scope="module")
def server(populated_url):
    yield from _serve(populated_url)


@pytest.fixture(scope="module")
def demo_server(demo_url):
    yield from _serve(demo_url)


@pytest.fixture(scope="module")
def browser():
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        launched = playwright.chromium.launch(executable_path=str(CHROMIUM), args=LAUNCH_ARGS)
        yield launched
        launched.close()


@pytest.fixture(scope="module")
def screenshots(tmp_path_factory) -> Path:
    # Kept as test artifacts in test-artifacts/screenshots (gitignored), or where
    # LOCKKEEPER_SCREENSHOTS says.
    chosen = os.environ.get("LOCKKEEPER_SCREENSHOTS")
    folder = Path(chosen) if chosen else ARTIFACTS
    folder.mkdir(parents=True, exist_ok=True)
    print(f"\nscreenshots in {folder}")
    return folder


class Watched:
    """A page whose every request and console message is recorded; nothing non-local leaves."""

    def __init__(self, browser) -> None:
        self.requests: list[str] = []
        self.blocked: list[str] = []
        self.console: list[str] = []
        self.context = browser.new_context(viewport={"width": 1280, "height": 900})
        self.page = self.context.new_page()
        self.page.on("request", lambda request: self.requests.append(request.url))
        self.page.on("console", lambda message: self.console.append(message.text))
        self.page.route("**/*", self._route)

    def _route(self, route) -> None:
        host = urlsplit(route.request.url).hostname
        if host == "127.0.0.1":
            route.continue_()
        else:
            self.blocked.append(route.request.url)
            route.abort()

    def assert_stayed_local(self) -> None:
        assert self.blocked == []
        assert self.requests and all(urlsplit(u).hostname == "127.0.0.1" for u in self.requests)
        # A Content-Security-Policy violation is reported on the console.
        assert not [m for m in self.console if "Content Security Policy" in m]

    def close(self) -> None:
        self.context.close()


@pytest.fixture
def watched(browser):
    page = Watched(browser)
    yield page
    page.assert_stayed_local()
    page.close()


def _shot(page, folder: Path, name: str) -> None:
    page.screenshot(path=str(folder / f"{name}.png"), full_page=True)
    assert (folder / f"{name}.png").stat().st_size > 1000


def test_every_page_opens_and_is_screenshotted(watched, server, screenshots):
    page = watched.page
    for index, url in enumerate(PAGES):
        response = page.goto(server + url)
        assert response.status == 200, url
        assert page.locator(".caution").is_visible()
        _shot(page, screenshots, f"{index:02d}-{url.strip('/').split('?')[0].replace('/', '-') or 'catalogue'}")
    response = page.goto(server + "/models/no-such-model")
    assert response.status == 404 and "Not found" in page.title()
    _shot(page, screenshots, "99-not-found")


def test_lineage_clicks_through_from_telemetry_to_the_live_version(watched, server, screenshots):
    page = watched.page
    page.goto(server + "/datasets/brackwater-telemetry-extract")
    page.get_by_role("link", name="graph around this dataset").click()
    assert page.locator("h1 code").inner_text() == TELEMETRY
    # Keyboard: focus the training set's node and follow it with Enter.
    node = page.locator('svg.lineage a.node[data-node="dataset/brackwater-training-set"]')
    node.focus()
    page.keyboard.press("Enter")
    page.wait_for_url("**node=dataset/brackwater-training-set**")
    _shot(page, screenshots, "lineage-1-training-set")
    page.locator('svg.lineage a.node[data-node="model/main-burst-risk/version/1"]').click()
    page.wait_for_url("**node=model/main-burst-risk/version/1**")
    live = page.locator('svg.lineage a.node[data-node="model/main-burst-risk/stage/live"]')
    assert "flagged" in (live.get_attribute("class") or "")
    live.click()
    page.wait_for_url("**node=model/main-burst-risk/stage/live**")
    assert page.locator("h1 code").inner_text() == "model/main-burst-risk/stage/live"
    edges = page.locator("ul.edge-list").inner_text()
    assert "model/main-burst-risk/stage/live held-by model/main-burst-risk/version/1" in edges
    _shot(page, screenshots, "lineage-2-live")
    page.locator('svg.lineage a.node[data-node="model/main-burst-risk/version/1"]').click()
    page.get_by_role("link", name="Version page").click()
    assert page.locator("h1").inner_text() == "main-burst-risk v1"
    assert "live" in page.locator(".status-line").inner_text()
    assert page.get_by_role("alert").is_visible()  # recalled data upstream
    _shot(page, screenshots, "lineage-3-live-version")


def test_a_description_holding_script_shows_as_text_and_runs_nothing(watched, server):
    page = watched.page
    page.goto(server + "/models/markup-check")
    assert "<script>window.scriptRan = true;</script>" in page.locator(".description").inner_text()
    assert page.evaluate("typeof window.scriptRan") == "undefined"
    assert page.locator("main b").count() == 0


def test_the_skip_link_is_the_first_stop_for_the_keyboard(watched, server):
    page = watched.page
    page.goto(server + "/")
    page.keyboard.press("Tab")
    assert page.evaluate("document.activeElement.textContent") == "Skip to content"
    page.keyboard.press("Enter")
    assert page.evaluate("document.activeElement.id") == "content"


def test_graph_nodes_are_reached_with_tab_alone(watched, server):
    page = watched.page
    page.goto(server + "/lineage?node=" + TELEMETRY)
    for _ in range(40):
        page.keyboard.press("Tab")
        if page.evaluate("document.activeElement.getAttribute('data-node')"):
            break
    focused = page.evaluate("document.activeElement.getAttribute('data-node')")
    assert focused
    page.keyboard.press("Enter")
    page.wait_for_url(f"**/lineage?node={focused}&direction=both&depth={DEFAULT_DEPTH}")
    assert page.locator("svg.lineage a.node.root").get_attribute("data-node") == focused


# One page of every kind on the demo catalogue (`lockkeeper demo`).
DEMO_PAGES = {
    "catalogue": "/",
    "events": "/events",
    "events-filtered": "/events?person=tomas.lindqvist&action=stage.promote",
    "model": "/models/main-burst-risk",
    "version-live": "/models/main-burst-risk/versions/1",
    "version-waived": "/models/main-burst-risk/versions/2",
    "version-refused": "/models/main-burst-risk/versions/4",
    "compare": "/models/main-burst-risk/compare?a=1&b=2",
    "lineage": f"/lineage?node={TELEMETRY}",
    "dataset-recalled": "/datasets/brackwater-telemetry-extract",
    "dataset-drift": "/datasets/brackwater-live-sample?against=brackwater-training-set",
    "impact": "/models/main-burst-risk/versions/2/impact",
    "after-release": "/models/main-burst-risk/after-release",
    "not-found": "/models/no-such-model",
}
SERIOUS = ("serious", "critical")


def test_every_page_kind_passes_axe_with_no_serious_or_critical_violation(browser, demo_server,
                                                                          screenshots):
    from axe_playwright_python.sync_playwright import Axe

    axe = Axe()
    # axe-core is injected as a script, which the pages' policy forbids: only this test's
    # browser context bypasses it.
    context = browser.new_context(viewport={"width": 1400, "height": 900}, bypass_csp=True)
    try:
        page = context.new_page()
        found = {}
        for name, url in DEMO_PAGES.items():
            page.goto(demo_server + url)
            for opened in page.locator("details").all():  # check what is folded away too
                opened.evaluate("element => element.open = true")
            violations = axe.run(page).response["violations"]
            found[name] = [(v["id"], v["impact"], [n["target"] for n in v["nodes"]][:3])
                           for v in violations if v["impact"] in SERIOUS]
        assert found == {name: [] for name in DEMO_PAGES}
    finally:
        context.close()


def test_the_demo_pages_are_screenshotted_at_desktop_width(watched, demo_server, screenshots):
    page = watched.page
    page.set_viewport_size({"width": 1400, "height": 900})
    for name, url in DEMO_PAGES.items():
        response = page.goto(demo_server + url)
        assert response.status == (404 if name == "not-found" else 200), url
        _shot(page, screenshots, f"demo-{name}")


def test_the_model_page_stays_short_at_desktop_width(watched, demo_server):
    page = watched.page
    page.set_viewport_size({"width": 1400, "height": 900})
    page.goto(demo_server + "/models/main-burst-risk")
    assert page.evaluate("document.documentElement.scrollHeight") < 4000
    assert page.locator("svg.timeline g.holder").count() >= 10
    # Reports are folded: a timeline mark opens its report where it is.
    page.locator("svg.timeline a.mark.refusal").first.focus()
    page.keyboard.press("Enter")
    page.wait_for_url("**/models/main-burst-risk?report=*#report-*")
    assert page.locator("details.report[open]").count() == 1
    assert page.locator("details.report[open] .gate-finding.failed").count() >= 1


def test_version_4_reads_refused_in_the_browser(watched, demo_server):
    page = watched.page
    page.goto(demo_server + "/models/main-burst-risk/versions/4")
    status = " ".join(page.locator(".status-line").inner_text().split())
    assert "refused for shadow by reads-live-feed at /fields/diameter_mm/type" in status
