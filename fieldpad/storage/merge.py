"""``fieldpad merge``: bring in the records of other laptops' databases.

What comes across is rows that are written once and never changed, each with a global id and a recorded
time: reading versions, the history of site and board settings (``setting_version``), joins of two ids
(``id_join``) and the extra parents of a version that settled a conflict (``version_parent``).  A row is
copied by its id, never doubled; the site and board rows are then recomputed from their history, field by
field (a rename on one laptop and a PPE change on another both survive), and the current version of each
reading is the one every laptop computes from the same rows (``versions.py``).  So merging is a union:
merging twice changes nothing, and laptops merged in any order hold the same records.  Rounds are still
edited in place (finished, noted): the same id with different contents keeps the larger contents, and a
round finished anywhere is finished.

The other file is only read: attached read-only by URI (any file name), never checkpointed or written.
Before anything is copied it must pass its integrity check, and every row that would come in is checked
with the rules a save or an import uses (``validate_record``, the one text rule ``stored_text``, the site
and board field rules): one bad row refuses the whole file, naming the file, table, row id, field and
reason, and nothing is merged.  The database itself (also through a symlink or a hard link) is refused.
Reading the other file is ``other_file.py``; the checks of its rows, ``merge_checks.py``.
"""

from __future__ import annotations

import os
import sqlite3
from dataclasses import dataclass, field
from pathlib import Path

from . import settings_history, sites
from .access import read_only_uri
from .db import StorageError, write
from .merge_checks import CHECKS, MergeRefused, _BadText, _Check, _check_new_entities, _columns, _fetch, _known
from .other_file import _fingerprint, _inspect_other, _readable_copy, _refuse_self, _unshared_copy
from .rows import ValidationError, insert

#: Rows written once, copied by id (same id: same contents, or the file was altered).
APPEND_ONLY = ("setting_version", "id_join", "reading", "version_parent", "signoff")


@dataclass
class MergeReport:
    added: dict = field(default_factory=dict)
    updated: dict = field(default_factory=dict)
    #: Groups of sites that share a name under different ids (each a list of site rows with ``summary``).
    same_name_sites: list = field(default_factory=list)
    #: Groups of boards of one site that share a name (board rows with ``site_name``).
    same_name_boards: list = field(default_factory=list)
    #: Readings whose versions compete after the merge: reading id -> head version ids.
    conflicts: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)


# ---- the merge --------------------------------------------------------------------------------


def merge_file(db, other: str | os.PathLike) -> MergeReport:
    """Bring in every row of ``other`` that is not here yet, all or nothing (see the module's docstring).

    Raises
    ------
    MergeRefused
        A row failed its check (``problems`` names each); nothing was merged.
    StorageError
        The file is this database, missing, not a fieldpad database, newer, or damaged."""
    path = Path(other)
    _refuse_self(db, path)
    seen = _fingerprint(path)
    report = MergeReport()
    with _unshared_copy(path) as readable:
        applied, uri, note = _inspect_other(readable, path)
        if note:
            report.notes.append(f"{path}: {note}")
        with _readable_copy(readable, applied) as source:
            if source != readable:
                uri = read_only_uri(source)
            db.conn.execute("ATTACH DATABASE ? AS other", [uri])
            try:
                incoming = _collect(db, path)
                if "immutable=1" in uri and _fingerprint(path) != seen:  # read as unchanging: was it?
                    raise StorageError(
                        f"{path} changed while it was being read (another fieldpad wrote to "
                        "it); nothing was merged: try again"
                    )
                with write(db):
                    _bring_in(db, incoming, report)
            finally:
                db.conn.execute("DETACH DATABASE other")
    report.same_name_sites = [
        [{**s, "summary": sites.site_summary(db, s["id"])} for s in group] for group in sites.same_name_sites(db)
    ]
    report.same_name_boards = sites.same_name_boards(db)
    report.conflicts = _conflicts(db)
    return report


def _conflicts(db) -> dict:
    from .versions import conflicts

    return conflicts(db)


def _collect(db, path: Path) -> dict:
    """Every row that would come in, checked; raises MergeRefused if any is bad."""
    conn = db.conn
    ck = _Check(path)
    rows: dict = {}
    for table in (*APPEND_ONLY, "round"):
        main_cols = [c for c, _ in _columns(conn, "main", table)]
        other_cols = {c for c, _ in _columns(conn, "other", table)}
        missing = [c for c in main_cols if c not in other_cols and table != "round"]
        if missing:
            raise StorageError(f"{path}: table {table} has no column {missing[0]}; nothing was merged")
        cols = [c for c in main_cols if c in other_cols]
        new = _fetch(conn, table, cols, f'WHERE o.id NOT IN (SELECT id FROM main."{table}")')
        if table in APPEND_ONLY:
            diff = " OR ".join(f'm."{c}" IS NOT o."{c}"' for c in cols if c != "id")
            for (bad,) in conn.execute(
                f'SELECT o.id FROM other."{table}" o JOIN main."{table}" m ON m.id = o.id WHERE {diff} LIMIT 20'
            ):
                ck.bad(
                    table,
                    bad,
                    "(whole row)",
                    "differs from the row of the same id already here: rows are "
                    "never changed, so this file was altered",
                )
        else:
            diff = " OR ".join(f'm."{c}" IS NOT o."{c}"' for c in cols if c != "id")
            new += _fetch(conn, table, cols, f'JOIN main."{table}" m ON m.id = o.id WHERE {diff}')
        rows[table] = (cols, new)
    rows["setting_version"][1].extend(_legacy_settings(conn, ck))
    known = _known(conn, rows)
    for table, (_cols, items) in rows.items():
        for v, kinds in items:
            CHECKS[table](ck, v, kinds, known)
    _check_new_entities(ck, conn, rows)
    if ck.problems:
        ck.problems.append(f"{path}: nothing was merged")
        raise MergeRefused(ck.problems)
    return rows


