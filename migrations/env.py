"""Alembic environment for formdb: the models' metadata, batch mode on SQLite, type comparison.

formdb.store.db passes an open connection in ``config.attributes["connection"]``; the alembic
command line (``alembic -x db=URL ...`` with a hand-made config) falls back to opening one.
"""

from __future__ import annotations

from alembic import context
from sqlalchemy.engine import Connection

from formdb.store.models import Base

config = context.config
target_metadata = Base.metadata


def _configure(connection: Connection) -> None:
    context.configure(
        connection=connection,
        target_metadata=target_metadata,
        render_as_batch=connection.dialect.name == "sqlite",
        compare_type=True,
    )


def run_migrations_offline() -> None:
    """Emit SQL to stdout instead of running it (``--sql``)."""
    context.configure(
        url=config.get_main_option("sqlalchemy.url"),
        target_metadata=target_metadata,
        literal_binds=True,
        compare_type=True,
    )
    with context.begin_transaction():
        context.run_migrations()


def run_migrations_online() -> None:
    connection = config.attributes.get("connection")
    if connection is not None:
        _configure(connection)
        with context.begin_transaction():
            context.run_migrations()
        return
    from formdb.store.db import make_engine  # only when alembic runs on its own

    url = context.get_x_argument(as_dictionary=True).get("db") \
        or config.get_main_option("sqlalchemy.url")
    if not url:
        raise SystemExit("give the database with -x db=URL")
    engine = make_engine(url)
    try:
        with engine.begin() as conn:
            _configure(conn)
            with context.begin_transaction():
                context.run_migrations()
    finally:
        engine.dispose()


if context.is_offline_mode():
    run_migrations_offline()
else:
    run_migrations_online()
