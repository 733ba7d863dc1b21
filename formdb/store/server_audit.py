"""What the PostgreSQL server itself enforces and records (installed by ``formdb db
grant-setup``, refreshed each time it runs; removed by migration 0020's downgrade).

- ``formdb_server_change()``: statement triggers (AFTER INSERT / UPDATE / DELETE, with
  transition tables) on every library table write one row of ``server_change_log`` per
  statement: ``session_user``, the server's clock, the table, the rows before and after. They
  fire for plain SQL exactly as for formdb, and no writer may touch the log table itself (the
  function runs as its owner).
- ``formdb_check_identity()``: a BEFORE INSERT trigger on every sealed table (the change log,
  review runs, signatures, policy versions, key enrolments): the row's user column must be the
  login (``session_user``), so nobody appends a row in another person's name.
- ``formdb_append(table, rows)``: the only way a writer's login adds rows to the sealed tables
  (grant-setup takes INSERT on them away from every duty). It checks the caller's duty, as
  formdb's services do (signatures: reviewer; key enrolments and review policy: admin; the log
  and review runs: any duty), then inserts the rows as given (sealed by the client, checked by
  the identity trigger) as the table owner.
- ``formdb_login(op, login, group_role, verifier)``: the only way formdb changes logins. An
  admin login holds no CREATEROLE (with it, on PostgreSQL 15, it could set another person's
  password and log in as them, or grant itself any role, unrecorded); this SECURITY DEFINER
  function, owned by whoever ran grant-setup, checks that the caller is an admin, does one
  narrow thing (create or adopt a login, set a new login's password verifier, grant or revoke
  one duty's group role, let a login log in or not) on ordinary logins only (never a
  superuser, a role with CREATEROLE, the function's owner, a group role or a ``pg_`` role),
  and records it in ``server_change_log`` (table ``logins``) with ``session_user``.

Limits, said plainly: the owner of the tables (whoever ran the migrations) and a superuser can
drop or disable all of this; the chains and ``formdb audit verify`` are the check that does not
depend on trusting them. The change rows are not hash-chained; the server's privileges protect
them.
"""

from __future__ import annotations

from sqlalchemy import Connection, inspect, text

from formdb.store.sealing import SEALED_COLUMNS

CHANGE_TABLE = "server_change_log"
# the column of each sealed table that names who wrote the row
IDENTITY_COLUMN = {"change_log": "user", "review_runs": "created_by",
                   "review_signatures": "signed_by", "policy_versions": "set_by",
                   "key_enrolments": "by_user"}
_TRIGGERS = (("ins", "INSERT", "NEW TABLE AS new_rows"),
             ("upd", "UPDATE", "OLD TABLE AS old_rows NEW TABLE AS new_rows"),
             ("del", "DELETE", "OLD TABLE AS old_rows"))
NOT_WATCHED = frozenset({"alembic_version", CHANGE_TABLE, *SEALED_COLUMNS})

_CHANGE_FUNCTION = """
CREATE OR REPLACE FUNCTION "{schema}".formdb_server_change() RETURNS trigger
LANGUAGE plpgsql SECURITY DEFINER SET search_path = "{schema}", pg_temp AS $fn$
BEGIN
  IF TG_OP = 'INSERT' THEN
    IF EXISTS (SELECT 1 FROM new_rows) THEN
      INSERT INTO server_change_log (at, login, table_name, operation, old_rows, new_rows)
      SELECT clock_timestamp(), session_user, TG_TABLE_NAME, 'insert', NULL,
             json_agg(n)::text FROM new_rows n;
    END IF;
  ELSIF TG_OP = 'UPDATE' THEN
    IF EXISTS (SELECT 1 FROM new_rows) THEN
      INSERT INTO server_change_log (at, login, table_name, operation, old_rows, new_rows)
      SELECT clock_timestamp(), session_user, TG_TABLE_NAME, 'update',
             (SELECT json_agg(o)::text FROM old_rows o), (SELECT json_agg(n)::text FROM new_rows n);
    END IF;
  ELSE
    IF EXISTS (SELECT 1 FROM old_rows) THEN
      INSERT INTO server_change_log (at, login, table_name, operation, old_rows, new_rows)
      SELECT clock_timestamp(), session_user, TG_TABLE_NAME, 'delete',
             json_agg(o)::text, NULL FROM old_rows o;
    END IF;
  END IF;
  RETURN NULL;
END
$fn$
"""

_IDENTITY_FUNCTION = """
CREATE OR REPLACE FUNCTION "{schema}".formdb_check_identity() RETURNS trigger
LANGUAGE plpgsql SET search_path = "{schema}", pg_temp AS $fn$
DECLARE
  named text := to_jsonb(NEW) ->> TG_ARGV[0];
BEGIN
  IF named IS DISTINCT FROM session_user::text THEN
    RAISE EXCEPTION 'formdb: a row of % must name the login that writes it (%), not %',
      TG_TABLE_NAME, session_user, coalesce(named, 'nobody') USING ERRCODE = '42501';
  END IF;
  RETURN NEW;
END
$fn$
"""

