"""The other laptop's file that ``merge`` reads (see ``merge.py``), only ever read: not this database
itself (also through a symlink or a hard link), opened read-only so that nothing is created beside it
(``immutable=1`` without a -wal, ``mode=ro`` with one), its size, time and inode to compare after reading,
its integrity and schema checked first, and read through a copy in a temporary folder where it must be (a
-wal without a -shm; a file of an older fieldpad, upgraded in the copy, never in place)."""

from __future__ import annotations

import contextlib
import os
import shutil
import sqlite3
import tempfile
from pathlib import Path

from .access import connect_read_only, read_only_uri
from .db import StorageError, schema_version_names
from .merge_checks import MergeRefused


def _refuse_self(db, path: Path) -> None:
    if not path.exists():
        raise StorageError(f"{path}: no such file")
    if path.is_dir():
        raise StorageError(f"{path} is a folder, not a database file")
    main_file = db.conn.execute("PRAGMA database_list").fetchone()[2]
    if main_file and os.path.exists(main_file):
        a, b = os.stat(main_file), os.stat(path)  # follows symlinks; a hard link has the same inode
        if (a.st_dev, a.st_ino) == (b.st_dev, b.st_ino):
            raise StorageError(
                f"{path} is the database being merged into (the same file"
                + (", through a link" if os.path.abspath(path) != os.path.abspath(main_file) else "")
                + "): nothing to bring in"
            )


def _wal(path: Path) -> Path:
    return path.with_name(path.name + "-wal")


def _fingerprint(path: Path) -> tuple:
    """Size and change time of the file and whether it has a -wal: what reading it must leave as it was."""
    st = path.stat()
    return st.st_size, st.st_mtime_ns, st.st_ino, _wal(path).exists()


def _open_other(path: Path) -> tuple[sqlite3.Connection, str, str | None]:
    """A read-only connection to the other file that creates nothing beside it.

    Without a -wal (the other laptop closed it) every record is in the file itself, which is read as
    unchanging (``immutable=1``: SQLite then makes no -wal or -shm beside it; a plain read-only
    connection would, and leave them there); the caller checks afterwards that it did not change
    meanwhile.  With a -wal (the other laptop's app has it open, or was stopped) it is read ``mode=ro``
    with the WAL's changes; SQLite then updates only its shared-memory index (-shm), never the file or
    its -wal.  Returns the connection, the URI to attach the same way, and a note if changes in the
    -wal could not be read (read-only medium)."""
    if not _wal(path).exists():
        uri = read_only_uri(path, immutable=True)
        conn = sqlite3.connect(uri, uri=True, isolation_level=None, check_same_thread=False)
        try:
            conn.execute("SELECT COUNT(*) FROM sqlite_master").fetchone()
        except (sqlite3.DatabaseError, UnicodeDecodeError) as e:  # a flipped byte in its schema text too
            conn.close()
            if "not a database" in str(e):
                raise StorageError(
                    f"{path} is not a fieldpad database (not an SQLite file); nothing was merged"
                ) from None
            raise StorageError(f"{path} cannot be read ({e}); nothing was merged") from None
        return conn, uri, None
    conn, note = connect_read_only(path)
    return conn, read_only_uri(path, immutable=bool(note)), note


def _inspect_other(path: Path, name: Path) -> tuple[list[str], str, str | None]:
    """Integrity and schema of the other file, through a read-only connection: its applied migrations,
    the URI to attach it by, and a note if its WAL cannot be read (read-only medium)."""
    conn, uri, note = _open_other(path)
    path = name  # the file as the person named it (``path`` may be a copy of it), in every message
    try:
        try:
            bad = [r[0] for r in conn.execute("PRAGMA integrity_check(20)").fetchall() if r[0] != "ok"]
            bad += [
                f"{t} row {rowid} refers to a missing {parent}"
                for t, rowid, parent, _ in conn.execute("PRAGMA foreign_key_check").fetchall()[:20]
            ]
        except (sqlite3.DatabaseError, UnicodeDecodeError) as e:  # a flipped byte in its schema text too
            bad = [f"the file is damaged ({e})"]
        if bad:
            raise MergeRefused([f"{path}: fails its integrity check: {b}; nothing was merged" for b in bad[:20]])
        try:
            names = {r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type='table'")}
            if not {"site", "board", "round", "reading", "_sqlite_migrations"} <= names:
                raise StorageError(f"{path} is not a fieldpad database (tables missing); nothing was merged")
            applied = [r[0] for r in conn.execute("SELECT name FROM _sqlite_migrations WHERE migration_set='fieldpad'")]
        except (sqlite3.DatabaseError, UnicodeDecodeError) as e:  # a flipped byte in its schema text too
            raise StorageError(f"{path} cannot be read ({e}); nothing was merged") from None
    finally:
        conn.close()
    unknown = set(applied) - set(schema_version_names())
    if unknown:
        raise StorageError(
            f"{path} was written by a newer fieldpad (schema {max(unknown)}); update fieldpad first; nothing was merged"
        )
    return applied, uri, note


@contextlib.contextmanager
def _unshared_copy(path: Path):
    """A -wal with no -shm beside it (the files were copied off a laptop, or its fieldpad was stopped and
    the -shm removed): no process has it open, and reading it with SQLite would create a -shm beside it.
    Then the file and its -wal are copied to a temporary folder and the copy is read.  (This process has
    no connection to the other file, so reading its bytes drops no lock of ours.)"""
    wal, shm = _wal(path), path.with_name(path.name + "-shm")
    if not wal.exists() or shm.exists():
        yield path
        return
    folder = Path(tempfile.mkdtemp(prefix="fieldpad-merge-"))
    try:
        copy = folder / "incoming.db"
        shutil.copyfile(path, copy)
        shutil.copyfile(wal, folder / "incoming.db-wal")
        yield copy
    finally:
        shutil.rmtree(folder, ignore_errors=True)


@contextlib.contextmanager
def _readable_copy(path: Path, applied: list[str]):
    """The file to read rows from: the other file itself, or for one written by an older fieldpad an
    upgraded copy in a temporary folder (the other file is never upgraded in place)."""
    if set(schema_version_names()) <= set(applied):
        yield path
        return
    from .db import open_db

    folder = Path(tempfile.mkdtemp(prefix="fieldpad-merge-"))
    try:
        copy = folder / "incoming.db"
        src, _, _ = _open_other(path)
        try:
            out = sqlite3.connect(copy)
            try:
                src.backup(out)
            finally:
                out.close()
        finally:
            src.close()
        open_db(copy).close()  # the migrations, on the copy
        yield copy
    finally:
        shutil.rmtree(folder, ignore_errors=True)
