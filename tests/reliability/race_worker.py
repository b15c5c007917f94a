"""One of the racing processes: after a shared start signal, register, promote, approve and
roll back on model `m` at random for a given time, logging every outcome as a JSON line.

Run as `python -m tests.reliability.race_worker URL SEED SECONDS FOLDER`.
"""

from __future__ import annotations

import json
import random
import sys
import time
from pathlib import Path

from click.testing import CliRunner

from registry.cli import main
from tests.catalogue.helpers import write_version_files

STAGES = ("shadow", "canary", "live")


def _is_json(text: str) -> bool:
    try:
        json.loads(text)
        return True
    except json.JSONDecodeError:
        return False


def _invoke(url: str, user: str, arguments: list[str]) -> dict:
    started = time.time()
    result = CliRunner().invoke(main, ["--db", url, *arguments, "--json"],
                                env={"LOCKKEEPER_USER": user})
    crashed = result.exception is not None and not isinstance(result.exception, SystemExit)
    return {"arguments": arguments, "user": user, "exit": result.exit_code,
            "stdout": result.stdout, "stdout_is_json": _is_json(result.stdout),
            "stderr": result.stderr, "crashed": crashed,
            "exception": repr(result.exception) if crashed else None,
            "started": started, "ended": time.time()}


def race(url: str, seed: int, seconds: float, folder: Path) -> None:
    rng = random.Random(seed)
    (folder / f"ready-{seed}").touch()
    while not (folder / "go").exists():
        time.sleep(0.02)
    known = 3  # the test registers three versions before the race starts
    deadline = time.monotonic() + seconds
    with (folder / f"outcomes-{seed}.jsonl").open("w") as log:
        step = 0
        while time.monotonic() < deadline:
            step += 1
            roll = rng.random()
            if roll < 0.25:
                tag = f"race-{seed}-{step}"
                document, manifest = write_version_files(folder / tag, document=tag.encode(),
                                                         description=tag)
                outcome = _invoke(url, "ines.okafor", ["register", "m", str(document),
                                                       "--manifest", str(manifest)])
            elif roll < 0.6:
                outcome = _invoke(url, "tomas.lindqvist", [
                    "promote", "m", str(rng.randint(1, known)), "--to", rng.choice(STAGES)])
            elif roll < 0.8:
                outcome = _invoke(url, rng.choice(["priya.raman", "tomas.lindqvist"]), [
                    "approve", "m", str(rng.randint(1, known)), "--for", "live"])
            elif roll < 0.97:
                outcome = _invoke(url, "tomas.lindqvist", [
                    "rollback", "m", "--stage", rng.choice(["live", "canary"])])
            else:
                outcome = _invoke(url, "tomas.lindqvist", [
                    "retire", "m", str(rng.randint(1, known)), "--reason", "race"])
            stdout = outcome.pop("stdout")
            if outcome["exit"] == 0 and outcome["arguments"][0] == "register":
                known = max(known, json.loads(stdout)["version"])
            log.write(json.dumps(outcome) + "\n")
            log.flush()


if __name__ == "__main__":
    race(sys.argv[1], int(sys.argv[2]), float(sys.argv[3]), Path(sys.argv[4]))
