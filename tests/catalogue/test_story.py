"""The whole Brackwater story end to end, through the commands, on every configured database."""

from __future__ import annotations

import json

from click.testing import CliRunner

from registry.cli import demo
from registry.cli import main


def _run_with(runner: CliRunner, log: list[str]):
    def run(arguments: list[str], user: str) -> int:
        result = runner.invoke(main, arguments, catch_exceptions=False)
        log.append(result.output)
        return result.exit_code
    return run


def test_the_demo_story_plays_through_on_this_database(catalogue_url, cli, signing_key_file):
    log: list[str] = []
    assert not signing_key_file.exists()
    demo.play(catalogue_url, _run_with(CliRunner(), log), lambda line: None)
    assert signing_key_file.exists()  # the demo made its signing key
    assert cli.json("audit", "verify")["newest_checkpoint"] is not None
    status = cli.json("status", "main-burst-risk")["stages"]
    assert status["live"] == [1]           # v2 was rolled back to v1
    assert 2 in status["candidate"]        # and went back to the bottom of the ladder
    assert 3 in status["candidate"] and 4 in status["candidate"]  # refused: never moved
    assert cli.json("status", "night-flow-leak")["stages"]["live"] == [1]
    assert cli.json("audit", "verify")["ok"] is True
    history = cli.json("history", "main-burst-risk")
    refused = [a for a in history["attempts"] if not a["passed"]]
    assert [(a["version"], a["stage"]) for a in refused] == [(2, "canary"), (3, "shadow"),
                                                             (4, "shadow")]
    # The serving side closes the story: the live document verifies, an edited copy does not.
    verdicts = [line for entry in log for line in entry.splitlines() if "VERIFIED" in line]
    assert verdicts[0].startswith("VERIFIED: main-burst-risk@1")
    assert verdicts[1].startswith("NOT VERIFIED (document-changed)")


def test_refusals_name_the_place_at_fault(catalogue_url, cli):
    demo.play(catalogue_url, _run_with(CliRunner(), []), lambda line: None)
    history = cli.json("history", "main-burst-risk")
    reports = {(a["version"], a["stage"]): a["id"] for a in history["attempts"] if not a["passed"]}
    from registry.service.stages import find_report
    from registry.store.catalogue import open_catalogue

    catalogue = open_catalogue(catalogue_url)
    try:
        def failed(key):
            report = find_report(catalogue, reports[key])
            return {r["gate"]: r["summary"] for r in report["results"] if not r["passed"]}

        assert "district=SALTMARSH" in failed((2, "canary"))["slice-guard"]
        assert "mean_pressure_psi" in failed((3, "shadow"))["feature-meaning"]
        assert "kPa" in failed((3, "shadow"))["feature-meaning"]
        assert "/fields/diameter_mm/type" in failed((4, "shadow"))["reads-live-feed"]
    finally:
        catalogue.close()
