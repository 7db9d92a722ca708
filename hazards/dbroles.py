"""The application's database role, which cannot rewrite history (issue 18 item 4).

Migrations run as the owner of the tables (the role of DATABASE_URL). After every `migrate`
the owner makes sure the application's role exists and grants it what the application
needs: reading and writing the records, but only SELECT and INSERT on the audit event tables
and the chain links. The role is no superuser and owns nothing, so it can neither disable a
trigger (ALTER TABLE needs the owner) nor set `session_replication_role` (superuser only),
nor replace the trigger functions. INTEGRITY.md §0.2: pghistory plus database-role grants.
"""

from __future__ import annotations

import logging

from django.db import connections
from psycopg import sql

from hazards.db import app_role
from hazards.review.audit import event_models

log = logging.getLogger(__name__)

CHAIN_TABLE = "review_chainlink"


def protected_tables(using: str = "default") -> list[str]:
    """The append-only tables: every pghistory event table and the chain links."""
    names = [m._meta.db_table for m in event_models()] + [CHAIN_TABLE]
    with connections[using].cursor() as cursor:
        cursor.execute(
            "SELECT relname FROM pg_class WHERE relkind = 'r' AND relname = ANY(%s) "
            "AND relnamespace = 'public'::regnamespace",
            [names],
        )
        found = {row[0] for row in cursor.fetchall()}
    return sorted(found)


def ensure_app_role(using: str = "default") -> str | None:
    """Create the application's role if needed and grant it its rights; returns its name,
    or None when the owner is the application's role (nothing to restrict) or may not
    create roles (then an administrator creates it; README, Deployment)."""
    role, password = app_role()
    connection = connections[using]
    with connection.cursor() as cursor:
        cursor.execute("SELECT current_user, current_database()")
        owner, database = cursor.fetchone()
        if role == owner:
            return None
        cursor.execute("SELECT 1 FROM pg_roles WHERE rolname = %s", [role])
        if cursor.fetchone() is None:
            cursor.execute(
                "SELECT rolsuper OR rolcreaterole FROM pg_roles WHERE rolname = current_user"
            )
            if not cursor.fetchone()[0]:
                log.warning(
                    "the database role %s does not exist and %s may not create it", role, owner
                )
                return None
            # Several test runs may share one server: a concurrent CREATE is not an error.
            cursor.execute(
                sql.SQL(
                    "DO $$ BEGIN CREATE ROLE {} LOGIN NOSUPERUSER NOCREATEDB NOCREATEROLE "
                    "NOREPLICATION NOBYPASSRLS; EXCEPTION WHEN duplicate_object OR "
                    "unique_violation THEN NULL; END $$"
                ).format(sql.Identifier(role))
            )
        if password:
            cursor.execute(
                sql.SQL("ALTER ROLE {} PASSWORD {}").format(
                    sql.Identifier(role), sql.Literal(password)
                )
            )
        grant_app_role(cursor, role=role, database=database, using=using)
    return role


def grant_app_role(cursor, *, role: str, database: str, using: str = "default") -> None:
    ident = sql.Identifier(role)
    statements = [
        sql.SQL("GRANT CONNECT, TEMPORARY ON DATABASE {} TO {}").format(
            sql.Identifier(database), ident
        ),
        sql.SQL("GRANT USAGE ON SCHEMA public TO {}").format(ident),
        sql.SQL("REVOKE ALL ON ALL TABLES IN SCHEMA public FROM {}").format(ident),
        sql.SQL("GRANT SELECT, INSERT, UPDATE, DELETE ON ALL TABLES IN SCHEMA public TO {}").format(
            ident
        ),
        sql.SQL("GRANT USAGE, SELECT ON ALL SEQUENCES IN SCHEMA public TO {}").format(ident),
    ]
    for table in protected_tables(using):
        statements.append(
            sql.SQL("REVOKE UPDATE, DELETE, TRUNCATE ON {} FROM {}").format(
                sql.Identifier(table), ident
            )
        )
    # The migration history is the owner's alone to write.
    statements.append(
        sql.SQL("REVOKE INSERT, UPDATE, DELETE ON django_migrations FROM {}").format(ident)
    )
    for statement in statements:
        cursor.execute(statement)


def ensure_app_role_after_migrate(sender, using="default", **kwargs) -> None:
    ensure_app_role(using=using)


def role_problems(using: str = "default") -> list[str]:
    """What lets the role of this connection rewrite history (empty: nothing)."""
    tables = protected_tables(using)
    with connections[using].cursor() as cursor:
        return cursor_role_problems(cursor, tables)


def cursor_role_problems(cursor, tables: list[str]) -> list[str]:
    problems = []
    cursor.execute(
        "SELECT current_user, rolsuper, rolbypassrls FROM pg_roles WHERE rolname = current_user"
    )
    user, superuser, _bypassrls = cursor.fetchone()
    if superuser:
        problems.append(f"the application connects as {user}, a superuser")
    cursor.execute(
        "SELECT count(*) FROM pg_class WHERE relkind = 'r' AND relname = ANY(%s) "
        "AND pg_has_role(current_user, relowner, 'USAGE')",
        [tables],
    )
    owned = cursor.fetchone()[0]
    if owned and not superuser:
        problems.append(
            f"the application connects as {user}, which owns {owned} audit tables "
            "(an owner can disable their triggers)"
        )
    cursor.execute(
        "SELECT count(*) FROM unnest(%s::text[]) t "
        "WHERE has_table_privilege(current_user, quote_ident(t), 'UPDATE') "
        "OR has_table_privilege(current_user, quote_ident(t), 'DELETE') "
        "OR has_table_privilege(current_user, quote_ident(t), 'TRUNCATE')",
        [tables],
    )
    writable = cursor.fetchone()[0]
    if writable and not superuser and not owned:
        problems.append(
            f"the application's role {user} may update, delete or truncate {writable} audit tables"
        )
    return problems
