"""A catalogue with a model whose policy keeps only the gates a test is about."""

from __future__ import annotations

import json
from pathlib import Path

from registry.gates import GATES

from tests.catalogue.helpers import INPUT_SCHEMA, write_version_files

PEOPLE = {"mara.kowalczyk": "admin", "ines.okafor": "publisher", "tomas.lindqvist": "approver",
          "priya.raman": "approver"}


def policy_keeping(gates_by_stage: dict[str, list[str]], skippable: tuple[str, ...] = ()) -> str:
    """A policy over the default in which each named stage keeps only the listed gates."""
    lines = []
    for stage in ("shadow", "canary", "live"):
        keep = gates_by_stage.get(stage, [])
        if stage in skippable:
            lines += [f"[stages.{stage}]", "skippable = true"]
        lines.append(f"[stages.{stage}.gates]")
        lines += [f"{gate} = {'true' if gate in keep else 'false'}" for gate in GATES]
    return "\n".join(lines) + "\n"


def set_up_people(cli) -> None:
    for person, role in PEOPLE.items():
        cli.json("user", "grant", person, role, user="mara.kowalczyk")


def set_up_model(cli, tmp_path: Path, gates_by_stage: dict[str, list[str]], name: str = "m",
                 skippable: tuple[str, ...] = ()):
    set_up_people(cli)
    cli.json("model", "create", name, user="mara.kowalczyk")
    policy = tmp_path / "policy.toml"
    policy.write_text(policy_keeping(gates_by_stage, skippable))
    cli.json("model", "policy", "set", name, str(policy), user="mara.kowalczyk")


def register(cli, tmp_path: Path, tag: str, *, schema: dict | None = None, model: str = "m") -> int:
    document, manifest = write_version_files(tmp_path / tag, document=tag.encode(),
                                             description=tag)
    if schema is not None:
        (tmp_path / tag / "input.avsc").write_text(json.dumps(schema))
    return cli.json("register", model, str(document), "--manifest", str(manifest))["version"]


def string_diameter_schema() -> dict:
    schema = json.loads(json.dumps(INPUT_SCHEMA))
    for field in schema["fields"]:
        if field["name"] == "diameter_mm":
            field["type"] = "string"
    return schema