_APPEND_FUNCTION = """
CREATE OR REPLACE FUNCTION "{schema}".formdb_append(tbl text, rows jsonb) RETURNS integer
LANGUAGE plpgsql SECURITY DEFINER SET search_path = "{schema}", pg_temp AS $fn$
DECLARE
  written integer;
  any_duty boolean := pg_has_role(session_user, '{prefix}_editor', 'MEMBER')
    OR pg_has_role(session_user, '{prefix}_formulator', 'MEMBER')
    OR pg_has_role(session_user, '{prefix}_reviewer', 'MEMBER')
    OR pg_has_role(session_user, '{prefix}_admin', 'MEMBER');
BEGIN
  IF tbl = 'review_signatures' THEN
    IF NOT pg_has_role(session_user, '{prefix}_reviewer', 'MEMBER') THEN
      RAISE EXCEPTION 'formdb: signing a run needs the role reviewer ({prefix}_reviewer)'
        USING ERRCODE = '42501';
    END IF;
  ELSIF tbl IN ('policy_versions', 'key_enrolments') THEN
    IF NOT pg_has_role(session_user, '{prefix}_admin', 'MEMBER') THEN
      RAISE EXCEPTION 'formdb: % needs the role admin ({prefix}_admin)', tbl
        USING ERRCODE = '42501';
    END IF;
  ELSIF tbl IN ('change_log', 'review_runs') THEN
    IF NOT any_duty THEN
      RAISE EXCEPTION 'formdb: writing % needs one of the roles editor, formulator, reviewer '
        'or admin', tbl USING ERRCODE = '42501';
    END IF;
  ELSE
    RAISE EXCEPTION 'formdb: % is not a sealed table', tbl USING ERRCODE = '42501';
  END IF;
  EXECUTE format('INSERT INTO %I SELECT * FROM jsonb_populate_recordset(NULL::%I, $1)',
                 tbl, tbl) USING rows;
  GET DIAGNOSTICS written = ROW_COUNT;
  RETURN written;
END
$fn$
"""


_LOGIN_FUNCTION = """
CREATE OR REPLACE FUNCTION "{schema}".formdb_login(op text, who text, grp text, verifier text)
RETURNS void
LANGUAGE plpgsql SECURITY DEFINER SET search_path = "{schema}", pg_temp AS $fn$
DECLARE
  target pg_roles%ROWTYPE;
  groups text[] := ARRAY[{groups}];
  g text;
BEGIN
  IF NOT (session_user = current_user
          OR pg_has_role(session_user, '{prefix}_admin', 'MEMBER')) THEN
    RAISE EXCEPTION 'formdb: managing logins needs the role admin ({prefix}_admin)'
      USING ERRCODE = '42501';
  END IF;
  IF who IS NULL OR who = ANY(groups) OR who LIKE 'pg\\_%' THEN
    RAISE EXCEPTION 'formdb: % is not a person''s login that formdb may manage',
      coalesce(who, 'nothing') USING ERRCODE = '42501';
  END IF;
  SELECT * INTO target FROM pg_roles WHERE rolname = who;
  IF FOUND AND session_user <> current_user
     AND (who = current_user OR target.rolsuper OR target.rolbypassrls
          OR (target.rolcreaterole AND op NOT IN ('revoke', 'disable'))) THEN
    RAISE EXCEPTION 'formdb: % owns the library, is a superuser or may create roles: only '
      'the database administrator changes it', who USING ERRCODE = '42501';
  END IF;
  IF op IN ('grant', 'revoke') AND NOT (grp = ANY(groups)) THEN
    RAISE EXCEPTION 'formdb: % is not one of the duties'' roles', coalesce(grp, 'nothing')
      USING ERRCODE = '42501';
  END IF;
  IF op = 'disable' AND who = current_user THEN
    RAISE EXCEPTION 'formdb: % owns the library and stays able to log in', who
      USING ERRCODE = '42501';
  END IF;
  IF op <> 'create' AND NOT FOUND THEN
    RAISE EXCEPTION 'formdb: there is no login %', who USING ERRCODE = '42501';
  END IF;
  IF op = 'create' THEN
    IF FOUND AND verifier IS NOT NULL THEN
      RAISE EXCEPTION 'formdb: the login % exists and keeps its password (its owner changes '
        'it with \\password)', who USING ERRCODE = '42501';
    END IF;
    IF FOUND THEN
      EXECUTE format('ALTER ROLE %I LOGIN', who);
    ELSIF verifier IS NULL THEN
      EXECUTE format('CREATE ROLE %I LOGIN', who);
    ELSIF verifier NOT LIKE 'SCRAM-SHA-256$%' THEN
      RAISE EXCEPTION 'formdb: a password is set as a SCRAM-SHA-256 verifier only'
        USING ERRCODE = '42501';
    ELSE
      EXECUTE format('CREATE ROLE %I LOGIN PASSWORD %L', who, verifier);
    END IF;
  ELSIF op = 'grant' THEN
    EXECUTE format('GRANT %I TO %I', grp, who);
  ELSIF op = 'revoke' THEN
    EXECUTE format('REVOKE %I FROM %I', grp, who);
    IF grp = '{prefix}_admin' AND target.rolcreaterole AND who <> current_user THEN
      EXECUTE format('ALTER ROLE %I NOCREATEROLE', who);
    END IF;
  ELSIF op = 'disable' THEN
    FOREACH g IN ARRAY groups LOOP
      IF pg_has_role(who, g, 'MEMBER') THEN
        EXECUTE format('REVOKE %I FROM %I', g, who);
      END IF;
    END LOOP;
    EXECUTE format('ALTER ROLE %I NOLOGIN NOCREATEROLE', who);
  ELSIF op = 'enable' THEN
    EXECUTE format('ALTER ROLE %I LOGIN', who);
  ELSE
    RAISE EXCEPTION 'formdb: % is not a login operation', op USING ERRCODE = '42501';
  END IF;
  INSERT INTO server_change_log (at, login, table_name, operation, old_rows, new_rows)
  VALUES (clock_timestamp(), session_user, 'logins', op, NULL,
          json_build_array(json_build_object('login', who, 'role', grp,
                                             'password', verifier IS NOT NULL))::text);
END
$fn$
"""


