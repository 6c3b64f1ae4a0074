"""The sync of a laptop's SQLite database with the crew's central PostgreSQL server (where the server is,
the connection and its schema: ``server_schema.py``).

The laptop's database is the field copy and works with no network; the server holds the crew's record.
The server only ever adds rows (db_schema/server/): a row is a laptop row with the same id, so sending one
twice is harmless.  A sync is

1. **send**: the laptop's rows that the server lacks, in one server transaction per sync (COPY into a
   temporary table, then ``INSERT ... ON CONFLICT DO NOTHING``): all of it lands or none of it does.  Reading
   versions are sent only by the technician who recorded them (the server refuses anything else, by
   row-level security), and only once the version each supersedes is on the server or sent with it.
2. **receive**: the rows the server got since this laptop last asked, written into a temporary SQLite
   file and brought in by the same merge as ``fieldpad merge`` (the same checks, ids and current-version
   rule), in one laptop transaction.

What the laptop has sent and received is kept per server (by the server's own id, not its address) in
``sync_state``; it moves only after the step it records has committed, so a sync killed at any moment
leaves nothing partial, and the next sync sends or receives again what was not recorded (harmless).

psycopg comes through ``server_schema`` only (the optional ``server`` extra); libpq's own means carry
passwords (password file, ``PGPASSWORD``, client certificates): none is ever stored in the laptop's database.
"""

from __future__ import annotations

import contextlib
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

from .db import write
from .server_schema import ServerError, _check_schema, _first_line, _psycopg, connect, shown_url

# Laptop tables sent and received, parents first (a board needs its site, a reading its board and round).
TABLES = ("site", "board", "round", "setting_version", "id_join", "reading", "version_parent", "signoff")
# What each role sends: a technician the record of the boards, a supervisor their sign-offs.
TECHNICIAN_TABLES = ("site", "board", "round", "setting_version", "id_join", "reading", "version_parent")
SUPERVISOR_TABLES = ("signoff",)
# Who recorded a row (the server takes it only from that role; None: anyone may send it), and the rows of
# the same table it needs on the server first.
AUTHOR = {
    "setting_version": ("recorded_by", True),
    "id_join": ("recorded_by", True),
    "reading": ("recorded_by", False),
    "signoff": ("signed_by", False),
}


@dataclass
class SyncReport:
    server: str
    role: str
    sent: dict = field(default_factory=dict)  # table -> rows the server did not have
    received: dict = field(default_factory=dict)  # table -> rows new to this laptop
    not_mine: int = 0  # reading versions recorded by someone else: theirs to send
    waiting: int = 0  # versions waiting for the version they supersede to reach the server
    send_tx: str | None = None  # the server transaction that took this sync's rows


def _cols(db, table: str, conn=None) -> list[str]:
    """The laptop table's columns; with ``conn``, only those the server's table has too (a server one
    migration behind still takes what it knows: what a site or board is travels as setting_version rows)."""
    cols = [r[1] for r in db.conn.execute(f"PRAGMA main.table_info({table})")]
    if conn is None:
        return cols
    there = {
        r[0] for r in conn.execute("SELECT column_name FROM information_schema.columns WHERE table_name = %s", [table])
    }
    return [c for c in cols if c in there]


def _state(db, sid: str) -> dict:
    rows = db.conn.execute("SELECT tbl, sent_rowid, received_tx FROM sync_state WHERE server_id = ?", [sid])
    return {t: (s, r) for t, s, r in rows}


def pending_count(db, technician: str | None, *, any_author: bool = False) -> int | None:
    """Reading versions (recorded by ``technician``, or by anyone) that this laptop has not yet sent or seen
    on a server; None where it never synced."""
    row = db.conn.execute("SELECT MAX(sent_rowid) FROM sync_state WHERE tbl = 'reading'").fetchone()
    if row[0] is None:
        return None
    if any_author:
        return db.conn.execute("SELECT COUNT(*) FROM reading WHERE rowid > ?", [row[0]]).fetchone()[0]
    return db.conn.execute(
        "SELECT COUNT(*) FROM reading WHERE rowid > ? AND recorded_by IS ?", [row[0], technician]
    ).fetchone()[0]


def last_sync(db) -> dict | None:
    """When this laptop last synced, with which server (address without password) and what moved."""
    r = db.conn.execute(
        "SELECT server_id, shown_url, synced_at, sent, received FROM sync_log ORDER BY synced_at DESC LIMIT 1"
    ).fetchone()
    return dict(zip(("server_id", "server", "synced_at", "sent", "received"), r)) if r else None


