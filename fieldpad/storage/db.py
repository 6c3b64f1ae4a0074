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
from datetime import UTC, datetime
from importlib import resources
from pathlib import Path

import sqlite_utils

from .access import BUSY_TIMEOUT_MS, StorageError, connect_read_only, unwritable_reason

ENV_VAR = "FIELDPAD_DB"
MIGRATION_SET = "fieldpad"


class NewerDatabaseError(StorageError):
    pass


class WriteError(StorageError):
    """A write that did not happen (read-only, full, busy): the message says why and what to do."""


class BusyError(WriteError):
    """A write that did not wait its turn (``write(..., wait_ms=...)``): another process holds the lock."""


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


def applied_versions(db: sqlite_utils.Database) -> list[str]:
    """The schema versions applied to this database, oldest first."""
    return [r["name"] for r in db.query("SELECT name FROM _sqlite_migrations ORDER BY rowid")]


def schema_version_names() -> list[str]:
    return [name for name, _ in _schema_files()]


def connect(path: Path) -> sqlite3.Connection:
    """A read-write connection with fieldpad's settings.  Opened by URI (``as_uri`` quotes ``#``, ``?`` and
    ``%`` in names), so that ATTACH on it takes URIs too (merge attaches the other file read-only)."""
    name, uri = (":memory:", False) if str(path) == ":memory:" else (path.resolve().as_uri(), True)
    conn = sqlite3.connect(name, uri=uri, timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None, check_same_thread=False)
    try:
        _settings(conn, path)
    except BaseException:
        conn.close()
        raise
    return conn


def _settings(conn: sqlite3.Connection, path: Path) -> None:
    conn.execute(f"PRAGMA busy_timeout={BUSY_TIMEOUT_MS}")
    conn.execute("PRAGMA foreign_keys=ON")
    mode = conn.execute("PRAGMA journal_mode=WAL").fetchone()[0]
    if mode.lower() != "wal" and str(path) != ":memory:":
        raise StorageError(f"{path}: could not switch the database to WAL journal mode ({mode})")
    conn.execute("PRAGMA synchronous=FULL")


def _inspect(conn: sqlite3.Connection, path: Path) -> None:
    """Read the schema: a foreign or damaged file is reported before anything writes to it."""
    names = {r[0] for r in conn.execute("SELECT name FROM sqlite_master")}
    if names and "_sqlite_migrations" not in names:
        raise StorageError(
            f"{path} is an SQLite database but not a fieldpad one (no fieldpad schema). "
            "Nothing was changed. Check the path given with --db or FIELDPAD_DB."
        )
    if "reading" in names:
        conn.execute("SELECT COUNT(*) FROM (SELECT 1 FROM reading LIMIT 1)").fetchone()


def _wrap(conn: sqlite3.Connection, read_only_reason: str | None) -> sqlite_utils.Database:
    db = sqlite_utils.Database(conn, execute_plugins=False)  # no third-party plugins on our connection
    db.read_only = read_only_reason is not None
    db.read_only_reason = read_only_reason
    return db


def _open_read_only(p: Path, reason: str) -> sqlite_utils.Database:
    conn, note = connect_read_only(p)
    try:
        _inspect(conn, p)
        conn.execute("PRAGMA foreign_keys=ON")
        db = _wrap(conn, reason + (f"; {note}" if note else ""))
        _migrate(db, p, read_only=True)
    except BaseException:
        conn.close()
        raise
    return db


