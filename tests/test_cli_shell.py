"""The command-line shell: help, and the typed errors turned into one line and an exit code."""

import json
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from registry.cli import COMMANDS, main
from registry.cli.lazy_group import Lazy, LazyGroup
from tests.cli_errors import assert_one_line_error


def test_help_lists_the_command():
    result = CliRunner().invoke(main, ["--help"])
    assert result.exit_code == 0
    assert "Lockkeeper" in result.output


def test_unknown_command_is_a_usage_error_with_exit_2():
    result = CliRunner().invoke(main, ["no-such-command"])
    assert result.exit_code == 2


# --- lazy loading -------------------------------------------------------------------------




SEGMENT = {"type": "record", "name": "Segment", "fields": [{"name": "segment_id", "type": "string"}]}


def _modules_loaded_by(arguments: list[str]) -> set[str]:
    script = ("import sys\nfrom registry.cli import main\n"
              f"code = main.main(args={arguments!r}, standalone_mode=False)\n"
              "print(' '.join(sorted(sys.modules)))\n")
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          check=True)
    return set(done.stdout.split("\n")[-2].split())


@pytest.mark.parametrize("arguments", [["--help"], ["schema", "check", "{s}", "{s}"],
                                       ["schema", "fingerprint", "{s}"]])
def test_pure_commands_never_import_the_database_layer_or_the_service(tmp_path, arguments):
    schema = tmp_path / "segment.avsc"
    schema.write_text(json.dumps(SEGMENT), encoding="utf-8")
    loaded = _modules_loaded_by([a.format(s=schema) for a in arguments])
    assert "sqlalchemy" not in loaded
    assert not {m for m in loaded if m.startswith("registry.service")}


def _every_entry(table, prefix=()):
    for name, entry in table.items():
        if isinstance(entry, LazyGroup):
            yield from _every_entry(entry.lazy_commands, (*prefix, name))
        else:
            yield (*prefix, name), entry


@pytest.mark.parametrize("path, entry", list(_every_entry(COMMANDS)),
                         ids=lambda value: " ".join(value) if isinstance(value, tuple) else "")
def test_every_row_of_the_command_table_loads_a_command(path, entry: Lazy):
    command = entry.load()
    assert command.name == path[-1] or path[-1] in ("policy",), path
    assert len(entry.summary) <= 70  # one line of `--help`


def test_help_lists_every_command_of_the_table():
    result = CliRunner().invoke(main, ["--help"])
    listed = {line.split()[0] for line in result.output.split("Commands:")[1].splitlines()
              if line.strip()}
    assert listed == set(COMMANDS)


# --- errors -------------------------------------------------------------------------------


def test_a_misspelt_command_gets_a_suggestion():
    result = CliRunner().invoke(main, ["promte", "m", "1", "--to", "live"])
    assert_one_line_error(result, "no such command 'promte'", "did you mean promote")


def test_a_misspelt_subcommand_gets_a_suggestion():
    result = CliRunner().invoke(main, ["dataset", "fingerprnt", "x"])
    assert_one_line_error(result, "dataset: ", "did you mean fingerprint?")


@pytest.mark.parametrize("arguments, fragment", [
    (["schema", "check", "a.avsc"], "missing argument 'WRITER'"),
    (["schema", "check", "--no-such-option"], "no such option"),
    (["check", "m", "two", "--to", "live"], "'two'"),
])
def test_usage_errors_are_one_line_and_exit_2(arguments, fragment):
    result = CliRunner().invoke(main, arguments)
    assert_one_line_error(result, fragment)
    assert "Usage:" not in result.output


def test_under_json_a_usage_error_is_also_one_json_document_on_stdout():
    result = CliRunner().invoke(main, ["schema", "check", "a.avsc", "--json"])
    error = assert_one_line_error(result, "missing argument")
    assert error == {"kind": "usage", "message": "missing argument 'WRITER' (see --help)",
                     "place": "schema check", "exit_code": 2}


def test_under_json_a_typed_error_is_one_json_document_with_its_kind_and_place(tmp_path):
    result = CliRunner().invoke(main, ["schema", "fingerprint", str(tmp_path / "none.avsc"),
                                       "--json"])
    error = assert_one_line_error(result)
    assert error["kind"] == "bad-input" and error["place"].endswith("none.avsc")


@pytest.mark.parametrize("arguments, suggestion", [
    (["schema", "chek"], "did you mean check?"),
    (["user", "grnt"], "did you mean grant?"),
    (["token", "creat"], "did you mean create?"),
    (["model", "polcy"], "did you mean policy?"),
])
def test_every_group_suggests_in_the_same_words(arguments, suggestion):
    assert_one_line_error(CliRunner().invoke(main, arguments), "no such command", suggestion)


# --- progress bars ------------------------------------------------------------------------

SEED = Path(__file__).resolve().parents[1] / "seed_data" / "brackwater" / "predictions"


def _bootstrap(*extra: str):
    return CliRunner().invoke(main, ["metrics", str(SEED / "main-burst-risk-v2.csv"),
                                     "--baseline", str(SEED / "main-burst-risk-v1.csv"),
                                     "--resamples", "2000", *extra])


def test_long_work_draws_no_bar_when_stderr_is_not_a_terminal():
    result = _bootstrap("--json")
    assert result.exit_code == 0 and result.stderr == ""
    json.loads(result.stdout)


def test_long_work_draws_a_bar_on_stderr_when_it_is_a_terminal(monkeypatch):
    monkeypatch.setattr("registry.cli.progress.stderr_is_terminal", lambda: True)
    result = _bootstrap("--json")
    assert result.exit_code == 0
    assert "bootstrap" in result.stderr and "2,000 resamples" in result.stderr
    json.loads(result.stdout)  # stdout holds the one JSON document, untouched by the bar


def test_options_that_cannot_apply_to_a_saved_fingerprint_are_refused_by_name(tmp_path):
    data = Path(__file__).resolve().parents[1] / "seed_data" / "brackwater" / "datasets"
    saved = tmp_path / "live.json"
    made = CliRunner().invoke(main, ["dataset", "fingerprint",
                                     str(data / "brackwater-live-sample.avro"), "--json"])
    saved.write_text(made.stdout)
    result = CliRunner().invoke(main, ["dataset", "fingerprint", str(saved), "--key",
                                       "segment_id"])
    assert_one_line_error(result, "--key: --key cannot apply to a saved fingerprint")


@pytest.mark.parametrize("arguments", [[], ["dataset"]])
def test_a_group_given_no_command_shows_its_help_not_a_one_line_error(arguments):
    result = CliRunner().invoke(main, arguments)
    assert result.stderr.startswith("Usage: ")
    assert "Commands:" in result.stderr and result.stdout == ""


def test_reading_stages_and_states_loads_no_numpy_arrow_or_evaluation():
    """`status` reads the stages and each version's stored state after release; the figures
    were computed when the rows arrived, so reading them needs none of the numeric packages
    (tests/bench/test_startup_bench.py measures what that saves)."""
    script = ("import sys\nimport registry.cli.stage_commands, registry.service.stages, "
              "registry.service.serving_reports, registry.service.gatekeeping\n"
              "print(' '.join(sorted(sys.modules)))\n")
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          check=True)
    loaded = set(done.stdout.split())
    assert not loaded & {"numpy", "pyarrow", "numba", "registry.evaluation", "registry.datasets"}