def sync(db, url: str) -> SyncReport:
    """Send what the server lacks, then receive what this laptop lacks (see the module docstring)."""
    if db.read_only:
        raise ServerError(f"this database cannot be written ({db.read_only_reason}): nothing can be received")
    psycopg = _psycopg()
    conn = connect(url)
    try:
        sid = _check_schema(conn)
        role = conn.execute("SELECT current_user").fetchone()[0]
        conn.commit()
        report = SyncReport(server=shown_url(url), role=role)
        from .settings_history import backfill_history

        with write(db):  # settings from before there was a history get their rows, and are sent as rows
            backfill_history(db)
        try:
            _send(db, conn, sid, role, report)
            _receive(db, conn, sid, report)
        except psycopg.errors.InsufficientPrivilege as e:
            raise ServerError(
                f"the server refused: {_first_line(e)}. Nothing of this step was kept; "
                "ask the server's administrator which role this login has"
            ) from None
        except psycopg.OperationalError as e:
            raise ServerError(
                f"the connection to the server {shown_url(url)} was lost: {_first_line(e)}. What was not "
                "confirmed is sent again at the next sync; nothing is lost."
            ) from None
        except psycopg.Error as e:
            raise ServerError(
                f"the server refused the sync: {_first_line(e)}. Nothing of the step it refused "
                "was kept; this laptop's records are unchanged."
            ) from None
        from .ids import utc_now

        with write(db):
            db.conn.execute(
                "INSERT INTO sync_log (server_id, shown_url, synced_at, sent, received) "
                "VALUES (?, ?, ?, ?, ?) ON CONFLICT(server_id) DO UPDATE SET "
                "shown_url = excluded.shown_url, synced_at = excluded.synced_at, "
                "sent = excluded.sent, received = excluded.received",
                [sid, report.server, utc_now(), sum(report.sent.values()), sum(report.received.values())],
            )
        return report
    finally:
        with contextlib.suppress(Exception):
            conn.close()


def _send(db, conn, sid: str, role: str, report: SyncReport) -> None:
    state = _state(db, sid)
    tech, boss = conn.execute(
        "SELECT pg_has_role('fieldpad_technician', 'MEMBER'), pg_has_role('fieldpad_supervisor', 'MEMBER')"
    ).fetchone()
    conn.commit()
    tables = (TECHNICIAN_TABLES if tech else ()) + (SUPERVISOR_TABLES if boss else ())
    batches, marks = {}, {}
    for table in tables:
        cols = _cols(db, table, conn)
        since = state.get(table, (0, "0"))[0]
        rows = db.conn.execute(
            f"SELECT rowid, {', '.join(cols)} FROM {table} WHERE rowid > ? ORDER BY rowid", [since]
        ).fetchall()
        top = rows[-1][0] if rows else since
        held_from = None
        if table in AUTHOR or table == "version_parent":
            rows, held_from = _sendable(conn, table, cols, rows, role, report, batches)
        # The mark stops below the first row still waiting, so it is looked at again next time.
        top = min(top, held_from - 1) if held_from is not None else top
        batches[table] = (cols, [r[1:] for r in rows])
        marks[table] = top
    with conn.transaction():
        # This send's own transaction: the receive that follows need not bring its rows back.
        report.send_tx = str(conn.execute("SELECT pg_current_xact_id()").fetchone()[0])
        for table in tables:
            cols, rows = batches[table]
            if not rows:
                report.sent[table] = 0
                continue
            col_sql = ", ".join(cols)
            conn.execute(f"CREATE TEMP TABLE incoming_{table} (LIKE {table} INCLUDING DEFAULTS) ON COMMIT DROP")
            with conn.cursor().copy(f"COPY incoming_{table} ({col_sql}) FROM STDIN") as cp:
                for r in rows:
                    cp.write_row(r)
            # Rows the server has already (sent before, or by another laptop) are left as they are.
            cur = conn.execute(
                f"INSERT INTO {table} ({col_sql}) SELECT {col_sql} FROM incoming_{table} ON CONFLICT (id) DO NOTHING"
            )
            report.sent[table] = cur.rowcount
    # Only now that the server has committed: what was sent need not be looked at again.
    with write(db):
        for table, top in marks.items():
            db.conn.execute(
                "INSERT INTO sync_state (server_id, tbl, sent_rowid) VALUES (?, ?, ?) "
                "ON CONFLICT(server_id, tbl) DO UPDATE SET sent_rowid = excluded.sent_rowid",
                [sid, table, top],
            )


def _on_server(conn, table: str, ids) -> set:
    ids = sorted({i for i in ids if i})
    if not ids:
        return set()
    found = {x[0] for x in conn.execute(f"SELECT id FROM {table} WHERE id = ANY(%s)", [ids])}
    conn.commit()
    return found


