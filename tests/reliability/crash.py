"""The crash harness: SIGKILL a `lockkeeper` process at a seeded random moment, then check
that the catalogue kept every promise, and that the operation can simply be run again."""

from __future__ import annotations

import json
import random
import signal
import subprocess
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

from tests.catalogue.stage_helpers import set_up_model
from tests.catalogue.helpers import write_version_files
from tests.conftest import Cli
from tests.reliability.harness import (assert_catalogue_sound, lockkeeper_command, process_env,
                                       read_state, write_transaction_open)

SEED_DATA = Path(__file__).resolve().parents[2] / "seed_data" / "brackwater"
EVALUATION_SET = "brackwater-evaluation-set"
APPROVER = "tomas.lindqvist"


@dataclass
class Operation:
    """One kind of change to kill: what to set up (never killed), and the command to kill."""

    name: str
    prepare: Callable[[Cli, Path, int], list[str]]  # returns the arguments of trial i
    user: str = "ines.okafor"


@dataclass
class CrashFigures:
    operation: str
    database: str
    trials: int = 0
    killed: int = 0  # the process was still running when the signal was sent
    mid_transaction: int = 0  # ... and held an open write transaction
    happened: int = 0  # after the kill the change was complete
    not_at_all: int = 0  # after the kill nothing of it was there
    finished_first: int = 0  # the process ended before the kill was due
    repeats: dict[str, int] = field(default_factory=dict)

    def line(self) -> str:
        return json.dumps(self.__dict__, sort_keys=True)


def set_up(cli: Cli, tmp_path: Path) -> None:
    """Model `m` with no gates and a skippable ladder, plus an evaluation dataset, in a
    catalogue with a signing key, so the killed commands write signed checkpoints too."""
    set_up_model(cli, tmp_path, {}, skippable=("shadow", "canary"))
    cli.json("key", "create", user="mara.kowalczyk")
    cli.json("dataset", "add", EVALUATION_SET,
             str(SEED_DATA / "datasets" / f"{EVALUATION_SET}.parquet"), "--role", "evaluation",
             "--key", "segment_id", "--exclude", "burst_within_90d")


def _register_small(cli: Cli, tmp_path: Path, tag: str) -> int:
    document, manifest = write_version_files(tmp_path / tag, document=tag.encode(),
                                             description=tag)
    return cli.json("register", "m", str(document), "--manifest", str(manifest))["version"]


def large_registration(size: int) -> Callable[[Cli, Path, int], list[str]]:
    def prepare(cli: Cli, tmp_path: Path, trial: int) -> list[str]:
        body = random.Random(trial).randbytes(size)
        document, manifest = write_version_files(tmp_path / f"large-{trial}", document=body,
                                                 description=f"large {trial}")
        return ["register", "m", str(document), "--manifest", str(manifest)]
    return prepare


def dataset_addition(cli: Cli, tmp_path: Path, trial: int) -> list[str]:
    source = SEED_DATA / "datasets" / "brackwater-asset-register.csv"
    lines = source.read_text().splitlines(keepends=True)
    del lines[1 + trial % (len(lines) - 1)]  # another row missing: other content each trial
    path = tmp_path / f"assets-{trial}.csv"
    path.write_text("".join(lines))
    return ["dataset", "add", f"assets-{trial}", str(path), "--role", "source", "--schema",
            str(SEED_DATA / "schemas" / "brackwater-asset-register.avsc")]


def evaluation(cli: Cli, tmp_path: Path, trial: int) -> list[str]:
    number = _register_small(cli, tmp_path, f"evaluated-{trial}")
    source = SEED_DATA / "predictions" / "main-burst-risk-v1.csv"
    header, *rows = source.read_text().splitlines()
    shifted = []
    for row in rows:  # other scores each trial, so other predictions bytes
        row_id, label, score, district = row.split(",")
        shifted.append(f"{row_id},{label},{float(score) * (1 - 1e-4 * (trial + 1)):.10f},{district}")
    path = tmp_path / f"predictions-{trial}.csv"
    path.write_text("\n".join([header, *shifted]) + "\n")
    return ["evaluate", "m", str(number), "--dataset", EVALUATION_SET, "--predictions", str(path),
            "--task", "binary", "--slice", "district"]


