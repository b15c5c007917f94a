"""Helpers for the tamper tests: a small catalogue with a row in every table, and raw edits
made the way an attacker with write access to the database would, around the catalogue's code
(foreign keys off, straight SQL)."""

from __future__ import annotations

import tempfile
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

from click.testing import CliRunner
from sqlalchemy import Boolean, DateTime, Integer, LargeBinary

from registry.cli import demo
from registry.cli import main
from registry.store import tables as t
from tests.catalogue.helpers import write_version_files
from tests.conftest import Cli

ADMIN = "mara.kowalczyk"


def build_story_catalogue(url: str) -> None:
    """The demo story, then what it leaves out: tokens (one expiring, one revoked) and a
    rotated signing key, so every table and nearly every nullable column holds something."""
    runner = CliRunner()

    def run(arguments: list[str], user: str) -> int:
        return runner.invoke(main, arguments, catch_exceptions=False).exit_code

    demo.play(url, run, lambda line: None)
    cli = Cli(url)
    cli.json("token", "create", "--user", "burst-scoring-service", "--role", "reader",
             "--expires", "2027-06-30", "--label", "scoring service", user=ADMIN)
    revoked = cli.json("token", "create", "--user", "ines.okafor", "--role", "publisher",
                       user=ADMIN)
    cli.json("token", "revoke", str(revoked["token"]["id"]), user=ADMIN)
    cli.json("key", "rotate", user=ADMIN)
    # A version whose own manifest names the feed it reads (the story declares it on the model).
    cli.json("model", "create", "feed-reader", user=ADMIN)
    folder = Path(tempfile.mkdtemp(prefix="feed-reader-"))
    document, manifest = write_version_files(folder, manifest_extra='feed = "segment-features"\n')
    cli.json("register", "feed-reader", str(document), "--manifest", str(manifest),
             user="ines.okafor")


class RawDatabase:
    """Straight SQL on the catalogue's database, past every check of the catalogue's code."""

    def __init__(self, catalogue) -> None:
        self.catalogue = catalogue
        self.mark = "?" if catalogue.dialect == "sqlite" else "%s"

    def _run(self, statement: str, parameters: list[Any] = (), *, fetch: bool = False):
        connection = self.catalogue.engine.raw_connection()
        try:
            cursor = connection.cursor()
            if self.catalogue.dialect == "sqlite":
                cursor.execute("PRAGMA foreign_keys = OFF")
            else:
                cursor.execute("SET session_replication_role = replica")  # no FK triggers
            cursor.execute(statement, list(parameters))
            result = ([dict(zip([d[0] for d in cursor.description], row))
                       for row in cursor.fetchall()] if fetch else cursor.rowcount)
            if self.catalogue.dialect == "postgresql":
                cursor.execute("RESET session_replication_role")
            connection.commit()
            return result
        finally:
            connection.close()

    def rows(self, table: str) -> list[dict[str, Any]]:
        keys = ", ".join(f'"{c.name}"' for c in t.Base.metadata.tables[table].primary_key)
        return self._run(f'SELECT * FROM "{table}" ORDER BY {keys}', fetch=True)

    def update(self, table: str, key: dict[str, Any], column: str, value: Any) -> None:
        where = " AND ".join(f'"{name}" = {self.mark}' for name in key)
        changed = self._run(f'UPDATE "{table}" SET "{column}" = {self.mark} WHERE {where}',
                            [value, *key.values()])
        assert changed == 1, (table, key, column)

    def execute(self, statement: str, parameters: list[Any] = ()) -> int:
        return self._run(statement.replace("?", self.mark), parameters)


def one_byte_edit(table: str, column: str, value: Any) -> Any:
    """The smallest change to a stored value: one character or bit, or a value in a NULL."""
    column_type = t.Base.metadata.tables[table].c[column].type
    if table == t.VersionDataset.__tablename__ and column == "relation":
        # a CHECK constraint allows only the two relations: swap them
        return "evaluated-on" if value == "trained-on" else "trained-on"
    if table == t.ReleaseStatementRow.__tablename__ and column == "move":
        return "left" if value == "entered" else "entered"  # its CHECK allows only these two
    if table == t.ServedBatch.__tablename__ and column == "kind":
        return "outcomes" if value == "served" else "served"  # its CHECK allows only these two
    if table == t.ServedRows.__tablename__ and column == "kind":
        return "outcomes" if value == "predictions" else "predictions"  # likewise
    if value is None:
        if isinstance(column_type, DateTime):
            return datetime(2026, 1, 1, tzinfo=UTC)
        if isinstance(column_type, Boolean):
            return True
        if isinstance(column_type, Integer):
            return 1
        if isinstance(column_type, LargeBinary):
            return b"x"
        return "x"
    if isinstance(value, bool):
        return not value
    if isinstance(column_type, Boolean) and isinstance(value, int):
        return 1 - value  # SQLite keeps booleans as 0 and 1
    if isinstance(value, int):
        return value ^ 0x10000  # one bit of the third byte: clear of every small id in use
    if isinstance(value, datetime):
        return value + timedelta(seconds=1)
    if isinstance(value, (bytes, memoryview)):
        data = bytearray(bytes(value))
        data[len(data) // 2] ^= 0x01
        return bytes(data)
    if isinstance(value, str):
        if not value:
            return "x"
        middle = len(value) // 2
        return value[:middle] + chr(ord(value[middle]) ^ 0x01) + value[middle + 1:]
    raise AssertionError(f"no edit for {type(value)} in {table}.{column}")
