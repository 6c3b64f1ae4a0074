"""What every command shares: problem lines on stderr, reading the input file, opening the database.

Exit status of every command: 0 success, 2 bad input or usage (messages on stderr, one line per problem,
nothing on stdout), 1 any other failure with a one-line message.
"""

from __future__ import annotations

import contextlib
import sys

from ..formats.text import printable

MAX_PROBLEMS = 20
_OPENED: list = []  # databases a command opened: close_opened() closes them, so the WAL is folded back
_REMOVE: list = []  # temporary folders to remove after that


def report_problems(problems: list[str]) -> int:
    """Print up to MAX_PROBLEMS problem lines on stderr; returns exit status 2."""
    for line in problems[:MAX_PROBLEMS]:
        print(printable(line), file=sys.stderr)
    if len(problems) > MAX_PROBLEMS:
        print(f"... and {len(problems) - MAX_PROBLEMS} more problem(s)", file=sys.stderr)
    return 2


def read_input(path: str) -> bytes:
    """The bytes of FILE, or of standard input for ``-``."""
    if path == "-":
        return sys.stdin.buffer.read()
    with open(path, "rb") as f:
        return f.read()


def open_database(args, *, create: bool = False):
    """The database named by --db (or the default).  Commands that only read refuse a path where no
    database exists; ``import`` and ``merge`` (which write) may start one, and say so on stderr."""
    from ..storage.db import open_db, resolve_path

    path = resolve_path(args.db)
    new = create and not path.exists()
    db = open_db(path, create=create)
    _OPENED.append(db)  # closed by close_opened() when the command ends
    if new:
        print(f"created a new database at {path}", file=sys.stderr)
    return db


def open_server_copy(url: str):
    """The crew's whole record from the central server, as a database in a temporary folder that
    close_opened() removes (read by export exactly as a laptop's database is)."""
    import shutil
    import tempfile
    from pathlib import Path

    from ..storage.db import open_db
    from ..storage.server import fetch_all
    from ..storage.server_schema import server_url

    folder = Path(tempfile.mkdtemp(prefix="fieldpad-crew-"))
    _REMOVE.append(lambda: shutil.rmtree(folder, ignore_errors=True))
    path = fetch_all(server_url(url), folder / "crew.db")
    db = open_db(path, create=False)
    _OPENED.append(db)
    return db


def close_opened() -> None:
    """Close every database a command opened (called once the command has returned or failed), then
    remove any temporary copy."""
    while _OPENED:
        with contextlib.suppress(Exception):
            _OPENED.pop().close()
    while _REMOVE:
        with contextlib.suppress(Exception):
            _REMOVE.pop()()
