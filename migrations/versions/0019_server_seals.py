"""Server seals on PostgreSQL: every sealed row gets a keyed seal the server computes.

The public chain (formdb.store.sealing) can be recomputed by anyone, so whoever may UPDATE or
DELETE a chained table could rewrite rows and reseal them. Here each sealed table gets a
``server_seal`` column. On PostgreSQL a BEFORE INSERT trigger fills it with
``sha256(key || sha256(key || table:id:row_hash:previous row's seal))`` (a secret-prefix double
hash: no length extension), the key being 32 random bytes in ``formdb_seal_key``, in a schema
of its own (``<schema>__seal``: outside the library's schema, so backups, grants and listings of
the library never see it), which only its owner can read (no grant to anyone; the trigger and
the check run SECURITY DEFINER).
An UPDATE keeps the old seal, whatever it sets; the seals are chained, so a row removed and
re-inserted breaks the seal of the row after it. ``formdb_seal_ok`` lets any login check a seal
without reading the key; ``formdb audit verify`` asks it for every row.

On SQLite the column stays empty: there is no server, and whoever can write the file holds
everything (README, "what each backend can detect").

Revision ID: 0019_server_seals
Revises: 0018_limit_purpose
Created: 2026-12-04
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0019_server_seals"
down_revision: str | None = "0018_limit_purpose"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

TABLES = ("change_log", "review_runs", "review_signatures", "policy_versions",
          "key_enrolments")


def key_schema(schema: str) -> str:
    return f"{schema}__seal"


def _pg_objects(schema: str) -> list[str]:
    q, k = f'"{schema}"', f'"{key_schema(schema)}"'
    return [
        f"CREATE SCHEMA {k}",
        f"REVOKE ALL ON SCHEMA {k} FROM PUBLIC",
        f"CREATE TABLE {k}.formdb_seal_key (id integer PRIMARY KEY CHECK (id = 1), "
        "key bytea NOT NULL)",
        f"INSERT INTO {k}.formdb_seal_key VALUES (1, decode(replace(gen_random_uuid()::text, "
        "'-', '') || replace(gen_random_uuid()::text, '-', ''), 'hex'))",
        f"REVOKE ALL ON {k}.formdb_seal_key FROM PUBLIC",
        f"""CREATE FUNCTION {q}.formdb_keyed_seal(msg text) RETURNS text
            LANGUAGE sql STABLE SECURITY DEFINER SET search_path = pg_catalog AS $$
            SELECT encode(sha256(k.key || sha256(k.key || convert_to(msg, 'UTF8'))), 'hex')
            FROM {k}.formdb_seal_key k $$""",
        f"REVOKE ALL ON FUNCTION {q}.formdb_keyed_seal(text) FROM PUBLIC",
        f"""CREATE FUNCTION {q}.formdb_seal_ok(tab text, row_id bigint, hash text,
                                              before text, seal text) RETURNS boolean
            LANGUAGE sql STABLE SECURITY DEFINER SET search_path = pg_catalog AS $$
            SELECT seal IS NOT NULL AND seal = {q}.formdb_keyed_seal(
                tab || ':' || row_id || ':' || coalesce(hash, '') || ':'
                || coalesce(before, '')) $$""",
        f"GRANT EXECUTE ON FUNCTION {q}.formdb_seal_ok(text, bigint, text, text, text) "
        "TO PUBLIC",
    ]


def _row_trigger(schema: str, table: str) -> str:
    """One trigger function per table, with static SQL (its plans are cached: a dynamic query
    per row tripled the cost of appending log rows)."""
    q, k = f'"{schema}"', f'"{key_schema(schema)}"'
    return f"""CREATE FUNCTION {q}.formdb_seal_{table}() RETURNS trigger
        LANGUAGE plpgsql SECURITY DEFINER SET search_path = pg_catalog AS $$
        DECLARE before text; secret bytea;
        BEGIN
          IF TG_OP = 'UPDATE' THEN
            NEW.server_seal := OLD.server_seal;
            RETURN NEW;
          END IF;
          SELECT t.server_seal INTO before FROM {q}."{table}" t WHERE t.id < NEW.id
            ORDER BY t.id DESC LIMIT 1;
          SELECT s.key INTO secret FROM {k}.formdb_seal_key s WHERE s.id = 1;
          NEW.server_seal := encode(sha256(secret || sha256(secret || convert_to(
              '{table}:' || NEW.id || ':' || coalesce(NEW.row_hash, '') || ':'
              || coalesce(before, ''), 'UTF8'))), 'hex');
          RETURN NEW;
        END $$"""


def upgrade() -> None:
    for table in TABLES:
        with op.batch_alter_table(table) as batch:
            batch.add_column(sa.Column("server_seal", sa.String(64), nullable=True))
    bind = op.get_bind()
    if bind.dialect.name != "postgresql":
        return
    schema = bind.execute(sa.text("SELECT current_schema()")).scalar_one()
    for statement in _pg_objects(schema):
        op.execute(statement)
    for table in TABLES:  # the rows already there, in chain order, before the trigger exists
        rows = bind.execute(sa.text(f'SELECT id, row_hash FROM "{table}" ORDER BY id')).all()
        before: str | None = None
        for row_id, hash_ in rows:
            seal = bind.execute(sa.text(
                f'SELECT "{schema}".formdb_keyed_seal(:msg)'),
                {"msg": f"{table}:{row_id}:{hash_ or ''}:{before or ''}"}).scalar_one()
            bind.execute(sa.text(f'UPDATE "{table}" SET server_seal = :s WHERE id = :i'),
                         {"s": seal, "i": row_id})
            before = seal
        op.execute(_row_trigger(schema, table))
        op.execute(f'CREATE TRIGGER formdb_server_seal BEFORE INSERT OR UPDATE ON "{table}" '
                   f'FOR EACH ROW EXECUTE FUNCTION "{schema}".formdb_seal_{table}()')


def downgrade() -> None:
    bind = op.get_bind()
    if bind.dialect.name == "postgresql":
        schema = bind.execute(sa.text("SELECT current_schema()")).scalar_one()
        for table in TABLES:
            op.execute(f'DROP TRIGGER IF EXISTS formdb_server_seal ON "{table}"')
        q = f'"{schema}"'
        op.execute(f"DROP FUNCTION IF EXISTS {q}.formdb_seal_ok(text, bigint, text, text, text)")
        for table in TABLES:
            op.execute(f"DROP FUNCTION IF EXISTS {q}.formdb_seal_{table}()")
        op.execute(f"DROP FUNCTION IF EXISTS {q}.formdb_keyed_seal(text)")
        op.execute(f'DROP SCHEMA IF EXISTS "{key_schema(schema)}" CASCADE')
    for table in reversed(TABLES):
        with op.batch_alter_table(table) as batch:
            batch.drop_column("server_seal")
