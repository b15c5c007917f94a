"""Alembic environment: runs revisions on the connection the catalogue hands over."""

from alembic import context

from registry.store.tables import Base

config = context.config
target_metadata = Base.metadata


def run_migrations_online() -> None:
    connection = config.attributes.get("connection")
    if connection is None:
        raise RuntimeError("run migrations through registry.store.migrate, which passes a connection")
    context.configure(connection=connection, target_metadata=target_metadata,
                      render_as_batch=connection.dialect.name == "sqlite",
                      compare_type=True)
    with context.begin_transaction():
        context.run_migrations()


if context.is_offline_mode():
    raise RuntimeError("offline migrations are not supported; use `lockkeeper init`")
run_migrations_online()