def promotion(cli: Cli, tmp_path: Path, trial: int) -> list[str]:
    if trial == 0:  # something always holds live, so every trial displaces a holder
        first = _register_small(cli, tmp_path, "first-live")
        cli.json("promote", "m", str(first), "--to", "live", user=APPROVER)
    number = _register_small(cli, tmp_path, f"promoted-{trial}")
    return ["promote", "m", str(number), "--to", "live"]


def rollback(cli: Cli, tmp_path: Path, trial: int) -> list[str]:
    if trial == 0:
        first = _register_small(cli, tmp_path, "first-live")
        cli.json("promote", "m", str(first), "--to", "live", user=APPROVER)
    number = _register_small(cli, tmp_path, f"rolled-back-{trial}")
    cli.json("promote", "m", str(number), "--to", "live", user=APPROVER)
    return ["rollback", "m", "--stage", "live"]


def operations(document_size: int) -> dict[str, Operation]:
    return {op.name: op for op in [
        Operation("register", large_registration(document_size)),
        Operation("dataset-add", dataset_addition),
        Operation("evaluate", evaluation),
        Operation("promote", promotion, user=APPROVER),
        Operation("rollback", rollback, user=APPROVER),
    ]}


def _run_to_end(url: str, arguments: list[str], user: str) -> tuple[float, subprocess.CompletedProcess]:
    started = time.monotonic()
    done = subprocess.run(lockkeeper_command(url, *arguments), env=process_env(user),
                          capture_output=True, text=True, timeout=600)
    return time.monotonic() - started, done


def _wait_for_transaction(url: str, application: str, process: subprocess.Popen) -> None:
    while process.poll() is None and not write_transaction_open(url, application):
        time.sleep(0.005)


def kill_trials(cli: Cli, tmp_path: Path, operation: Operation, trials: int, seed: int,
                database: str) -> CrashFigures:
    """Trial 0 runs to the end and sets the reference change and the time window; every
    later trial is killed at a random moment inside that window."""
    url = cli.url
    figures = CrashFigures(operation.name, database)
    rng = random.Random(seed)
    before = assert_catalogue_sound(url)
    arguments = operation.prepare(cli, tmp_path, 0)
    before = read_state(url)
    window, done = _run_to_end(url, arguments, operation.user)
    assert done.returncode == 0, done.stderr
    reference = read_state(url).delta(before)
    assert reference, "the reference run changed nothing"
    for trial in range(1, trials + 1):
        arguments = operation.prepare(cli, tmp_path, trial)
        before = read_state(url)
        application = f"lockkeeper-crash-{operation.name}-{trial}"
        process = subprocess.Popen(
            lockkeeper_command(url, *arguments),
            env=process_env(operation.user, PGAPPNAME=application),
            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        figures.trials += 1
        try:
            if trial % 2:  # a random moment of the whole run
                process.wait(timeout=rng.uniform(0.25, 1.05) * window)
            else:  # a random moment shortly after the write transaction opened
                _wait_for_transaction(url, application, process)
                process.wait(timeout=rng.uniform(0.0, 0.2))
            figures.finished_first += 1
            assert process.returncode == 0, process.stderr.read()
        except subprocess.TimeoutExpired:
            mid = write_transaction_open(url, application)
            process.send_signal(signal.SIGKILL)
            process.wait()
            figures.killed += 1
            figures.mid_transaction += mid
        process.stderr.close()
        after = assert_catalogue_sound(url)
        change = after.delta(before)
        if change:
            assert change == reference, f"half an operation: {change} != {reference}"
            figures.happened += 1
        else:
            figures.not_at_all += 1
        # Repeating the operation succeeds: it completes the change, or finds it done already.
        _, again = _run_to_end(url, arguments, operation.user)
        outcome = f"exit {again.returncode}" + (" (was done)" if change else "")
        figures.repeats[outcome] = figures.repeats.get(outcome, 0) + 1
        if change:  # done already: the repeat is a no-op or a clean one-line refusal
            assert again.returncode in (0, 1, 2, 3) and "Traceback" not in again.stderr, \
                again.stderr
        else:
            assert again.returncode == 0, again.stderr
            assert read_state(url).delta(before) == reference
        assert_catalogue_sound(url)
    return figures