def install(conn: Connection, schema: str, prefix: str, groups: list[str]) -> list[str]:
    """Create or refresh the functions and triggers; returns the tables watched."""
    tables = sorted(inspect(conn).get_table_names())
    conn.execute(text(_CHANGE_FUNCTION.format(schema=schema)))
    conn.execute(text(_IDENTITY_FUNCTION.format(schema=schema)))
    conn.execute(text(_APPEND_FUNCTION.format(schema=schema, prefix=prefix)))
    every_group = [f"{prefix}_reader", *groups]
    conn.execute(text(_LOGIN_FUNCTION.format(
        schema=schema, prefix=prefix, groups=", ".join(f"'{g}'" for g in every_group))))
    for function in ("formdb_append(text, jsonb)", "formdb_login(text, text, text, text)"):
        conn.execute(text(f'REVOKE ALL ON FUNCTION "{schema}".{function} FROM PUBLIC'))
        for group in groups:
            conn.execute(text(f'GRANT EXECUTE ON FUNCTION "{schema}".{function} TO "{group}"'))
    watched = [t for t in tables if t not in NOT_WATCHED]
    for table in watched:
        for suffix, event, referencing in _TRIGGERS:
            name = f"formdb_changes_{suffix}"
            conn.execute(text(f'DROP TRIGGER IF EXISTS {name} ON "{schema}"."{table}"'))
            conn.execute(text(
                f'CREATE TRIGGER {name} AFTER {event} ON "{schema}"."{table}" '
                f"REFERENCING {referencing} FOR EACH STATEMENT "
                f'EXECUTE FUNCTION "{schema}".formdb_server_change()'))
    for table, column in IDENTITY_COLUMN.items():
        if table not in tables:
            continue
        conn.execute(text(f'DROP TRIGGER IF EXISTS formdb_identity ON "{schema}"."{table}"'))
        conn.execute(text(
            f'CREATE TRIGGER formdb_identity BEFORE INSERT ON "{schema}"."{table}" '
            f"FOR EACH ROW EXECUTE FUNCTION \"{schema}\".formdb_check_identity('{column}')"))
    return watched


def remove_server_objects(conn: Connection) -> None:
    """Drop every trigger and function :func:`install` made (a downgrade below 0020)."""
    for table in inspect(conn).get_table_names():
        for suffix, _event, _ref in _TRIGGERS:
            conn.execute(text(f'DROP TRIGGER IF EXISTS formdb_changes_{suffix} ON "{table}"'))
        conn.execute(text(f'DROP TRIGGER IF EXISTS formdb_identity ON "{table}"'))
    conn.execute(text("DROP FUNCTION IF EXISTS formdb_server_change() CASCADE"))
    conn.execute(text("DROP FUNCTION IF EXISTS formdb_check_identity() CASCADE"))
    conn.execute(text("DROP FUNCTION IF EXISTS formdb_append(text, jsonb) CASCADE"))
    conn.execute(text("DROP FUNCTION IF EXISTS formdb_login(text, text, text, text) CASCADE"))
