"""The demo story played twice, once on a local catalogue and once on a server holding one
(the API app on a loopback port, reached with --server and the tokens the story makes), prints
the same --json document at every step: the command line has one client, whichever door.

Only what must differ between two plays is normalised, each for a reason named beside it.
"""

from __future__ import annotations

import base64
import json
import re
from pathlib import Path
from typing import Any

from click.testing import CliRunner

from registry.app import create_app
from registry.cli import main
from registry.cli.demo import play
from registry.cli.demo.doors import LocalDoor, ServerDoor
from tests.api.api_helpers import served

# Commands of the story without a --json flag: their stdout is compared as it is.
WITHOUT_JSON = (("key", "public"),)

# The story's clock travels to each dated step and runs on at the wall clock's pace between
# them, so a stamp differs by the milliseconds a step took in each play.
TIME = re.compile(r"\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}:\d{2}(\.\d+)?(Z|[+-]\d{2}:\d{2})?")
# Digests over stamped content change with the stamps: the audit chain's hashes (an event's,
# the head a checkpoint signs) and a release statement's digest of its gate report (which
# carries the time it was evaluated). Envelope signatures, over such statements, are left out.
STAMPED_DIGESTS = {"hash", "head_hash"}


def _contains(arguments: list[str], words: tuple[str, ...]) -> bool:
    return any(tuple(arguments[i:i + len(words)]) == words for i in range(len(arguments)))


def _command(arguments: list[str]) -> str:
    """The step as the story wrote it, without the options of its door."""
    door_options = {"--db", "--as", "--server", "--token"}
    kept = [a for i, a in enumerate(arguments)
            if a not in door_options and (i == 0 or arguments[i - 1] not in door_options)]
    return " ".join(kept)


def _normalised_item(key: str, item: Any, replaced: dict[str, str]) -> Any:
    if key == "secret":  # a fresh random secret per token
        return "<secret>"
    if key in STAMPED_DIGESTS and isinstance(item, str):
        return "<digest>"
    if key == "gate_report" and isinstance(item, dict):
        return _normalised({**item, "digest": "<digest>"}, replaced)
    return _normalised(item, replaced)


def _normalised(value: Any, replaced: dict[str, str]) -> Any:
    if isinstance(value, dict):
        if "payloadType" in value and "payload" in value:  # a DSSE envelope: read its statement
            statement = json.loads(base64.b64decode(value["payload"]))
            return {"payloadType": value["payloadType"],
                    "statement": _normalised(statement, replaced),
                    "signed_by": _normalised(sorted(s.get("keyid", "") for s in
                                                    value.get("signatures", [])), replaced)}
        return {key: _normalised_item(key, item, replaced) for key, item in value.items()}
    if isinstance(value, list):
        return [_normalised(item, replaced) for item in value]
    if isinstance(value, str):
        for found, name in replaced.items():
            value = value.replace(found, name)
        return TIME.sub("<time>", value)
    return value


def _play_through(door_name: str, folder: Path, monkeypatch
                  ) -> tuple[list[tuple[str, Any]], int]:
    """Play the story in `folder`; return (command, normalised document) per step, and how
    many steps went to a server."""
    folder.mkdir()
    # Each play makes its own signing key, as a fresh demo does.
    monkeypatch.setenv("LOCKKEEPER_SIGNING_KEY", str(folder / "keys" / "signing.key"))
    url = f"sqlite:///{folder / 'demo.db'}"
    printed: list[tuple[str, Any]] = []
    to_server = 0
    # Each play has a folder of its own (its catalogue, its serving files).
    replaced = {str(folder): "<play>"}
    runner = CliRunner()

    def play_with(options) -> None:
        def run(arguments: list[str], user: str) -> int:
            nonlocal to_server
            to_server += "--server" in arguments
            wants_json = not any(_contains(arguments, words) for words in WITHOUT_JSON)
            result = runner.invoke(main, [*arguments, *(["--json"] if wants_json else [])],
                                   catch_exceptions=False)
            text = result.stdout
            document = json.loads(text) if wants_json and text.strip() else text
            if isinstance(options, ServerDoor):
                options.learn(arguments, document)
            if _contains(arguments, ("key", "create")) and isinstance(document, dict):
                # Each play makes a fresh Ed25519 key: its id and public half differ.
                replaced[document["public_key"]] = "<public key>"
                replaced[document["id"]] = "<key id>"
            printed.append((_command(arguments), document))
            return result.exit_code

        play(url, run, lambda line: None, options)

    if door_name == "local":
        play_with(LocalDoor(url))
    else:
        with served(create_app(url, pages=False, config={"TESTING": True})) as server:
            play_with(ServerDoor(url, server))
    return [(command, _normalised(document, replaced))
            for command, document in printed], to_server


def test_the_demo_prints_the_same_documents_locally_and_through_a_server(tmp_path, monkeypatch):
    local, none = _play_through("local", tmp_path / "local", monkeypatch)
    remote, most = _play_through("remote", tmp_path / "remote", monkeypatch)
    # Only the set-up on the catalogue's own machine and the offline checks stay off the server.
    assert none == 0 and most >= len(remote) - 6
    assert len(local) == len(remote)
    for (command, here), (_, there) in zip(local, remote, strict=True):
        assert here == there, command
