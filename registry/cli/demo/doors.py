"""The doors a demo step goes through: the global options that put it on the local catalogue
or on a server holding it. Either way the command reaches the catalogue through the same
client (registry.cli.client), so the story prints the same documents through both."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from registry.cli.demo.scenario import Step
from registry.errors import UserError


@dataclass(frozen=True)
class LocalDoor:
    """Every step on the catalogue at `db_url`, acting as the step's person (`--as`)."""

    db_url: str

    def __call__(self, step: Step) -> list[str]:
        if not step.catalogue:
            return ["--as", step.user]
        return ["--db", self.db_url, "--as", step.user]


@dataclass
class ServerDoor:
    """Every step on the server at `server`, with the token the story made for the step's
    person; `local` steps on the catalogue itself at `db_url` (the one the server serves)."""

    db_url: str
    server: str
    secrets: dict[str, str] = field(default_factory=dict)

    def __call__(self, step: Step) -> list[str]:
        if step.local or not step.catalogue:
            return LocalDoor(self.db_url)(step)
        secret = self.secrets.get(step.user)
        if secret is None:
            raise UserError(f"{step.user} has no token yet: the story must make one before "
                            "their first step on a server", place="demo")
        return ["--server", self.server, "--token", secret]

    def learn(self, arguments: list[str], document: Any) -> None:
        """Keep the secret of a token the story just made (`token create --json`'s answer)."""
        if "token" in arguments and "create" in arguments and isinstance(document, dict):
            self.secrets[document["token"]["user"]] = document["secret"]
