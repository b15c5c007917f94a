"""A populated Brackwater catalogue for the page and browser tests, built once per module."""

from __future__ import annotations

import pytest

from registry.app import create_app
from registry.service.recall import recall_dataset
from registry.store.catalogue import open_catalogue
from tests.conftest import run_cli
from tests.lineage.scenario import INES, build_brackwater

RECALL_REASON = "pressure sensors in Saltmarsh read 8% high after a calibration fault"


def populate(url: str, *, recall: bool = True) -> None:
    assert run_cli(["--db", url, "init"]).exit_code == 0
    catalogue = open_catalogue(url)
    try:
        build_brackwater(catalogue, markup_model=True)
        if recall:
            recall_dataset(catalogue, "brackwater-telemetry-extract", RECALL_REASON, INES)
    finally:
        catalogue.close()


@pytest.fixture(scope="module")
def populated_url(tmp_path_factory) -> str:
    url = f"sqlite:///{tmp_path_factory.mktemp('web') / 'catalogue.db'}"
    populate(url)
    return url


def serve_test_client(url: str):
    app = create_app(url, config={"TESTING": False})
    yield app.test_client()
    app.extensions["lockkeeper"].close()


@pytest.fixture(scope="module")
def client(populated_url):
    yield from serve_test_client(populated_url)


def build_demo(url: str) -> None:
    """The demo story, played in-process by the command line, as `lockkeeper demo` plays it."""
    from registry.cli.demo import play, run_in_process

    play(url, run_in_process, lambda line: None)


@pytest.fixture(scope="session")
def demo_url(tmp_path_factory) -> str:
    url = f"sqlite:///{tmp_path_factory.mktemp('demo') / 'demo.db'}"
    build_demo(url)
    return url


@pytest.fixture(scope="session")
def demo_client(demo_url):
    yield from serve_test_client(demo_url)