def open_db(path: str | os.PathLike | None = None, *, create: bool = True) -> sqlite_utils.Database:
    """Open (and if needed create or upgrade) the database at ``path``.

    The database file is opened only through SQLite, never with a plain
    ``open()``: closing any descriptor of the file would drop the POSIX locks
    SQLite holds on it in this process, and another process could then delete
    the WAL this one still writes into.

    ``create=False`` refuses a path where no database exists ("no database at
    PATH") instead of creating one; only the app's first run creates.

    A healthy database that cannot be written (read-only file, folder or file
    system, full disk) is opened read-only: ``db.read_only`` is True and
    ``db.read_only_reason`` says why in words; everything can be looked at and
    exported, and a save says clearly that it cannot be stored.

    Raises
    ------
    StorageError
        With a message naming the file and what to do.
    """
    p = resolve_path(path)
    if str(p) == ":memory:":
        db = _wrap(connect(p), None)
        _migrate(db, p)
        return db
    try:
        exists = p.exists()
        if exists and p.is_dir():
            raise StorageError(f"{p} is a folder, not a database file. Check the path given with --db.")
        if not exists or p.stat().st_size == 0:
            if not create:
                raise StorageError(
                    f"no database at {p}. Nothing was created. Check the path given with --db "
                    "or FIELDPAD_DB (only the app, run for the first time, creates one)."
                )
            if not exists:
                p.parent.mkdir(parents=True, exist_ok=True)
                with contextlib.suppress(FileExistsError):
                    # Private from the start.  Safe: the file did not exist, so no connection of this
                    # process holds a lock on it that closing this descriptor could drop.
                    os.close(os.open(p, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600))
        else:
            reason = unwritable_reason(p)
            if reason:
                return _open_read_only(p, reason)
            conn, _ = connect_read_only(p)
            try:
                _inspect(conn, p)
            finally:
                conn.close()
        try:
            conn = connect(p)
        except sqlite3.DatabaseError as e:
            reason = unwritable_reason(p, e)
            if reason and p.stat().st_size > 0:
                return _open_read_only(p, reason)
            raise
        db = _wrap(conn, None)
        try:
            _migrate(db, p)
        except BaseException:
            conn.close()
            raise
    except sqlite3.DatabaseError as e:
        reason = unwritable_reason(p, e)
        if reason:
            raise StorageError(
                f"{p}: the database cannot be opened for writing because {reason} ({e}). Nothing was changed."
            ) from None
        raise StorageError(
            f"{p}: the database cannot be read ({e}). Nothing was changed. "
            f"Run 'fieldpad db check --db {p}', and restore a backup if it is damaged."
        ) from None
    except PermissionError as e:
        raise StorageError(f"{p}: no permission ({e.strerror}). Nothing was changed.") from None
    except OSError as e:
        raise StorageError(f"{p}: {e.strerror or e}. Nothing was changed.") from None
    return db


def _migrate(db: sqlite_utils.Database, path: Path, read_only: bool = False) -> None:
    migrations = _migrations()
    known = set(schema_version_names())
    applied = [m.name for m in migrations.applied(db)]
    unknown = [a for a in applied if a not in known]
    if unknown:
        raise NewerDatabaseError(
            f"{path} was written by a newer fieldpad (schema {unknown[-1]}); this fieldpad knows up to "
            f"{max(known)}. Nothing was changed: update fieldpad to open it."
        )
    pending = migrations.pending(db)
    if not pending:
        return
    if read_only:
        raise StorageError(
            f"{path} needs an upgrade to this fieldpad's schema but the file is read-only. "
            "Nothing was changed: make it writable, or use the fieldpad that wrote it."
        )
    if applied and str(path) != ":memory:":
        stamp = datetime.now(UTC).strftime("%Y%m%dT%H%M%SZ")
        backup(db, path.with_name(f"{path.name}.before-{pending[0].name}-{stamp}.bak"))
    # Under the write lock, so two processes opening a new file do not both migrate it.
    with write(db):
        migrations.apply(db)


def _files_of(db: sqlite_utils.Database) -> list[Path]:
    """The files of the databases this connection has open (main and attached)."""
    return [Path(r[2]) for r in db.conn.execute("PRAGMA database_list").fetchall() if r[2]]


def backup(db: sqlite_utils.Database, dest: str | os.PathLike) -> Path:
    """Online copy of the database through SQLite's backup API, whole or not at all.

    Written to a part file beside ``dest``, flushed to disk, integrity-checked,
    then given its name; an existing ``dest`` is never overwritten, and a failed
    or killed backup leaves nothing under that name.
    """
    from .files import FileWriteError, check_target, clean_stale_parts, part_path, publish

    dest = Path(dest).expanduser()
    try:
        check_target(dest, overwrite=False, protect=_files_of(db))
    except FileWriteError as e:
        raise StorageError(f"backup not written: {e}") from None
    clean_stale_parts(dest.parent)
    part = part_path(dest)
    try:
        out = sqlite3.connect(str(part))
        try:
            db.conn.backup(out)
            out.execute("PRAGMA journal_mode=DELETE")  # the copy is one self-contained file
        finally:
            out.close()
        os.chmod(part, 0o600)
        fd = os.open(part, os.O_RDONLY)  # the part file: no connection of ours is open on it now
        try:
            os.fsync(fd)
        finally:
            os.close(fd)
        problems = check_file(part)
        if problems:
            raise StorageError(
                f"backup not written: the copy failed its check ({problems[0]}); the database itself was not changed"
            )
        publish(part, dest, overwrite=False)
    except (sqlite3.Error, OSError) as e:
        reason = unwritable_reason(part, e) or (e.strerror if isinstance(e, OSError) and e.strerror else str(e))
        raise StorageError(
            f"backup not written to {dest}: {reason}. Nothing was left under that name; "
            "the database itself was not changed."
        ) from None
    finally:
        for leftover in (part, part.with_name(part.name + "-journal")):
            with contextlib.suppress(OSError):
                os.unlink(leftover)
    return dest


