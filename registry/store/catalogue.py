"""Opening the catalogue: URL checks, engine settings per database, and the migration head."""

from __future__ import annotations

import contextvars
import os
import time
from dataclasses import dataclass, field
from pathlib import Path

from sqlalchemy import Connection, Engine, create_engine, event, inspect
from sqlalchemy.engine import URL, make_url
from sqlalchemy.exc import ArgumentError, DBAPIError, NoSuchModuleError
from sqlalchemy.orm import Session, sessionmaker
from sqlalchemy.pool import NullPool

from registry.errors import CatalogueUnavailable, UserError
from registry.signing.keys import SigningKey, key_path, load_signing_key
from registry.store.wal_checkpoints import WalCheckpoints

DEFAULT_URL = "sqlite:///.lockkeeper/catalogue.db"
SQLITE_BUSY_TIMEOUT_MS = 30_000
# The page size of a catalogue file SQLite creates (an existing file keeps its own). Served
# rows come as blobs of megabytes, written page by page to the log and again to the file at the
# checkpoint: with 16 KiB pages a 16 MB blob is a quarter as many pages, and measured its write
# and commit took 21 ms where 4 KiB pages took 45 ms, its checkpoint 16 ms where they took 27.
SQLITE_PAGE_BYTES = 16384
OPEN_RETRY_PAUSES = (0.2, 0.5, 1.0)  # seconds between tries to reach a PostgreSQL server

# Set by a writing unit of work so SQLite takes its write lock at BEGIN (BEGIN IMMEDIATE):
# a deferred transaction that later upgrades to writing can fail instead of waiting.
sqlite_write_intent: contextvars.ContextVar[bool] = contextvars.ContextVar(
    "sqlite_write_intent", default=False)


def parse_catalogue_url(raw: str | None) -> URL:
    """Turn --db / LOCKKEEPER_DB into a SQLAlchemy URL, or say clearly why not."""
    text = raw or os.environ.get("LOCKKEEPER_DB") or DEFAULT_URL
    try:
        url = make_url(text)
    except ArgumentError:
        raise UserError(f"invalid database URL {text!r}: expected sqlite:///PATH or "
                        "postgresql+psycopg://USER@HOST:PORT/DB", place="--db") from None
    backend = url.get_backend_name()
    if backend == "postgresql":
        if url.get_driver_name() in ("psycopg2", "pg8000", "asyncpg"):
            raise UserError(f"unsupported PostgreSQL driver {url.get_driver_name()!r}: "
                            "use postgresql+psycopg://", place="--db")
        url = url.set(drivername="postgresql+psycopg")
    elif backend != "sqlite":
        raise UserError(f"unsupported database {backend!r}: use sqlite:/// or "
                        "postgresql+psycopg://", place="--db")
    return url


def _configure_sqlite(engine: Engine) -> None:
    @event.listens_for(engine, "connect")
    def on_connect(dbapi_connection, _record):  # pragma: no cover - exercised via every test
        dbapi_connection.isolation_level = None  # we issue BEGIN ourselves, below
        cursor = dbapi_connection.cursor()
        cursor.execute(f"PRAGMA busy_timeout = {SQLITE_BUSY_TIMEOUT_MS}")
        cursor.execute("PRAGMA foreign_keys = ON")
        # before the log: a new file takes its page size when it is first written
        cursor.execute(f"PRAGMA page_size = {SQLITE_PAGE_BYTES}")
        cursor.execute("PRAGMA journal_mode = WAL")
        cursor.execute("PRAGMA synchronous = FULL")
        cursor.close()

    @event.listens_for(engine, "begin")
    def on_begin(connection):
        connection.exec_driver_sql("BEGIN IMMEDIATE" if sqlite_write_intent.get() else "BEGIN")


def sqlite_file(url: URL) -> Path | None:
    """The file of a SQLite catalogue, or None (another database, memory, a `file:` URI)."""
    database = url.database or ""
    if url.get_backend_name() != "sqlite" or not database or database == ":memory:" \
            or database.startswith("file:"):
        return None
    return Path(database).expanduser()


def create_catalogue_engine(url: URL, *, create_folder: bool = True) -> Engine:
    try:
        if url.get_backend_name() == "sqlite":
            file = sqlite_file(url)
            if file is not None and create_folder:
                file.parent.mkdir(parents=True, exist_ok=True)
            engine = create_engine(url, poolclass=NullPool)
            _configure_sqlite(engine)
        else:
            engine = create_engine(url, pool_pre_ping=True, pool_size=5, max_overflow=5,
                                   connect_args={"connect_timeout": 5})
    except (NoSuchModuleError, ArgumentError) as error:
        raise UserError(f"cannot use database URL: {error}", place="--db") from None
    except OSError as error:
        raise CatalogueUnavailable(f"cannot create the catalogue folder: {error}",
                                   place="--db") from None
    return engine


def describe(url: URL) -> str:
    return url.render_as_string(hide_password=True)


