"""Facts about a database file that decide how it can be opened, found without opening it for writing:
read-only URIs, why a file cannot be written (read-only medium, file or folder, full disk), and a read-only
connection that works even where SQLite cannot create its ``-shm`` file.  Nothing here opens the database
file with a plain ``open()`` (see ``db.open_db``)."""

from __future__ import annotations

import os
import sqlite3
from pathlib import Path

BUSY_TIMEOUT_MS = 30_000


class StorageError(Exception):
    """A database problem with a message for a person (and a way forward)."""


def read_only_uri(path: Path, *, immutable: bool = False) -> str:
    """A read-only SQLite URI for ``path`` (``as_uri`` quotes ``#``, ``?`` and ``%`` in names)."""
    return path.resolve().as_uri() + ("?immutable=1" if immutable else "?mode=ro")


def _free_bytes(folder: Path) -> int | None:
    try:
        st = os.statvfs(folder)
    except OSError:
        return None
    return st.f_bavail * st.f_frsize


def unwritable_reason(path: Path, error: Exception | None = None) -> str | None:
    """Why a database that can be read cannot be written, in words, or None if nothing says so.

    Looks at the file system, the file and its folder (WAL needs to create and
    grow the ``-wal`` and ``-shm`` files beside the database), free space, and
    the error SQLite gave, if any.  Nothing here opens the database file.
    """
    folder = path.resolve().parent
    try:
        if os.statvfs(folder).f_flag & os.ST_RDONLY:
            return "it is on a read-only file system (e.g. a write-protected USB stick)"
    except OSError:
        pass
    if path.exists() and not os.access(path, os.W_OK):
        return "the file is read-only"
    if not os.access(folder, os.W_OK | os.X_OK):
        return "its folder cannot be written (SQLite keeps its -wal and -shm files there)"
    for side in ("-wal", "-shm"):
        extra = path.with_name(path.name + side)
        if extra.exists() and not os.access(extra, os.W_OK):
            return f"its {side} file is read-only"
    text = str(error).lower() if error is not None else ""
    free = _free_bytes(folder)
    if "full" in text or (free is not None and free < 64 * 1024):
        return "the disk is full"
    if "readonly" in text or "read-only" in text:
        return "the file or its folder is read-only"
    return None


def not_a_database(path: Path) -> StorageError:
    return StorageError(
        f"{path} is not a fieldpad database (not an SQLite file). Nothing was changed. "
        "Check the path given with --db or FIELDPAD_DB."
    )


def connect_read_only(path: Path) -> tuple[sqlite3.Connection, str | None]:
    """A read-only connection to an existing database, opened only through SQLite.

    ``mode=ro`` first; where that cannot work because the ``-shm`` file cannot
    be created (read-only media), ``immutable=1``, which is right only when
    nothing can write the file: the second value then says what is not shown.
    Raises StorageError for a file that is not an SQLite database.
    """
    last = None
    for immutable in (False, True):
        conn = sqlite3.connect(
            read_only_uri(path, immutable=immutable),
            uri=True,
            isolation_level=None,
            check_same_thread=False,
            timeout=BUSY_TIMEOUT_MS / 1000,
        )
        try:
            conn.execute("SELECT COUNT(*) FROM sqlite_master").fetchone()
        except sqlite3.DatabaseError as e:
            conn.close()
            if "not a database" in str(e):
                raise not_a_database(path) from None
            last = e
            continue
        note = None
        if immutable:
            wal = path.with_name(path.name + "-wal")
            if wal.exists() and wal.stat().st_size > 0:
                note = (
                    "its -wal file holds changes not yet folded into the database; they are not shown "
                    "here, but they are not lost: open it where it can be written to see them"
                )
        return conn, note
    raise StorageError(
        f"{path}: the database cannot be read ({last}). Nothing was changed. Run 'fieldpad db check --db {path}'."
    )
