"""Benchmark: how fast `lockkeeper` starts, as whole processes beside a bare Python import.

Run with `python -m pytest tests/bench/test_startup_bench.py -s`. Each command runs as its own
process next to its reference (`python -c "import fastavro"` for the commands that need no
catalogue, `python -c "import sqlalchemy"` for `status` on the demo catalogue), in interleaved
rounds so load from other jobs on a shared machine hits both; the figure is the best processor
time (user + system of the child) over the rounds, and wall time is printed beside it. The issue
asks for at most 3x the reference.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
LOCKKEEPER = str(Path(sys.executable).parent / "lockkeeper")
ROUNDS = 9
REQUIRED_RATIO = 3.0

SCHEMA = {"type": "record", "name": "Segment", "fields": [
    {"name": "segment_id", "type": "string"}, {"name": "diameter_mm", "type": "int"},
    {"name": "repairs_5y", "type": "int", "default": 0}]}


def run_once(command: list[str]) -> tuple[float, float]:
    """(processor seconds, wall seconds) of one whole process."""
    started = time.perf_counter()
    process = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                               cwd=ROOT)
    _, status, usage = os.wait4(process.pid, 0)
    wall = time.perf_counter() - started
    process.returncode = os.waitstatus_to_exitcode(status)
    if process.returncode not in (0, 1):
        raise AssertionError(f"{command} exited {process.returncode}: "
                             f"{process.stderr.read().decode()[-2000:]}")
    process.stderr.close()
    return usage.ru_utime + usage.ru_stime, wall


def best_of(commands: dict[str, list[str]]) -> dict[str, tuple[float, float]]:
    best = {label: (float("inf"), float("inf")) for label in commands}
    for _ in range(ROUNDS):
        for label, command in commands.items():
            cpu, wall = run_once(command)
            best[label] = (min(best[label][0], cpu), min(best[label][1], wall))
    return best


def report(title: str, figures: dict[str, tuple[float, float]], reference: str) -> None:
    print(f"\n{title} (best of {ROUNDS}; processor / wall seconds; ratio to {reference})")
    base_cpu, base_wall = figures[reference]
    for label, (cpu, wall) in figures.items():
        print(f"  {label:<34} {cpu:6.3f} / {wall:6.3f}   x{cpu / base_cpu:5.2f} / "
              f"x{wall / base_wall:5.2f}")


def test_pure_commands_start_within_three_times_importing_fastavro(tmp_path):
    schema = tmp_path / "segment.avsc"
    schema.write_text(json.dumps(SCHEMA), encoding="utf-8")
    reference = "python -c 'import fastavro'"
    figures = best_of({
        reference: [sys.executable, "-c", "import fastavro"],
        "lockkeeper schema check": [LOCKKEEPER, "schema", "check", str(schema), str(schema)],
        "lockkeeper --help": [LOCKKEEPER, "--help"],
    })
    report("start-up of the commands that need no catalogue", figures, reference)
    for label, (cpu, _) in figures.items():
        assert cpu <= REQUIRED_RATIO * figures[reference][0], label


@pytest.fixture(scope="module")
def demo_url(tmp_path_factory) -> str:
    url = f"sqlite:///{tmp_path_factory.mktemp('demo') / 'demo.db'}"
    built = subprocess.run([LOCKKEEPER, "--db", url, "demo"], capture_output=True, cwd=ROOT)
    assert built.returncode == 0, built.stderr.decode()[-2000:]
    return url


def test_status_on_the_demo_starts_within_three_times_importing_sqlalchemy(demo_url):
    reference = "python -c 'import sqlalchemy'"
    figures = best_of({
        reference: [sys.executable, "-c", "import sqlalchemy"],
        "lockkeeper status main-burst-risk": [LOCKKEEPER, "--db", demo_url, "status",
                                              "main-burst-risk"],
    })
    report("start-up of a catalogue command", figures, reference)
    cpu = figures["lockkeeper status main-burst-risk"][0]
    assert cpu <= REQUIRED_RATIO * figures[reference][0]