@contextlib.contextmanager
def write(db: sqlite_utils.Database, *, durable: bool = True, wait_ms: int | None = None):
    """One write transaction, committed at the end or rolled back on any error.

    ``BEGIN IMMEDIATE`` takes the write lock up front, so a transaction that
    reads before it writes waits for another writer (busy timeout) instead of
    failing with "database is locked" when it tries to write.  Nested calls
    use a savepoint (sqlite-utils' ``atomic``).  ``durable=False`` (drafts only)
    commits without waiting for the disk: it survives the process being killed,
    not a power cut.  ``wait_ms`` waits that long (instead of the busy timeout)
    for another process's write lock, then raises a ``BusyError``.
    """
    conn = db.conn
    if getattr(db, "read_only", False):
        raise WriteError(f"the database is read-only ({db.read_only_reason})")
    if conn.in_transaction:
        with db.atomic():
            yield db
        return
    if not durable:  # committed to the WAL in the OS, not waited for on the disk (drafts only)
        conn.execute("PRAGMA synchronous=NORMAL")
    if wait_ms is not None:
        conn.execute(f"PRAGMA busy_timeout={int(wait_ms)}")
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
        if wait_ms is not None and ("locked" in str(e) or "busy" in str(e)):
            raise BusyError("another fieldpad is writing to the database") from e
        raise WriteError(_write_failure(db, e)) from e
    finally:
        if not durable:
            conn.execute("PRAGMA synchronous=FULL")
        if wait_ms is not None:
            conn.execute(f"PRAGMA busy_timeout={BUSY_TIMEOUT_MS}")


def _write_failure(db: sqlite_utils.Database, e: sqlite3.OperationalError) -> str:
    """Why a write failed, in words, without a "NOT SAVED" prefix (the caller says what was not saved)."""
    text = str(e).lower()
    files = _files_of(db)
    reason = unwritable_reason(files[0], e) if files else None  # no file: an in-memory database
    if "locked" in text or "busy" in text:
        why, todo = "another fieldpad kept the database busy for too long", "try again"
    elif "full" in text or reason == "the disk is full":
        why, todo = "the disk (or the database's size limit) is full", "free some space and try again"
    elif reason or "readonly" in text or "read-only" in text:
        why, todo = f"the database cannot be written ({reason or 'read-only'})", "make it writable"
    else:
        why, todo = str(e), "run 'fieldpad db check'"
    return f"{why}. Nothing already saved was harmed; {todo}"


def check(db: sqlite_utils.Database) -> list[str]:
    """Integrity and foreign-key check; an empty list when all is well."""
    problems = [r[0] for r in db.execute("PRAGMA integrity_check").fetchall() if r[0] != "ok"]
    for table, rowid, parent, _fk in db.execute("PRAGMA foreign_key_check").fetchall():
        problems.append(f"{table} row {rowid} refers to a missing {parent}")
    return problems


def check_file(path) -> list[str]:
    """Integrity check of a database file through a read-only connection (works on a damaged file,
    changes nothing).  An empty list means a healthy fieldpad database.  Raises StorageError for a
    path with no file or a file that is not an SQLite database."""
    p = resolve_path(path)
    if not p.exists():
        raise StorageError(f"no database at {p}")
    if p.is_dir():
        raise StorageError(f"{p} is a folder, not a database file")
    if p.stat().st_size == 0:
        return ["the file is empty (0 bytes): it holds no fieldpad database"]
    conn, _ = connect_read_only(p)
    try:
        names = {r[0] for r in conn.execute("SELECT name FROM sqlite_master")}
        if "_sqlite_migrations" not in names:
            return ["no fieldpad schema in the file (an SQLite database of something else)"]
        problems = [r[0] for r in conn.execute("PRAGMA integrity_check").fetchall() if r[0] != "ok"]
        problems += [
            f"{t} row {rowid} refers to a missing {parent}"
            for t, rowid, parent, _ in conn.execute("PRAGMA foreign_key_check").fetchall()
        ]
    except sqlite3.DatabaseError as e:
        problems = [f"the file is damaged ({e})"]
    finally:
        conn.close()
    return problems
