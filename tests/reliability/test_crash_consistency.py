"""SIGKILL during register (a large document), dataset add, evaluate, promote and rollback: the
catalogue opens, verifies clean, holds the whole change or none of it, and the retry works."""

from __future__ import annotations

import os

import pytest

from tests.reliability.crash import kill_trials, operations, set_up
from tests.reliability.harness import assert_catalogue_sound, read_state

OPERATIONS = ["register", "dataset-add", "evaluate", "promote", "rollback"]
BOUNDED_TRIALS = 2
# The soak runs 50 trials per operation in blocks of 10, each block on a fresh catalogue, so
# `audit verify` after every kill need not rehash hundreds of large documents.
SOAK_BLOCKS = 5
SOAK_TRIALS_PER_BLOCK = int(os.environ.get("LOCKKEEPER_SOAK_TRIALS_PER_BLOCK", "10"))
DOCUMENT_SIZE = 24 * 1024 * 1024


def _database(url: str) -> str:
    return "postgresql" if url.startswith("postgresql") else "sqlite"


@pytest.mark.reliability
@pytest.mark.timeout(600)
@pytest.mark.parametrize("operation", OPERATIONS)
def test_a_killed_operation_happens_completely_or_not_at_all(operation, cli, tmp_path):
    set_up(cli, tmp_path)
    figures = kill_trials(cli, tmp_path, operations(DOCUMENT_SIZE)[operation], BOUNDED_TRIALS,
                          seed=10, database=_database(cli.url))
    print(figures.line())
    assert figures.trials == BOUNDED_TRIALS
    # Checkpoints were being signed throughout, and every one still verifies.
    assert read_state(cli.url).counts["checkpoints"] >= 1
    assert assert_catalogue_sound(cli.url)


@pytest.mark.soak
@pytest.mark.timeout(7200)
@pytest.mark.parametrize("block", range(SOAK_BLOCKS))
@pytest.mark.parametrize("operation", OPERATIONS)
def test_fifty_kills_per_operation_leave_the_catalogue_whole(operation, block, cli, tmp_path):
    set_up(cli, tmp_path)
    figures = kill_trials(cli, tmp_path, operations(DOCUMENT_SIZE)[operation],
                          SOAK_TRIALS_PER_BLOCK, seed=1010 + block, database=_database(cli.url))
    print("SOAK", figures.line())
    assert figures.trials == SOAK_TRIALS_PER_BLOCK
