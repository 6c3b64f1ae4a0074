"""``fieldpad merge``: bring in the records of other fieldpad databases.

Reading versions are immutable, so they are copied by id and never doubled.
Sites, boards and rounds can be edited; where both databases hold the same id
with different contents, the later-updated one wins (then the larger content,
so the result does not depend on the order of merges).  Merging twice changes
nothing; merging A then B gives the same data as B then A.  A board that
exists under the same site name and board name with different ids is
reported, not silently doubled or joined.
"""
from __future__ import annotations

import json
import os
from dataclasses import dataclass, field
from pathlib import Path

from .access import connect_read_only, read_only_uri
from .db import StorageError, schema_version_names, write

TABLES = ("site", "board", "round", "reading")
EDITABLE = {"site": "updated_at", "board": "updated_at", "round": None}


@dataclass
class MergeReport:
    added: dict = field(default_factory=dict)
    updated: dict = field(default_factory=dict)
    same_name_boards: list = field(default_factory=list)
    same_name_sites: list = field(default_factory=list)


def _check_other(db, path: Path) -> None:
    """Read the other file through SQLite only (never a plain open: see ``db.open_db``), read-only."""
    if not path.exists():
        raise StorageError(f"{path}: no such file")
    main_file = db.conn.execute("PRAGMA database_list").fetchone()[2]
    if main_file and os.path.exists(main_file) and os.path.samefile(main_file, path):
        raise StorageError(f"{path} is the database being merged into: nothing to bring in")
    conn, _ = connect_read_only(path)
    try:
        names = {r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type='table'")}
        if not {"site", "board", "round", "reading", "_sqlite_migrations"} <= names:
            raise StorageError(f"{path} is not a fieldpad database (tables missing)")
        applied = [r[0] for r in conn.execute("SELECT name FROM _sqlite_migrations WHERE migration_set='fieldpad'")]
    finally:
        conn.close()
    unknown = set(applied) - set(schema_version_names())
    if unknown:
        raise StorageError(f"{path} was written by a newer fieldpad (schema {max(unknown)}); update fieldpad first")


def _key(row: dict, stamp: str | None):
    return (row.get(stamp) or "" if stamp else "", json.dumps(row, sort_keys=True, default=str))


def merge_file(db, other: str | Path) -> MergeReport:
    other = Path(other)
    _check_other(db, other)
    report = MergeReport()
    conn = db.conn
    # Read-only: merging never writes to (or checkpoints) the other laptop's file.
    conn.execute("ATTACH DATABASE ? AS other", [read_only_uri(other)])
    try:
        with write(db):
            for table in TABLES:
                cols = [r[1] for r in conn.execute(f"PRAGMA main.table_info({table})")]
                other_cols = {r[1] for r in conn.execute(f"PRAGMA other.table_info({table})")}
                common = [c for c in cols if c in other_cols]
                col_sql = ", ".join(f'"{c}"' for c in common)
                before = conn.execute(f"SELECT COUNT(*) FROM main.{table}").fetchone()[0]
                conn.execute(f"INSERT OR IGNORE INTO main.{table} ({col_sql}) SELECT {col_sql} FROM other.{table}")
                report.added[table] = conn.execute(f"SELECT COUNT(*) FROM main.{table}").fetchone()[0] - before
                if table in EDITABLE:
                    report.updated[table] = _reconcile(db, table, common, EDITABLE[table])
            report.same_name_sites = [
                r["name"] for r in db.query(
                    "SELECT name FROM site GROUP BY name HAVING COUNT(DISTINCT id) > 1 ORDER BY name")]
            report.same_name_boards = [
                f"{r['site']} / {r['board']}" for r in db.query(
                    "SELECT s.name AS site, b.name AS board FROM board b JOIN site s ON s.id = b.site_id "
                    "GROUP BY s.name, b.name HAVING COUNT(DISTINCT b.id) > 1 ORDER BY 1, 2")]
    finally:
        conn.execute("DETACH DATABASE other")
    return report


def _reconcile(db, table: str, cols: list, stamp: str | None) -> int:
    """Same id, different contents: keep the later (then larger) row."""
    col_sql = ", ".join(f'o."{c}" AS "{c}"' for c in cols)
    diff = " OR ".join(f'm."{c}" IS NOT o."{c}"' for c in cols if c != "id")
    changed = 0
    for o in list(db.query(f"SELECT {col_sql} FROM other.{table} o JOIN main.{table} m ON m.id = o.id WHERE {diff}")):
        row = next(db.query(f"SELECT * FROM main.{table} WHERE id = ?", [o["id"]]))
        m = {c: row[c] for c in cols}
        winner = dict(max(o, m, key=lambda r: _key(r, stamp)))
        if table == "round":
            # A round finished on either laptop is finished; keep the later finish.
            winner["finished_at"] = max(filter(None, (o["finished_at"], m["finished_at"])), default=None)
        if winner != m:
            db[table].update(o["id"], {c: winner[c] for c in cols if c != "id"})
            changed += 1
    return changed
