"""Command groups whose commands are imported only when they run.

Each group holds a table of command name -> `Lazy("module:attribute", "summary")` (or a nested
`LazyGroup`), so `lockkeeper schema check` imports the schema code and nothing else, and
`--help` lists every command from the table's summaries without importing any of them.
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass
from typing import Any

import click

from registry.suggest import did_you_mean


@dataclass(frozen=True)
class Lazy:
    """Where a command lives ("package.module:attribute") and the line `--help` shows for it."""

    target: str
    summary: str

    def load(self) -> click.Command:
        module_name, _, attribute = self.target.partition(":")
        command = getattr(importlib.import_module(module_name), attribute)
        if not isinstance(command, click.Command):  # a wrong table row is a programming error
            raise TypeError(f"{self.target} is not a click command")
        return command


class LazyGroup(click.Group):
    """A click group that loads each command from its table on first use."""

    def __init__(self, *args: Any, lazy_commands: dict[str, Lazy | LazyGroup] | None = None,
                 **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self.lazy_commands = dict(lazy_commands or {})

    def list_commands(self, ctx: click.Context) -> list[str]:
        return sorted({*self.lazy_commands, *self.commands})

    def get_command(self, ctx: click.Context, cmd_name: str) -> click.Command | None:
        if cmd_name in self.commands:
            return self.commands[cmd_name]
        entry = self.lazy_commands.get(cmd_name)
        if entry is None:
            return None
        command = entry if isinstance(entry, click.Command) else entry.load()
        self.commands[cmd_name] = command  # later look-ups find it loaded
        return command

    def resolve_command(self, ctx: click.Context, args: list[str]) -> tuple[Any, Any, Any]:
        name = click.utils.make_str(args[0])
        if self.get_command(ctx, name) is None and not name.startswith("-"):
            known = self.list_commands(ctx)
            raise click.UsageError(f"no such command {name!r}"
                                   f"{did_you_mean(name, known)}", ctx)
        return super().resolve_command(ctx, args)

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        """The command list from the table's summaries, so help imports nothing it lists."""
        rows = []
        for name in self.list_commands(ctx):
            entry = self.lazy_commands.get(name)
            if isinstance(entry, Lazy):
                rows.append((name, entry.summary))
            else:
                command = entry if entry is not None else self.commands[name]
                if command.hidden:
                    continue
                rows.append((name, command.get_short_help_str(formatter.width)))
        if rows:
            with formatter.section("Commands"):
                formatter.write_dl(rows)


def lazy_group(name: str, help_text: str, table: dict[str, Lazy | LazyGroup]) -> LazyGroup:
    """A sub-group (`model`, `dataset`, `audit` ...) whose commands may live in several modules."""
    return LazyGroup(name=name, help=help_text, lazy_commands=table,
                     short_help=help_text.split("\n")[0])
