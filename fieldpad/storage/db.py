"""Opening the database: location, connection settings, migrations, transactions.

Only the storage layer opens the database.  Every connection gets
``PRAGMA foreign_keys=ON``, the WAL journal, ``synchronous=FULL`` (a reading
the screen calls saved survives a power cut) and a busy timeout.  Schema
changes are the numbered SQL files in ``db_schema/``, applied in order through
``sqlite_utils.Migrations``, each in one transaction; an older database is
backed up beside itself before it is upgraded, and a database written by a
newer fieldpad is refused.
"""
from __future__ import annotations

import contextlib
import os
import sqlite3
from datetime import datetime, timezone
from importlib import resources
from pathlib import Path

import sqlite_utils

ENV_VAR = "FIELDPAD_DB"
BUSY_TIMEOUT_MS = 30_000
MIGRATION_SET = "fieldpad"


class StorageError(Exception):
    """A database problem with a message for a person (and a way forward)."""


class NewerDatabaseError(StorageError):
    pass


def default_path() -> Path:
    """``$FIELDPAD_DB`` if set, else ``fieldpad.db`` in the user's data folder."""
    env = os.environ.get(ENV_VAR)
    if env:
        return Path(env).expanduser()
    import platformdirs

    return Path(platformdirs.user_data_dir("fieldpad", appauthor=False)) / "fieldpad.db"


def resolve_path(path: str | os.PathLike | None) -> Path:
    """``--db PATH`` wins over ``$FIELDPAD_DB``, which wins over the default."""
    return Path(path).expanduser() if path else default_path()


def _schema_files() -> list[tuple[str, str]]:
    files = sorted(p for p in resources.files("db_schema").iterdir() if p.name.endswith(".sql"))
    return [(p.name[:-4], p.read_text(encoding="utf-8")) for p in files]


def _statements(sql: str):
    """Split a SQL file into statements (executescript would commit midway)."""
    buf = ""
    for line in sql.splitlines(keepends=True):
        if line.lstrip().startswith("--") and not buf.strip():
            continue
        buf += line
        if sqlite3.complete_statement(buf):
            yield buf.strip()
            buf = ""
    if buf.strip():
        raise StorageError(f"incomplete SQL statement in schema file: {buf.strip()[:60]}")


def _migrations() -> sqlite_utils.Migrations:
    m = sqlite_utils.Migrations(MIGRATION_SET)
    for name, sql in _schema_files():
        def apply(db, sql=sql):
            for stmt in _statements(sql):
                db.execute(stmt)
        m(name=name)(apply)
    return m


def schema_version_names() -> list[str]:
    return [name for name, _ in _schema_files()]


def connect(path: Path) -> sqlite3.Connection:
    conn = sqlite3.connect(str(path), timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None,
                           check_same_thread=False)
    conn.execute(f"PRAGMA busy_timeout={BUSY_TIMEOUT_MS}")
    conn.execute("PRAGMA foreign_keys=ON")
    mode = conn.execute("PRAGMA journal_mode=WAL").fetchone()[0]
    if mode.lower() != "wal" and str(path) != ":memory:":
        raise StorageError(f"{path}: could not switch the database to WAL journal mode ({mode})")
    conn.execute("PRAGMA synchronous=FULL")
    return conn


def _check_is_database(path: Path) -> None:
    if not path.exists() or path.stat().st_size == 0:
        return
    with open(path, "rb") as f:
        head = f.read(16)
    if head != b"SQLite format 3\x00":
        raise StorageError(f"{path} is not a fieldpad database (not an SQLite file). Nothing was changed. "
                           "Check the path given with --db or FIELDPAD_DB.")


def _sanity_check_read_only(path: Path) -> None:
    """Read the schema through a read-only connection before anything writes to the file,
    so a damaged or foreign file is reported, not modified."""
    conn = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True, timeout=BUSY_TIMEOUT_MS / 1000)
    try:
        names = {r[0] for r in conn.execute("SELECT name FROM sqlite_master")}
        if names and "_sqlite_migrations" not in names:
            raise StorageError(f"{path} is an SQLite database but not a fieldpad one (no fieldpad schema). "
                               "Nothing was changed. Check the path given with --db or FIELDPAD_DB.")
        if "reading" in names:
            conn.execute("SELECT COUNT(*) FROM (SELECT 1 FROM reading LIMIT 1)").fetchone()
    finally:
        conn.close()


def is_writable(path: Path) -> bool:
    """Whether the database file and its folder can be written (WAL needs both)."""
    return os.access(path, os.W_OK) and os.access(path.parent, os.W_OK)