@dataclass
class Catalogue:
    """An open catalogue: the engine, a session factory, and the signing key from the key file
    (None when there is none: the catalogue then works, signing nothing). Close when done."""

    url: URL
    engine: Engine
    sessions: sessionmaker[Session]
    key_file: Path | None = None
    _key: SigningKey | None = field(default=None, repr=False)
    _key_stamp: tuple[int, int, int] | None = field(default=None, repr=False)
    # A SQLite file's checkpoints, taken on a thread after writing commits (wal_checkpoints.py)
    wal: WalCheckpoints | None = field(default=None, repr=False)

    @property
    def signing_key(self) -> SigningKey | None:
        """The key in the key file as it is now. A server holds its catalogue open for days:
        a key created or rotated by `key create|rotate` in another process must sign the very
        next statement, so the file is looked at again (one stat) whenever a write needs it."""
        if self.key_file is not None:
            stamp = _stamp_of(self.key_file)
            if stamp != self._key_stamp:
                self._key = load_signing_key(self.key_file)
                self._key_stamp = stamp
        return self._key

    @signing_key.setter
    def signing_key(self, key: SigningKey | None) -> None:
        """Set by `key create|rotate` in this process, right after writing the key file."""
        self._key = key
        self._key_stamp = _stamp_of(self.key_file) if self.key_file is not None else None

    @property
    def dialect(self) -> str:
        return self.engine.dialect.name

    def check_reachable(self) -> None:
        """Connect, retrying a server that is briefly away (restarting, say): opening changes
        nothing, so it is always safe to try again. Writes are never retried."""
        for pause in (*OPEN_RETRY_PAUSES, None):
            try:
                with self.engine.connect():
                    return
            except DBAPIError as error:
                if pause is None or self.dialect == "sqlite":
                    raise CatalogueUnavailable(
                        f"cannot open the catalogue at {describe(self.url)}: "
                        f"{_first_line(error.orig)}") from None
                time.sleep(pause)

    def is_initialised(self) -> bool:
        with self.engine.connect() as connection:
            return inspect(connection).has_table("alembic_version")

    def require_initialised(self) -> None:
        self.check_reachable()
        if not self.is_initialised():
            raise UserError(f"the catalogue at {describe(self.url)} is not initialised; "
                            "run `lockkeeper init` first", place="--db")

    def committed(self) -> None:
        """A writing unit of work committed: the pages it wrote reach the file behind it."""
        if self.wal is not None:
            self.wal.after_commit()

    def close(self) -> None:
        self.engine.dispose()
        if self.wal is not None:
            self.wal.close()  # the last connection: SQLite checkpoints what is left


def _stamp_of(path: Path) -> tuple[int, int, int] | None:
    """What tells a replaced key file from the one read before (None: no file)."""
    try:
        status = path.stat()
    except FileNotFoundError:
        return None
    return (status.st_ino, status.st_size, status.st_mtime_ns)


def on_connection(connection: Connection, like: Catalogue | None = None) -> Catalogue:
    """The catalogue as seen from inside a transaction someone else owns (an Alembic upgrade):
    each unit of work runs in a savepoint of it, and the owner alone commits or rolls back."""
    catalogue = Catalogue(url=connection.engine.url, engine=connection.engine,
                          sessions=sessionmaker(bind=connection, expire_on_commit=False,
                                                join_transaction_mode="create_savepoint"),
                          key_file=like.key_file if like is not None else None)
    if like is not None:
        catalogue.signing_key = like.signing_key
    return catalogue


def _first_line(error: object) -> str:
    text = str(error).strip().splitlines()
    return text[0] if text else type(error).__name__


def _checkpoints_behind(engine: Engine, file: Path) -> WalCheckpoints:
    """The catalogue's connections leave checkpoints to its WalCheckpoints."""
    @event.listens_for(engine, "connect")
    def on_connect(dbapi_connection, _record):  # pragma: no cover - exercised via every test
        dbapi_connection.execute("PRAGMA wal_autocheckpoint = 0")

    return WalCheckpoints(file)


def open_catalogue(raw_url: str | None, *, must_exist: bool = True) -> Catalogue:
    """Open the catalogue named by a URL; with must_exist, insist that `init` has run."""
    url = parse_catalogue_url(raw_url)
    file = sqlite_file(url)
    if must_exist and file is not None and not file.is_file():
        # Say so before connecting: SQLite would create the file (and we the folder) first.
        what = "is a folder, not a catalogue file" if file.is_dir() else "does not exist"
        raise UserError(f"the catalogue at {describe(url)} {what}; run `lockkeeper init` to "
                        "create it", place="--db")
    engine = create_catalogue_engine(url, create_folder=not must_exist)
    # The key is never created here: only `key create` and `lockkeeper demo` make one.
    key_file = key_path(raw_url)
    catalogue = Catalogue(url=url, engine=engine,
                          sessions=sessionmaker(engine, expire_on_commit=False),
                          key_file=key_file,
                          wal=_checkpoints_behind(engine, file) if file is not None else None)
    catalogue.signing_key  # noqa: B018 - read the key now, so a bad key file fails at open
    if must_exist:
        catalogue.require_initialised()
    else:
        catalogue.check_reachable()
    return catalogue