#: The rows of the same send a row needs on the server first: (its column, the table it names).
NEEDS = {
    "reading": (("supersedes", "reading"),),
    "version_parent": (("version_id", "reading"), ("parent_id", "reading")),
    "signoff": (("site_id", "site"), ("round_id", "round")),
}


def _sendable(conn, table, cols, rows, role, report, batches):
    """The rows of ``table`` this role may send and the server can take now; returns (rows to send, rowid of
    the first held back or None).  ``rows`` are (rowid, *cols) in rowid order; ``batches`` what this send
    already holds of the tables before this one.

    A row recorded by someone else (``AUTHOR``) is theirs to send: where the server lacks it, it is counted
    (``not_mine``) and held, and looked at again until their laptop has sent it.  A reading version waits
    for the version it supersedes, a settling version's extra parent for both its versions, a sign-off for
    its site and round: on the server, or in this send."""
    col = {c: cols.index(c) + 1 for c in cols}
    author, anyone = AUTHOR.get(table, (None, True))

    def own(r):
        return author is None or r[col[author]] == role or (anyone and r[col[author]] is None)

    theirs = {r[0] for r in rows if not own(r)}
    present = _on_server(conn, table, (r[col["id"]] for r in rows if r[0] in theirs))
    known: dict = {}
    for fk, parent in NEEDS.get(table, ()):
        ids = known.setdefault(parent, set())
        ids |= _on_server(conn, parent, (r[col[fk]] for r in rows if r[0] not in theirs))
        if parent in batches:
            pcols, prows = batches[parent]
            ids |= {r[pcols.index("id")] for r in prows}
    sent: set = set()
    send, held = [], []
    for r in rows:
        if r[0] in theirs:
            if r[col["id"]] not in present:
                report.not_mine += 1
                held.append(r[0])
            continue
        if all(
            r[col[fk]] is None or r[col[fk]] in known[parent] or (parent == table and r[col[fk]] in sent)
            for fk, parent in NEEDS.get(table, ())
        ):
            sent.add(r[col["id"]])
            send.append(r)
        else:
            report.waiting += 1
            held.append(r[0])
    return send, (held[0] if held else None)


def _receive(db, conn, sid: str, report: SyncReport) -> None:
    from .merge import merge_file

    state = _state(db, sid)
    psycopg = _psycopg()
    conn.isolation_level = psycopg.IsolationLevel.REPEATABLE_READ
    got, marks = {}, {}
    try:
        with conn.transaction():
            # Every transaction older than this one's xmin has ended: rows added later all have tx >= mark.
            mark = str(conn.execute("SELECT pg_snapshot_xmin(pg_current_snapshot())").fetchone()[0])
            for table in TABLES:
                cols = _cols(db, table, conn)
                since = state.get(table, (0, "0"))[1] or "0"
                got[table] = (
                    cols,
                    conn.execute(
                        f"SELECT {', '.join(cols)} FROM {table} WHERE tx >= %s::xid8 AND tx <> %s::xid8",
                        [since, report.send_tx or "0"],
                    ).fetchall(),
                )
                marks[table] = mark
    finally:
        conn.isolation_level = None
    if any(rows for _, rows in got.values()):
        with tempfile.TemporaryDirectory(prefix="fieldpad-sync-") as tmp:
            path = Path(tmp) / "from-server.db"
            _write_snapshot(db, path, got)
            rep = merge_file(db, path)
        report.received = {t: rep.added.get(t, 0) for t in TABLES}
    else:
        report.received = dict.fromkeys(TABLES, 0)
    with write(db):
        for table, mark in marks.items():
            db.conn.execute(
                "INSERT INTO sync_state (server_id, tbl, received_tx) VALUES (?, ?, ?) "
                "ON CONFLICT(server_id, tbl) DO UPDATE SET received_tx = excluded.received_tx",
                [sid, table, mark],
            )
            # Rows that came from the server need not be sent: where nothing else was added since the send,
            # the send mark moves past them (so "not yet sent" counts only what really waits).
            cols, rows = got[table]
            came = {r[cols.index("id")] for r in rows}
            sent_mark = db.conn.execute(
                "SELECT sent_rowid FROM sync_state WHERE server_id = ? AND tbl = ?", [sid, table]
            ).fetchone()[0]
            above = db.conn.execute(f"SELECT rowid, id FROM {table} WHERE rowid > ?", [sent_mark]).fetchall()
            if above and all(i in came for _, i in above):
                db.conn.execute(
                    "UPDATE sync_state SET sent_rowid = ? WHERE server_id = ? AND tbl = ?",
                    [max(r for r, _ in above), sid, table],
                )