def open_db(path: str | os.PathLike | None = None, *, create: bool = True) -> sqlite_utils.Database:
    """Open (and if needed create or upgrade) the database at ``path``.

    A file or folder that cannot be written is opened read-only: everything can
    be looked at and exported, and a save says clearly that it cannot be stored.

    Raises
    ------
    StorageError
        With a message naming the file and what to do.
    """
    p = resolve_path(path)
    try:
        if str(p) != ":memory:":
            _check_is_database(p)
            if not p.exists():
                if not create:
                    raise StorageError(f"{p}: no such database")
                p.parent.mkdir(parents=True, exist_ok=True)
                # Private from the start: readings and names are the site's business.
                fd = os.open(p, os.O_CREAT | os.O_WRONLY, 0o600)
                os.close(fd)
            elif p.stat().st_size > 0:
                _sanity_check_read_only(p)
            if p.stat().st_size > 0 and not is_writable(p):
                conn = sqlite3.connect(f"{p.resolve().as_uri()}?mode=ro", uri=True, isolation_level=None,
                                       check_same_thread=False, timeout=BUSY_TIMEOUT_MS / 1000)
                conn.execute("PRAGMA foreign_keys=ON")
                db = sqlite_utils.Database(conn, execute_plugins=False)  # no third-party plugins on our connection
                db.read_only = True
                _migrate(db, p, read_only=True)
                return db
        conn = connect(p)
        db = sqlite_utils.Database(conn, execute_plugins=False)  # no third-party plugins on our connection
        db.read_only = False
        _migrate(db, p)
    except sqlite3.DatabaseError as e:
        raise StorageError(f"{p}: the database cannot be read ({e}). Nothing was changed. "
                           f"Run 'fieldpad db check --db {p}', and restore a backup if it is damaged.") from None
    except PermissionError as e:
        raise StorageError(f"{p}: no permission ({e.strerror}). Nothing was changed.") from None
    return db


def _migrate(db: sqlite_utils.Database, path: Path, read_only: bool = False) -> None:
    migrations = _migrations()
    known = set(schema_version_names())
    applied = [m.name for m in migrations.applied(db)]
    unknown = [a for a in applied if a not in known]
    if unknown:
        raise NewerDatabaseError(
            f"{path} was written by a newer fieldpad (schema {unknown[-1]}); this fieldpad knows up to "
            f"{max(known)}. Nothing was changed: update fieldpad to open it.")
    pending = migrations.pending(db)
    if not pending:
        return
    if read_only:
        raise StorageError(f"{path} needs an upgrade to this fieldpad's schema but the file is read-only. "
                           "Nothing was changed: make it writable, or use the fieldpad that wrote it.")
    if applied and str(path) != ":memory:":
        stamp = datetime.now(timezone.utc).strftime("%Y%m%dT%H%M%SZ")
        backup(db, path.with_name(f"{path.name}.before-{pending[0].name}-{stamp}.bak"))
    # Under the write lock, so two processes opening a new file do not both migrate it.
    with write(db):
        migrations.apply(db)


def backup(db: sqlite_utils.Database, dest: str | os.PathLike) -> Path:
    """Online copy of the database through SQLite's backup API; refuses to overwrite."""
    dest = Path(dest)
    if dest.exists():
        raise StorageError(f"{dest} already exists: choose a new name for the backup")
    out = sqlite3.connect(str(dest))
    try:
        db.conn.backup(out)
    finally:
        out.close()
    with contextlib.suppress(OSError):
        os.chmod(dest, 0o600)
    return dest


@contextlib.contextmanager
def write(db: sqlite_utils.Database):
    """One write transaction, committed at the end or rolled back on any error.

    ``BEGIN IMMEDIATE`` takes the write lock up front, so a transaction that
    reads before it writes waits for another writer (busy timeout) instead of
    failing with "database is locked" when it tries to write.  Nested calls
    use a savepoint (sqlite-utils' ``atomic``).
    """
    conn = db.conn
    if getattr(db, "read_only", False):
        raise StorageError("the database is open read-only (the file or its folder cannot be written): "
                           "nothing was saved. Make it writable, or save to another database with --db.")
    if conn.in_transaction:
        with db.atomic():
            yield db
        return
    try:
        conn.execute("BEGIN IMMEDIATE")
        try:
            yield db
        except BaseException:
            if conn.in_transaction:
                conn.execute("ROLLBACK")
            raise
        else:
            conn.execute("COMMIT")
    except sqlite3.OperationalError as e:
        raise StorageError(_write_failure(e)) from e


def _write_failure(e: sqlite3.OperationalError) -> str:
    text = str(e).lower()
    if "full" in text:
        why = "the disk (or the database's size limit) is full"
        todo = "free some space; "
    elif "readonly" in text or "read-only" in text:
        why = "the database file is read-only"
        todo = "make it writable; "
    elif "locked" in text or "busy" in text:
        why = "another fieldpad kept the database busy for too long"
        todo = "try again; "
    else:
        why = str(e)
        todo = ""
    return f"NOT SAVED: {why}. Nothing already saved was harmed; {todo}what you typed is kept on screen."


def check(db: sqlite_utils.Database) -> list[str]:
    """Integrity and foreign-key check; an empty list when all is well."""
    problems = [r[0] for r in db.execute("PRAGMA integrity_check").fetchall() if r[0] != "ok"]
    for table, rowid, parent, _fk in db.execute("PRAGMA foreign_key_check").fetchall():
        problems.append(f"{table} row {rowid} refers to a missing {parent}")
    return problems


def check_file(path) -> list[str]:
    """Integrity check of a database file through a read-only connection (works on a damaged file,
    changes nothing).  Raises StorageError for a file that is not an SQLite database."""
    p = resolve_path(path)
    if not p.exists():
        raise StorageError(f"{p}: no such database")
    _check_is_database(p)
    conn = sqlite3.connect(f"{p.resolve().as_uri()}?mode=ro", uri=True)
    try:
        problems = [r[0] for r in conn.execute("PRAGMA integrity_check").fetchall() if r[0] != "ok"]
        problems += [f"{t} row {rowid} refers to a missing {parent}"
                     for t, rowid, parent, _ in conn.execute("PRAGMA foreign_key_check").fetchall()]
    except sqlite3.DatabaseError as e:
        problems = [f"the file is damaged ({e})"]
    finally:
        conn.close()
    return problems
