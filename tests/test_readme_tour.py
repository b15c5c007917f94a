"""Every command line of the README's tour runs as written, in order, and ends as its comment
says: exit 1 where the comment says so, 0 otherwise. The tour builds the demo's catalogue for
main-burst-risk, so this plays it on every configured database."""

from __future__ import annotations

import re
import shlex
from pathlib import Path

import pytest
from click.testing import CliRunner

from registry.cli import main
from tests.conftest import BACKENDS, fresh_catalogue_url

ROOT = Path(__file__).resolve().parents[1]
TOUR_FOLDER = ROOT / "seed_data" / "brackwater"  # the tour says: run it from here


def tour_lines() -> list[tuple[list[str], str]]:
    """(words, comment) of every line in the code blocks of the README's tour section."""
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text.split("## A short tour", 1)[1].split("\n## ", 1)[0]
    lines = []
    for block in re.findall(r"```\n(.*?)```", section, flags=re.DOTALL):
        for line in block.replace("\\\n", " ").splitlines():
            if line.strip():
                words = shlex.split(line, comments=True)
                comment = line.split("#", 1)[1] if "#" in line else ""
                lines.append((words, comment))
    return lines


def test_the_tour_has_both_blocks_and_names_only_real_files():
    lines = tour_lines()
    assert len(lines) > 40
    for words, _ in lines:
        for word in words:
            if re.fullmatch(r"(schemas|documents|features|datasets|predictions|manifests)/.*",
                            word):
                assert (TOUR_FOLDER / word).exists(), word  # a file, or a folder of files


@pytest.mark.parametrize("backend", BACKENDS)
def test_every_line_of_the_readme_tour_runs_as_it_says(backend, tmp_path, monkeypatch):
    monkeypatch.chdir(TOUR_FOLDER)
    with fresh_catalogue_url(backend, tmp_path) as url:
        environment = {"LOCKKEEPER_DB": url, "LOCKKEEPER_USER": "someone"}
        ran_the_report = False
        for words, comment in tour_lines():
            words = [word.replace("/tmp/", f"{tmp_path}/") for word in words]
            if words[0] == "export":
                name, _, value = words[1].partition("=")
                if name != "LOCKKEEPER_DB":  # the test's own catalogue stands in for /tmp
                    environment[name] = value
                continue
            assert words[0] == "lockkeeper", words
            if words[1:] == ["serve"]:  # runs until stopped: only check it would start
                words = ["lockkeeper", "serve", "--help"]
            result = CliRunner().invoke(main, words[1:], env=environment)
            expected = 1 if "exit 1" in comment else 0
            assert result.exit_code == expected, (shlex.join(words), result.output)
            assert "Traceback" not in result.output
            if words[1:3] == ["report", "show"]:  # the refusal the tour's comments point at
                assert "main-burst-risk v2 -> canary: refused" in result.output
                ran_the_report = True
        assert ran_the_report
