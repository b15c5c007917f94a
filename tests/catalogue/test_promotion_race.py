"""Sixteen processes race to promote different versions into live: one wins, fifteen conflict."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from sqlalchemy import text

from tests.catalogue.stage_helpers import register, set_up_model

ROOT = Path(__file__).resolve().parents[2]
RACERS = 16


def test_sixteen_concurrent_promotions_into_live_have_exactly_one_winner(cli, catalogue_url,
                                                                         tmp_path, catalogue):
    # No gates and nothing to climb through: the race itself is under test.
    set_up_model(cli, tmp_path, {}, skippable=("shadow", "canary"))
    versions = [register(cli, tmp_path, f"v{n}") for n in range(RACERS)]
    env = {**os.environ, "PYTHONPATH": str(ROOT), "LOCKKEEPER_USER": "tomas.lindqvist"}
    racers = [subprocess.Popen(
        [sys.executable, "-m", "registry", "--db", catalogue_url, "promote", "m", str(version),
         "--to", "live", "--expect-holder", "none"],
        env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
        for version in versions]
    codes, errors = [], []
    for racer in racers:
        _, err = racer.communicate(timeout=180)
        codes.append(racer.returncode)
        errors.append(err)
    assert codes.count(0) == 1, errors
    assert codes.count(3) == len(racers) - 1, (codes, errors)
    assert all("changed while this promotion waited" in e for e, c in zip(errors, codes) if c == 3)
    with catalogue.engine.connect() as connection:
        holders = connection.execute(text(
            "SELECT count(*) FROM stage_holdings WHERE stage = 'live'")).scalar_one()
    assert holders == 1
    assert cli.json("audit", "verify")["ok"] is True
