"""Bad folders, globs and clusters: one line, exit 2, and nothing registered; and the
progress bar, drawn only on a terminal."""

from __future__ import annotations

import json
import os
import socket
import time

import pytest
from click.testing import CliRunner
from dataset_files import SEGMENT_SCHEMA, segment_records, write_avro, write_parquet

from registry.cli import main


def empty_folder(tmp_path):
    (tmp_path / "extract").mkdir()
    return [str(tmp_path / "extract")], "the folder holds no data files"


def schemas_disagreeing(tmp_path):
    records = segment_records(50, seed=50)
    folder = tmp_path / "extract"
    folder.mkdir()
    write_parquet(folder / "a.parquet", records)
    write_parquet(folder / "b.parquet", [{**r, "diameter_mm": str(r["diameter_mm"])}
                                         for r in records])
    return [str(folder)], "'a.parquet' and 'b.parquet' disagree on field 'diameter_mm'"


def unreadable_file(tmp_path):
    folder = tmp_path / "extract"
    folder.mkdir()
    write_parquet(folder / "a.parquet", segment_records(50, seed=51))
    (folder / "b.parquet").write_bytes(b"PAR1" + os.urandom(200))
    return [str(folder)], "b.parquet: not a Parquet file, or truncated"


def glob_matching_nothing(tmp_path):
    return [str(tmp_path / "extract" / "part-*.parquet")], "the pattern matches no file"


def partition_value_of_the_wrong_type(tmp_path):
    folder = tmp_path / "extract" / "diameter_mm=wide"
    folder.mkdir(parents=True)
    fields = [f for f in SEGMENT_SCHEMA["fields"] if f["name"] != "diameter_mm"]
    write_avro(folder / "part-0.avro", [{k: v for k, v in r.items() if k != "diameter_mm"}
                                        for r in segment_records(50, seed=52)],
               schema={**SEGMENT_SCHEMA, "fields": fields})
    return ([str(tmp_path / "extract"), "--schema", schema_file(tmp_path)],
            "diameter_mm=wide: 'wide' is not a valid int for the field 'diameter_mm'")


def symbolic_link_loop(tmp_path):
    folder = tmp_path / "extract" / "district=NORTHGATE"
    folder.mkdir(parents=True)
    write_parquet(folder / "part-0.parquet", segment_records(50, seed=53))
    os.symlink("..", folder / "again")
    return [str(tmp_path / "extract")], "a symbolic link loop"


def link_to_itself(tmp_path):
    (tmp_path / "extract").mkdir()
    os.symlink("self", tmp_path / "extract" / "self")
    return [str(tmp_path / "extract")], "a symbolic link loop"


def schema_file(tmp_path) -> str:
    path = tmp_path / "segment.avsc"
    path.write_text(json.dumps(SEGMENT_SCHEMA), encoding="utf-8")
    return str(path)


BAD_INPUTS = [empty_folder, schemas_disagreeing, unreadable_file, glob_matching_nothing,
              partition_value_of_the_wrong_type, symbolic_link_loop, link_to_itself]


def one_line(result, expected: str) -> None:
    assert result.exit_code == 2, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert expected in lines[0]
    assert "Traceback" not in result.output


@pytest.mark.parametrize("bad_input", BAD_INPUTS, ids=lambda f: f.__name__)
def test_dataset_fingerprint_refuses_bad_input_in_one_line(tmp_path, bad_input):
    arguments, expected = bad_input(tmp_path)
    result = CliRunner().invoke(main, ["dataset", "fingerprint", *arguments])
    one_line(result, expected)


@pytest.mark.parametrize("bad_input", BAD_INPUTS, ids=lambda f: f.__name__)
def test_dataset_add_registers_nothing_from_bad_input(tmp_path, cli, bad_input):
    arguments, expected = bad_input(tmp_path)
    one_line(cli("dataset", "add", "telemetry", *arguments), expected)
    assert cli.json("dataset", "list")["datasets"] == []
    assert cli.json("audit", "verify")["ok"] is True


def test_dataset_compare_takes_folders_and_refuses_a_bad_one(tmp_path):
    arguments, expected = empty_folder(tmp_path)
    write_parquet(tmp_path / "one.parquet", segment_records(50, seed=54))
    result = CliRunner().invoke(main, ["dataset", "compare", str(tmp_path / "one.parquet"),
                                       *arguments])
    one_line(result, expected)


def unused_loopback_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


@pytest.mark.timeout(60)
def test_a_cluster_that_does_not_answer_is_refused_within_the_timeout(tmp_path, cli):
    pytest.importorskip("distributed")
    write_parquet(tmp_path / "one.parquet", segment_records(50, seed=55))
    address = f"tcp://127.0.0.1:{unused_loopback_port()}"
    started = time.monotonic()
    result = cli("dataset", "add", "telemetry", str(tmp_path / "one.parquet"),
                 "--cluster", address, "--cluster-timeout", "2")
    waited = time.monotonic() - started
    one_line(result, f"no Dask scheduler answered at {address} within 2 s")
    assert waited < 2 + 8  # the timeout, and a few seconds to give up the connection
    assert cli.json("dataset", "list")["datasets"] == []


@pytest.mark.parametrize("arguments, expected", [
    (["--workers", "0"], "--workers: give at least 1 worker"),
    (["--workers", "2", "--cluster", "tcp://127.0.0.1:1"], "not both"),
])
def test_work_options_are_checked(tmp_path, arguments, expected):
    path = write_parquet(tmp_path / "one.parquet", segment_records(50, seed=56))
    one_line(CliRunner().invoke(main, ["dataset", "fingerprint", str(path), *arguments]),
             expected)


def test_a_terminal_gets_a_progress_bar_of_files_and_rows_on_stderr(tmp_path, monkeypatch):
    import registry.cli.progress as progress

    monkeypatch.setattr(progress, "stderr_is_terminal", lambda: True)
    for index in range(3):
        write_parquet(tmp_path / f"part-{index}.parquet", segment_records(100, seed=60 + index))
    result = CliRunner().invoke(main, ["dataset", "fingerprint", str(tmp_path), "--json"])
    assert result.exit_code == 0, result.output
    assert json.loads(result.stdout)["rows"] == 300  # stdout stays one JSON document
    last = result.stderr.strip().splitlines()[-1]
    assert "3/3 files" in last and "300 rows" in last and "rows/s" in last
