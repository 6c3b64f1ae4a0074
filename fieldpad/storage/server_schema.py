"""The crew's central PostgreSQL server: where it is (``--server`` or ``$FIELDPAD_SERVER``, shown without
a password), the connection to it, and its schema (numbered migrations in ``db_schema/server/``, applied
by ``fieldpad server init``, checked before every sync).  The sync itself is ``server.py``.

psycopg is imported here only (the optional ``server`` extra); libpq's own means carry passwords
(password file, ``PGPASSWORD``, client certificates): none is ever stored in the laptop's database.
"""

from __future__ import annotations

import contextlib
import os
from importlib import resources
from urllib.parse import urlsplit

from .access import StorageError

ENV_VAR = "FIELDPAD_SERVER"
MIGRATION_TABLE = "fieldpad_migrations"
CONNECT_TIMEOUT_S = 10


class ServerError(StorageError):
    """The server cannot be reached, refused, or is not a fieldpad server; the message says what to do."""


def server_url(url: str | None) -> str:
    """``--server URL`` wins over ``$FIELDPAD_SERVER``."""
    url = url or os.environ.get(ENV_VAR)
    if not url:
        raise ServerError(
            "no server given: use --server URL (a libpq connection URI, e.g. "
            "postgresql://HOST/DBNAME?sslmode=verify-full) or set FIELDPAD_SERVER"
        )
    return url


def shown_url(url: str) -> str:
    """The address without any password in it (a URI's user:password@, a ``password=`` parameter, or a
    ``password=`` keyword of a key=value string), for messages and the laptop's record."""
    import re

    if "://" not in url:
        return re.sub(r"password\s*=\s*('(?:[^'\\]|\\.)*'|\S+)", "password=***", url)
    with contextlib.suppress(ValueError):
        parts = urlsplit(url)
        netloc = parts.netloc
        if parts.password is not None:
            userinfo, _, hostpart = netloc.rpartition("@")
            netloc = userinfo.split(":", 1)[0] + "@" + hostpart
        query = "&".join(q for q in parts.query.split("&") if q and not q.lower().startswith("password="))
        return (
            f"{parts.scheme}://{netloc}{parts.path}"
            + (f"?{query}" if query else "")
            + (f"#{parts.fragment}" if parts.fragment else "")
        )
    return "(an address that could not be read)"


def _psycopg():
    try:
        import psycopg
    except ImportError:
        raise ServerError("the server commands need psycopg: pip install 'fieldpad[server]'") from None
    return psycopg


def connect(url: str):
    """A psycopg connection in autocommit mode: every write is inside an explicit ``conn.transaction()``
    (a real BEGIN ... COMMIT, never a savepoint inside a transaction a lone query left open).  Refusals and
    unreachable servers become a ServerError."""
    psycopg = _psycopg()
    try:
        return psycopg.connect(url, connect_timeout=CONNECT_TIMEOUT_S, application_name="fieldpad", autocommit=True)
    except psycopg.Error as e:
        raise ServerError(
            f"cannot reach the server {shown_url(url)}: {_first_line(e)}. Nothing was sent or "
            "received; everything stays on this laptop and waits for the next sync."
        ) from None


def _first_line(e: Exception) -> str:
    return (str(e).strip().splitlines() or [type(e).__name__])[0]


# ---- schema ---------------------------------------------------------------------------------------------
def _migration_files() -> list[tuple[str, str]]:
    folder = resources.files("db_schema").joinpath("server")
    files = sorted(p for p in folder.iterdir() if p.name.endswith(".sql"))
    return [(p.name[:-4], p.read_text(encoding="utf-8")) for p in files]


def init(url: str) -> tuple[list[str], list[str]]:
    """Create or upgrade the server's schema: each numbered migration in one transaction, under an
    advisory lock (two inits at once apply each migration once).  Refuses a schema newer than this
    fieldpad knows.  Returns (applied now, applied before)."""
    known = _migration_files()
    names = [n for n, _ in known]
    with connect(url) as conn:
        with conn.transaction():
            conn.execute("SELECT pg_advisory_xact_lock(hashtext('fieldpad schema'))")
            conn.execute(
                f"CREATE TABLE IF NOT EXISTS {MIGRATION_TABLE} (name TEXT PRIMARY KEY, "
                "applied_at TIMESTAMPTZ NOT NULL DEFAULT now(), applied_by NAME NOT NULL "
                "DEFAULT current_user)"
            )
            before = [r[0] for r in conn.execute(f"SELECT name FROM {MIGRATION_TABLE} ORDER BY name")]
        unknown = [b for b in before if b not in names]
        if unknown:
            raise ServerError(
                f"the server's schema is newer than this fieldpad (migration {unknown[-1]}; this "
                f"fieldpad knows up to {names[-1]}). Nothing was changed: update fieldpad."
            )
        done = []
        for name, sql in known:
            with conn.transaction():
                conn.execute("SELECT pg_advisory_xact_lock(hashtext('fieldpad schema'))")
                if conn.execute(f"SELECT 1 FROM {MIGRATION_TABLE} WHERE name = %s", [name]).fetchone():
                    continue
                conn.execute(sql)
                conn.execute(f"INSERT INTO {MIGRATION_TABLE} (name) VALUES (%s)", [name])
                done.append(name)
    return done, before


def _check_schema(conn) -> str:
    """The server's id; a ServerError if this is not a fieldpad server or its schema is newer."""
    psycopg = _psycopg()
    try:
        with conn.transaction():
            applied = [r[0] for r in conn.execute(f"SELECT name FROM {MIGRATION_TABLE} ORDER BY name")]
            sid = conn.execute("SELECT id FROM server_info").fetchone()[0]
    except psycopg.errors.UndefinedTable:
        raise ServerError(
            "the server has no fieldpad schema: its administrator runs 'fieldpad server init' first"
        ) from None
    except psycopg.errors.InsufficientPrivilege:
        raise ServerError(
            "this login may not read the crew's record: ask the server's administrator to "
            "grant it fieldpad_technician or fieldpad_supervisor"
        ) from None
    names = [n for n, _ in _migration_files()]
    newer = [a for a in applied if a not in names]
    if newer:
        raise ServerError(f"the server's schema is newer than this fieldpad ({newer[-1]}): update fieldpad")
    return sid