def _write_snapshot(db, path: Path, got: dict) -> None:
    """The received rows as a fieldpad database file, with the rows they refer to that this laptop already
    holds (so the file is whole by itself, as merge requires)."""
    from .db import open_db

    snap = open_db(path, create=True)
    try:
        # Rows arrive before the rows they refer to are filled in from the laptop: keys are checked after.
        snap.conn.execute("PRAGMA foreign_keys=OFF")
        with write(snap):
            for table in TABLES:
                cols, rows = got[table]
                if rows:
                    snap.conn.executemany(
                        f"INSERT OR IGNORE INTO {table} ({', '.join(cols)}) VALUES ({', '.join('?' * len(cols))})", rows
                    )
    finally:
        snap.close()
    _fill_parents(db, path)


_PARENTS = (
    ("board", "site_id", "site"),
    ("round", "site_id", "site"),
    ("reading", "board_id", "board"),
    ("reading", "round_id", "round"),
    ("reading", "supersedes", "reading"),
    ("signoff", "site_id", "site"),
    ("signoff", "round_id", "round"),
    ("version_parent", "version_id", "reading"),
    ("version_parent", "parent_id", "reading"),
)


def _fill_parents(db, path: Path) -> None:
    """Copy into the snapshot at ``path`` the laptop's rows its rows refer to.  Done from the laptop's own
    connection, with the snapshot attached: the laptop's file is never opened a second time in this process
    (closing that second descriptor would drop the locks this process's connections hold on it; see
    ``db.open_db``)."""
    conn = db.conn
    conn.execute("ATTACH DATABASE ? AS snap", [path.resolve().as_uri()])
    try:
        conn.execute("BEGIN IMMEDIATE")
        try:
            # Parents arrive in any order: keys are checked at the commit (and by foreign_key_check after).
            conn.execute("PRAGMA defer_foreign_keys=ON")
            for _ in range(3):  # a board's site may be missing too: a few passes reach every ancestor
                for child, fk, parent in reversed(_PARENTS):
                    conn.execute(
                        f"INSERT OR IGNORE INTO snap.{parent} SELECT * FROM main.{parent} WHERE id IN "
                        f"(SELECT {fk} FROM snap.{child} WHERE {fk} IS NOT NULL "
                        f"AND {fk} NOT IN (SELECT id FROM snap.{parent}))"
                    )
            # A site or board row as first sent is not what it is now: its whole settings history goes with
            # it (merge computes the row from that history, and would otherwise take the row as history).
            for entity in ("site", "board"):
                conn.execute(
                    "INSERT OR IGNORE INTO snap.setting_version SELECT * FROM main.setting_version "
                    f"WHERE entity = '{entity}' AND entity_id IN (SELECT id FROM snap.{entity})"
                )
            conn.execute("COMMIT")
        except BaseException:
            conn.execute("ROLLBACK")
            raise
        missing = conn.execute("PRAGMA snap.foreign_key_check").fetchall()
    finally:
        conn.execute("DETACH DATABASE snap")
    if missing:
        raise ServerError(
            f"the server sent {len(missing)} row(s) whose board, site, round or earlier version it "
            "did not send: nothing was received (run 'fieldpad sync' again)"
        )


def fetch_all(url: str, dest: Path) -> Path:
    """The whole crew record from the server as a fieldpad database file at ``dest`` (for export): the
    server's rows written to a file beside it, then brought in by the same merge as a laptop's (which
    checks every row and computes each site and board from its settings history)."""
    from .db import open_db
    from .merge import merge_file

    conn = connect(url)
    try:
        _check_schema(conn)
        got = {}
        with conn.transaction():
            for table in TABLES:
                cols = [
                    r[0]
                    for r in conn.execute(
                        "SELECT column_name FROM information_schema.columns WHERE table_name = %s AND column_name "
                        "NOT IN ('tx', 'sent_by', 'received_at') ORDER BY ordinal_position",
                        [table],
                    )
                ]
                got[table] = (cols, conn.execute(f"SELECT {', '.join(cols)} FROM {table}").fetchall())
    finally:
        conn.close()
    raw = dest.with_name(dest.name + ".from-server")
    snap = open_db(raw, create=True)
    try:
        snap.conn.execute("PRAGMA foreign_keys=OFF")
        with write(snap):
            for table in TABLES:
                cols, rows = got[table]
                if rows:
                    snap.conn.executemany(
                        f"INSERT INTO {table} ({', '.join(cols)}) VALUES ({', '.join('?' * len(cols))})", rows
                    )
    finally:
        snap.close()
    db = open_db(dest, create=True)
    try:
        merge_file(db, raw)
    finally:
        db.close()
    return dest
