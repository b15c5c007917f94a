"""The `lockkeeper` process ends without the interpreter's teardown (registry/cli/process_end.py),
yet keeps everything an ordinary exit does: its output, its exit code, the exit handlers of the
libraries it used, and a catalogue file with its write-ahead log folded back in."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

# Runs the command as the console script does (main() with no arguments), with an exit handler
# registered first, so that it is the last to run.
SCRIPT = """
import atexit, sys
atexit.register(lambda: print("exit handler ran", file=sys.stderr, flush=True))
sys.argv = ["lockkeeper", *sys.argv[1:]]
from registry.cli import main
main()
"""


def lockkeeper(*arguments: str, cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-c", SCRIPT, *arguments], cwd=cwd,
                          capture_output=True, text=True, timeout=300)


def test_the_output_the_exit_code_and_the_exit_handlers_are_kept(tmp_path):
    path = tmp_path / "readings.parquet"
    pq.write_table(pa.table({"reading": [1.5, 2.5, None]}), path)
    done = lockkeeper("dataset", "fingerprint", str(path), "--json", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert json.loads(done.stdout)["rows"] == 3  # the whole document, flushed through a pipe
    assert "exit handler ran" in done.stderr


def test_a_refusal_keeps_its_exit_code_and_its_error_document(tmp_path):
    done = lockkeeper("dataset", "fingerprint", str(tmp_path / "missing.parquet"), "--json",
                      cwd=tmp_path)
    assert done.returncode == 2
    assert json.loads(done.stdout)["error"]["exit_code"] == 2
    assert "exit handler ran" in done.stderr


def test_a_catalogue_written_by_the_process_is_one_complete_file(tmp_path):
    url = f"sqlite:///{tmp_path / 'catalogue.db'}"
    for arguments in (["init"], ["--as", "mara.kowalczyk", "model", "create", "pipes"]):
        done = lockkeeper("--db", url, *arguments, cwd=tmp_path)
        assert done.returncode == 0, done.stderr
    assert not (tmp_path / "catalogue.db-wal").exists()
    listed = lockkeeper("--db", url, "model", "list", "--json", cwd=tmp_path)
    assert "pipes" in listed.stdout