def _legacy_settings(conn, ck: _Check) -> list:
    """History rows for the other file's settings that have none (written before there was a history):
    the same content-made rows ``settings_history.backfill_history`` makes, so every laptop agrees."""
    out = []
    for entity, fields in settings_history.HISTORY_FIELDS.items():
        have = {
            (r[0], r[1])
            for r in conn.execute(
                "SELECT DISTINCT entity_id, field FROM other.setting_version WHERE entity = ?", [entity]
            )
        }
        cols = [c for c, _ in _columns(conn, "other", entity)]
        for v, _kinds in _fetch(conn, entity, cols, ""):
            if not isinstance(v.get("id"), str) or not isinstance(v.get("created_at"), str):
                ck.bad(entity, v.get("id"), "id", "a settings row without a text id and creation time")
                continue
            for f in fields:
                if f not in v or (v["id"], f) in have:
                    continue
                if isinstance(v[f], _BadText):
                    ck.bad(entity, v["id"], f, "is not valid UTF-8 text")
                    continue
                row = settings_history.legacy_setting(entity, v, f)
                if conn.execute("SELECT 1 FROM main.setting_version WHERE id = ?", [row["id"]]).fetchone():
                    continue
                out.append((row, {k: "null" if x is None else "text" for k, x in row.items()}))
    return out


def _round_order(r: dict) -> list:
    """A total order of a round's contents, its finish aside: a text given ranks above none."""
    return [(r[c] is not None, str(r[c]) if r[c] is not None else "") for c in sorted(r) if c != "finished_at"]


def _bring_in(db, incoming: dict, report: MergeReport) -> None:
    conn = db.conn
    # The other file's rows come in its own order (a correction may be stored before the version it
    # corrects, as a server returns them): every reference was checked above, and the keys are checked
    # again at the commit, not row by row.
    conn.execute("PRAGMA defer_foreign_keys=ON")
    # This database's own settings from before there was a history first (rows made from their content:
    # the other file may bring the very same ones, which are then here already).
    settings_history.backfill_history(db)
    for table in ("setting_version", "id_join"):
        added = 0
        for v, _ in incoming[table][1]:
            if not conn.execute(f"SELECT 1 FROM {table} WHERE id = ?", [v["id"]]).fetchone():
                insert(db, table, v)
                added += 1
        report.added[table] = added
    before = {e: {r[0] for r in conn.execute(f"SELECT id FROM {e}")} for e in ("site", "board")}
    settings_history.materialize(db, "site")
    round_cols, round_rows = incoming["round"]
    added_rounds = changed_rounds = 0
    for v, _ in round_rows:
        here = list(db.query("SELECT * FROM round WHERE id = ?", [v["id"]]))
        if not here:
            insert(db, "round", v)
            added_rounds += 1
            continue
        m = {c: here[0][c] for c in round_cols}
        # The larger contents (finish aside), and the later finish: each a maximum, so three laptops' edits
        # of one round come to the same in any order.
        winner = dict(max(v, m, key=_round_order))
        # A round finished on either laptop is finished; keep the later finish.
        winner["finished_at"] = max(filter(None, (v.get("finished_at"), m.get("finished_at"))), default=None)
        if winner != m:
            db["round"].update(v["id"], {c: winner[c] for c in round_cols if c != "id"})
            changed_rounds += 1
    settings_history.apply_joins(db)  # boards materialized here, on the sites as shown
    try:
        for table in ("reading", "version_parent", "signoff"):
            cols = incoming[table][0]
            col_sql = ", ".join(f'"{c}"' for c in cols)
            conn.executemany(
                f'INSERT INTO "{table}" ({col_sql}) VALUES ({", ".join("?" * len(cols))})',
                ([v[c] for c in cols] for v, _ in incoming[table][1]),
            )
            report.added[table] = len(incoming[table][1])
    except sqlite3.IntegrityError as e:  # checked above; a constraint of the schema still has the last word
        raise ValidationError([("row", f"not merged: {e}")]) from None
    for e in ("site", "board"):
        report.added[e] = len({r[0] for r in conn.execute(f"SELECT id FROM {e}")} - before[e])
    report.added["round"] = added_rounds
    report.updated["round"] = changed_rounds
