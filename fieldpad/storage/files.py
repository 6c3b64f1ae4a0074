"""Files that appear whole or not at all: exports and backups.

A file is written under a short temporary name in the folder it is meant for
(``.fp-PID-XXXX.part``: short, so a final name of up to the file system's 255
bytes still fits), flushed to disk, checked where the caller can check it, and
only then given its final name.  A killed run leaves at most its part file,
which the next run in that folder removes (the process that owned it is gone).
The final name is never a half file, and a target that is not a regular file
(a FIFO, a device, a folder) is refused rather than replaced.
"""

from __future__ import annotations

import contextlib
import errno
import os
import secrets
import stat
from pathlib import Path

PART_PREFIX = ".fp-"
PART_SUFFIX = ".part"


class FileWriteError(OSError):
    """Writing a file failed; ``str()`` names the final file (never the part file) and the reason."""

    def __str__(self) -> str:
        return f"{self.filename}: {self.strerror}"


def _reason(e: OSError) -> str:
    if e.errno == errno.ENOSPC:
        return "the disk is full; nothing was written under that name"
    if e.errno == errno.EROFS:
        return "the folder is on a read-only file system; nothing was written"
    if e.errno in (errno.EACCES, errno.EPERM):
        return "no permission to write in that folder; nothing was written"
    return f"{e.strerror or e}; nothing was written under that name"


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def clean_stale_parts(folder: Path) -> int:
    """Remove part files left in ``folder`` by fieldpad runs that were killed.  Returns how many."""
    removed = 0
    try:
        names = os.listdir(folder)
    except OSError:
        return 0
    for name in names:
        if not (name.startswith(PART_PREFIX) and name.endswith(PART_SUFFIX)):
            continue
        try:
            pid = int(name[len(PART_PREFIX) :].split("-", 1)[0])
        except ValueError:
            continue
        if pid != os.getpid() and not _pid_alive(pid):
            with contextlib.suppress(OSError):
                os.unlink(folder / name)
                removed += 1
    return removed


def part_path(final: Path) -> Path:
    """A fresh part-file name beside ``final``."""
    return final.parent / f"{PART_PREFIX}{os.getpid()}-{secrets.token_hex(4)}{PART_SUFFIX}"


SIDE_FILES = ("-wal", "-shm", "-journal")
SQLITE_HEADER = b"SQLite format 3\x00"


def check_target(final: Path, *, overwrite: bool, protect=(), stdout_hint: bool = False) -> None:
    """Refuse a target that is not a regular file, or that exists when it must not; and never write over a
    database: one of ``protect`` (the databases this process has open), the ``-wal``, ``-shm`` or
    ``-journal`` file beside any database, or an existing SQLite file."""
    for db in protect:
        db = Path(db)
        names = [db] + [db.with_name(db.name + side) for side in SIDE_FILES]
        if any(
            final.absolute() == n.absolute() or (final.exists() and n.exists() and os.path.samefile(final, n))
            for n in names
        ):
            raise FileWriteError(
                errno.EINVAL, "is the database itself (or one of its files): choose another name", str(final)
            )
    if final.name.endswith(SIDE_FILES) and final.with_name(final.name.rsplit("-", 1)[0]).exists():
        raise FileWriteError(
            errno.EINVAL, "is a name SQLite keeps for the database beside it: choose another name", str(final)
        )
    try:
        st = os.stat(final)
    except FileNotFoundError:
        if not final.parent.is_dir():
            raise FileWriteError(errno.ENOENT, "no such folder", str(final)) from None
        return
    if not stat.S_ISREG(st.st_mode):
        raise FileWriteError(
            errno.EINVAL,
            "not a regular file (a folder, FIFO or device); give a file name"
            + (", or '-' for standard output" if stdout_hint else ""),
            str(final),
        )
    if not overwrite:
        raise FileWriteError(errno.EEXIST, "already exists: choose a new name", str(final))
    # Not one of this process's open databases (checked above), so reading its first bytes cannot drop a
    # lock that SQLite holds here.
    with open(final, "rb") as f:
        if f.read(16) == SQLITE_HEADER:
            raise FileWriteError(
                errno.EEXIST, "is an SQLite database: an export never replaces one; choose another name", str(final)
            )


def fsync_folder(folder: Path) -> None:
    with contextlib.suppress(OSError):
        fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


def publish(part: Path, final: Path, *, overwrite: bool) -> None:
    """Give a finished part file its final name (replacing only when ``overwrite``)."""
    if overwrite:
        os.replace(part, final)
    else:
        try:
            os.link(part, final)  # fails if final exists: no overwrite even in a race
        except FileExistsError:
            raise FileWriteError(errno.EEXIST, "already exists: choose a new name", str(final)) from None
        except OSError:
            if final.exists():
                raise FileWriteError(errno.EEXIST, "already exists: choose a new name", str(final)) from None
            os.replace(part, final)  # file systems without hard links (FAT sticks)
        else:
            os.unlink(part)
    fsync_folder(final.parent)


def atomic_write_text(path: str | os.PathLike, text: str, *, encoding: str = "utf-8", protect=()) -> Path:
    """Write ``text`` to ``path`` whole or not at all (private permissions); replaces a regular file that is
    not a database (``protect``: the databases this process has open, see :func:`check_target`)."""
    atomic_write_with(path, lambda f: f.write(text.encode(encoding)), protect=protect)
    return Path(path)


def atomic_write_with(path: str | os.PathLike, fill, *, protect=()):
    """Output written whole or not at all: ``fill(f)`` writes bytes to a part file ``f`` beside ``path`` (private
    permissions), which is flushed, synced and renamed to ``path`` only when ``fill`` returns; on any error
    the part file is removed.  Replaces a regular file that is not a database (``protect``: the databases
    this process has open, see :func:`check_target`).  Returns what ``fill`` returns."""
    final = Path(path)
    check_target(final, overwrite=True, protect=protect)
    clean_stale_parts(final.parent)
    part = part_path(final)
    try:
        fd = os.open(part, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        with os.fdopen(fd, "wb") as f:
            got = fill(f)
            f.flush()
            os.fsync(f.fileno())
        publish(part, final, overwrite=True)
    except FileWriteError:
        with contextlib.suppress(OSError):
            os.unlink(part)
        raise
    except OSError as e:
        with contextlib.suppress(OSError):
            os.unlink(part)
        raise FileWriteError(e.errno or errno.EIO, _reason(e), str(final)) from None
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(part)
        raise
    return got
