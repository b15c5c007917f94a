"""Concurrent registrations from separate processes get distinct, dense version numbers."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

from tests.catalogue.helpers import write_version_files

ROOT = Path(__file__).resolve().parents[2]


def test_concurrent_registrations_get_distinct_numbers(cli, catalogue_url, tmp_path):
    cli.json("model", "create", "m")
    env = {**os.environ, "PYTHONPATH": str(ROOT), "LOCKKEEPER_USER": "ines.okafor"}
    processes = []
    for n in range(8):
        document, manifest = write_version_files(tmp_path / f"v{n}", document=f"doc {n}".encode())
        processes.append(subprocess.Popen(
            [sys.executable, "-m", "registry", "--db", catalogue_url, "register", "m",
             str(document), "--manifest", str(manifest), "--json"],
            env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True))
    numbers = []
    for process in processes:
        out, err = process.communicate(timeout=120)
        assert process.returncode == 0, err
        numbers.append(json.loads(out)["version"])
    assert sorted(numbers) == list(range(1, 9))
    assert cli.json("audit", "verify")["ok"] is True
