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
"""
from __future__ import annotations

import contextlib
import json
import os
import re
import shutil
import sqlite3
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

from ..core.fields import NUMERIC_FIELDS
from ..core.readings import stored_text, validate_record
from . import sites
from .access import connect_read_only, read_only_uri
from .db import StorageError, schema_version_names, write
from .rows import ValidationError, insert

#: Rows written once, copied by id (same id: same contents, or the file was altered).
APPEND_ONLY = ("setting_version", "id_join", "reading", "version_parent", "signoff")
STAMP = re.compile(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{6}Z")
#: Text columns of each table and their longest length (the limits of save and import).
TEXT = {
    "reading": {"technician": 200, "instrument": 200, "note": 10_000, "reason": 2000, "recorded_by": 200},
    "round": {"label": 200, "technician": 200, "note": 10_000},
    "setting_version": {"recorded_by": 200},
    "id_join": {"recorded_by": 200, "reason": 2000},
    "version_parent": {},
    "signoff": {"signed_by": 200, "note": 10_000},
}
MAX_PROBLEMS = 200


class MergeRefused(StorageError):
    """The other file was not merged; ``problems`` are lines naming file, table, row id, field and reason."""

    def __init__(self, problems: list[str]):
        self.problems = problems
        more = sum(not p.endswith("nothing was merged") for p in problems[1:])
        super().__init__(problems[0] + (f" (and {more} more problem(s))" if more else "")
                         + ("" if problems[0].endswith("nothing was merged") else "; nothing was merged"))


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


# ---- the other file: not ourselves, healthy, a fieldpad database --------------------------


def _refuse_self(db, path: Path) -> None:
    if not path.exists():
        raise StorageError(f"{path}: no such file")
    if path.is_dir():
        raise StorageError(f"{path} is a folder, not a database file")
    main_file = db.conn.execute("PRAGMA database_list").fetchone()[2]
    if main_file and os.path.exists(main_file):
        a, b = os.stat(main_file), os.stat(path)  # follows symlinks; a hard link has the same inode
        if (a.st_dev, a.st_ino) == (b.st_dev, b.st_ino):
            raise StorageError(f"{path} is the database being merged into (the same file"
                               + (", through a link" if os.path.abspath(path) != os.path.abspath(main_file)
                                  else "") + "): nothing to bring in")


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
        except sqlite3.DatabaseError as e:
            conn.close()
            if "not a database" in str(e):
                raise StorageError(f"{path} is not a fieldpad database (not an SQLite file); nothing was "
                                   "merged") from None
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
            bad += [f"{t} row {rowid} refers to a missing {parent}"
                    for t, rowid, parent, _ in conn.execute("PRAGMA foreign_key_check").fetchall()[:20]]
        except sqlite3.DatabaseError as e:
            bad = [f"the file is damaged ({e})"]
        if bad:
            raise MergeRefused([f"{path}: fails its integrity check: {b}; nothing was merged" for b in bad[:20]])
        try:
            names = {r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type='table'")}
            if not {"site", "board", "round", "reading", "_sqlite_migrations"} <= names:
                raise StorageError(f"{path} is not a fieldpad database (tables missing); nothing was merged")
            applied = [r[0] for r in conn.execute(
                "SELECT name FROM _sqlite_migrations WHERE migration_set='fieldpad'")]
        except sqlite3.DatabaseError as e:
            raise StorageError(f"{path} cannot be read ({e}); nothing was merged") from None
    finally:
        conn.close()
    unknown = set(applied) - set(schema_version_names())
    if unknown:
        raise StorageError(f"{path} was written by a newer fieldpad (schema {max(unknown)}); update fieldpad "
                           "first; nothing was merged")
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


# ---- reading rows without trusting them ---------------------------------------------------


def _columns(conn, schema: str, table: str) -> list[tuple[str, str]]:
    return [(r[1], (r[2] or "").upper()) for r in conn.execute(f'PRAGMA {schema}.table_info("{table}")')]


def _raw_select(cols: list[str]) -> str:
    """Each column with its storage class; text read as bytes (invalid UTF-8 is found, not crashed on)."""
    return ", ".join(f'typeof(o."{c}"), CASE WHEN typeof(o."{c}") = \'text\' THEN CAST(o."{c}" AS BLOB) '
                     f'ELSE o."{c}" END' for c in cols)


def _decode(row: tuple, cols: list[str]) -> tuple[dict, dict]:
    """Values and their storage classes; text that is not UTF-8 becomes a ``_BadText``."""
    values, kinds = {}, {}
    for k, c in enumerate(cols):
        kind, v = row[2 * k], row[2 * k + 1]
        if kind == "text":
            try:
                v = bytes(v).decode("utf-8")
            except UnicodeDecodeError as e:
                v = _BadText(bytes(v), e)
        kinds[c], values[c] = kind, v
    return values, kinds


class _BadText:
    def __init__(self, raw: bytes, err: UnicodeDecodeError):
        self.raw, self.err = raw, err

    def __repr__(self):
        return repr(self.raw.decode("utf-8", "backslashreplace"))[:60]


def _fetch(conn, table: str, cols: list[str], where: str) -> list[tuple[dict, dict]]:
    return [_decode(r, cols) for r in conn.execute(f"SELECT {_raw_select(cols)} FROM other.\"{table}\" o {where}")]


# ---- the rules ------------------------------------------------------------------------------


class _Check:
    def __init__(self, path: Path):
        self.path, self.problems = path, []

    def bad(self, table, row_id, fld, reason):
        if len(self.problems) < MAX_PROBLEMS:
            rid = row_id if isinstance(row_id, str) else repr(row_id)
            self.problems.append(f"{self.path}: table {table}, row {rid}: {fld}: {reason}")

    def text(self, table, v, kinds, fld, limit, required=False) -> None:
        """The one text rule (``stored_text``).  Where the writer does not apply it (a round's texts, who
        recorded a change), white space around a text is let through: nothing in it is unsafe, and a
        healthy laptop's file is never refused for it."""
        value = v[fld]
        if isinstance(value, _BadText):
            self.bad(table, v.get("id"), fld, f"is not valid UTF-8 text ({value.err.reason} at byte "
                                              f"{value.err.start})")
        elif value is None:
            if required:
                self.bad(table, v.get("id"), fld, "is required")
        elif kinds[fld] != "text":
            self.bad(table, v.get("id"), fld, f"is {kinds[fld]}, not text")
        else:
            clean, why = stored_text(value, limit)
            if why:
                self.bad(table, v.get("id"), fld, why)
            elif clean != value and table != "round" and fld != "recorded_by":
                self.bad(table, v.get("id"), fld, "has surrounding white space (never stored so by fieldpad)")

    def stamp(self, table, v, kinds, fld, required=True) -> None:
        value = v[fld]
        if value is None and not required:
            return
        self.text(table, v, kinds, fld, 40, required=True)
        if isinstance(value, str) and not STAMP.fullmatch(value):
            self.bad(table, v.get("id"), fld, f"{value[:40]!r} is not a stored UTC time (YYYY-MM-DDTHH:MM:SS.ffffffZ)")
        elif isinstance(value, str):
            from datetime import datetime
            try:
                t = datetime.fromisoformat(value.replace("Z", "+00:00"))
                if not 1990 <= t.year <= 2200:
                    self.bad(table, v.get("id"), fld, f"year {t.year} is not plausible")
            except ValueError:
                self.bad(table, v.get("id"), fld, f"{value!r} is not a date and time")

    def ident(self, table, v, kinds, fld, required=True) -> bool:
        before = len(self.problems)
        self.text(table, v, kinds, fld, 80, required=required)
        return len(self.problems) == before and v[fld] is not None


def _check_reading(ck: _Check, v: dict, kinds: dict, known: dict) -> None:
    t, rid = "reading", v.get("id")
    for f in ("id", "reading_id", "board_id"):
        ck.ident(t, v, kinds, f)
    ck.ident(t, v, kinds, "supersedes", required=False)
    ck.ident(t, v, kinds, "round_id", required=False)
    for f, limit in TEXT[t].items():
        ck.text(t, v, kinds, f, limit)
    ck.stamp(t, v, kinds, "taken_at")
    ck.stamp(t, v, kinds, "recorded_at")
    version = v["version"]
    if kinds["version"] != "integer" or version < 1:
        ck.bad(t, rid, "version", f"{version!r} is not a version number (a whole number from 1)")
    if kinds["void"] != "integer" or v["void"] not in (0, 1):
        ck.bad(t, rid, "void", f"{v['void']!r} is not 0 or 1")
    if isinstance(version, int) and version > 1 and not v["reason"]:
        ck.bad(t, rid, "reason", "a correction or void without a reason")
    if version == 1 and (v["supersedes"] is not None or v["id"] != v["reading_id"]):
        ck.bad(t, rid, "supersedes", "version 1 supersedes nothing and has the reading's id")
    if isinstance(version, int) and version > 1:
        parent = known["reading"].get(v["supersedes"])
        if v["supersedes"] is None or parent is None:
            ck.bad(t, rid, "supersedes", f"refers to a version that is not there ({v['supersedes']!r})")
        elif parent[0] != v["reading_id"] or not isinstance(parent[1], int) or parent[1] >= version:
            ck.bad(t, rid, "supersedes", "refers to a version of another reading, or not an earlier one")
    if isinstance(v["board_id"], str) and v["board_id"] not in known["board"]:
        ck.bad(t, rid, "board_id", f"refers to a board that is not there ({v['board_id']})")
    if isinstance(v["round_id"], str) and v["round_id"] not in known["round"]:
        ck.bad(t, rid, "round_id", f"refers to a round that is not there ({v['round_id']})")
    inputs = v["inputs_json"]
    if isinstance(inputs, _BadText) or kinds["inputs_json"] != "text":
        ck.bad(t, rid, "inputs_json", "is not text")
    else:
        try:
            if not isinstance(json.loads(inputs), dict):
                raise ValueError
        except ValueError:
            ck.bad(t, rid, "inputs_json", "is not a JSON object of the values as typed")
    record = {}
    numbers_ok = True
    for f in NUMERIC_FIELDS:
        if kinds[f] not in ("real", "integer", "null"):
            ck.bad(t, rid, f, f"{kinds[f]} in a numeric column ({v[f]!r})")
            numbers_ok = False
        elif v[f] is not None:
            record[f] = v[f]
    for f in ("system", "standard"):
        if isinstance(v[f], _BadText) or kinds[f] != "text":
            ck.bad(t, rid, f, f"is {kinds[f]}, not text")
            numbers_ok = False
        else:
            record[f] = v[f]
    if numbers_ok:
        clean, problems = validate_record(record)
        for f, why in problems:
            ck.bad(t, rid, f, why)
        if not problems and clean["standard"] != v["standard"]:
            ck.bad(t, rid, "standard", f"{v['standard']!r} is not a voltage standard")


def _check_setting(ck: _Check, v: dict, kinds: dict, known: dict) -> None:
    t, rid = "setting_version", v.get("id")
    ck.ident(t, v, kinds, "id")
    ck.ident(t, v, kinds, "entity_id")
    ck.text(t, v, kinds, "recorded_by", 200)
    ck.stamp(t, v, kinds, "recorded_at")
    entity, fld = v["entity"], v["field"]
    if entity not in sites.HISTORY_FIELDS:
        ck.bad(t, rid, "entity", f"{entity!r} is not site or board")
        return
    if fld not in sites.HISTORY_FIELDS[entity]:
        ck.bad(t, rid, "field", f"{fld!r} is not a {entity} setting")
        return
    raw = v["value_json"]
    try:
        if isinstance(raw, _BadText) or kinds["value_json"] != "text":
            raise ValueError
        value = json.loads(raw)
    except ValueError:
        ck.bad(t, rid, "value_json", f"is not a JSON value ({raw!r})")
        return
    why = setting_problem(entity, fld, value, known)
    if why:
        ck.bad(t, rid, f"value of {fld}", why)


def setting_problem(entity: str, fld: str, value, known: dict | None = None) -> str | None:
    """Why a stored site or board field value is not one a save could store (None: it is)."""
    problems: list = []
    if entity == "board" and fld == "site_id":
        if not isinstance(value, str) or not value:
            return "is not a site id"
        if known is not None and value not in known["site"]:
            return f"refers to a site that is not there ({value})"
        return None
    if isinstance(value, (dict, list)):
        return f"{value!r} is not a single value"
    if entity == "site" and fld == "thresholds_json":
        try:
            overrides = json.loads(value) if isinstance(value, str) else None
        except ValueError:
            overrides = None
        if not isinstance(overrides, dict):
            return f"{value!r} is not a JSON object of threshold overrides"
        out = sites._site_values({"thresholds": overrides}, problems)
        expect = out.get("thresholds_json")
    elif entity == "site":
        out = sites._site_values({fld: value}, problems)
        expect = out.get(fld)
    else:
        out = sites._board_values({fld: value}, problems)
        expect = out.get(fld)
    if problems:
        return "; ".join(f"{f}: {r}" if f != fld else r for f, r in problems)
    if expect != value or type(expect) is str and type(value) is not str:
        return f"{value!r} is not stored so by fieldpad"
    return None


def _check_join(ck: _Check, v: dict, kinds: dict, known: dict) -> None:
    t, rid = "id_join", v.get("id")
    ck.ident(t, v, kinds, "id")
    for f, limit in TEXT[t].items():
        ck.text(t, v, kinds, f, limit)
    ck.stamp(t, v, kinds, "recorded_at")
    if v["entity"] not in sites.HISTORY_FIELDS:
        ck.bad(t, rid, "entity", f"{v['entity']!r} is not site or board")
        return
    for f in ("keep_id", "other_id"):
        if ck.ident(t, v, kinds, f) and v[f] not in known[v["entity"]]:
            ck.bad(t, rid, f, f"refers to a {v['entity']} that is not there ({v[f]})")
    if v["keep_id"] == v["other_id"]:
        ck.bad(t, rid, "other_id", "the same as keep_id")


def _check_parent(ck: _Check, v: dict, kinds: dict, known: dict) -> None:
    t, rid = "version_parent", v.get("id")
    ck.ident(t, v, kinds, "id")
    ck.stamp(t, v, kinds, "recorded_at")
    ends = []
    for f in ("version_id", "parent_id"):
        if ck.ident(t, v, kinds, f):
            got = known["reading"].get(v[f])
            if got is None:
                ck.bad(t, rid, f, f"refers to a version that is not there ({v[f]})")
            ends.append(got)
    if len(ends) == 2 and all(ends) and ends[0][0] != ends[1][0]:
        ck.bad(t, rid, "parent_id", "a version of another reading")


def _check_round(ck: _Check, v: dict, kinds: dict, known: dict) -> None:
    t, rid = "round", v.get("id")
    ck.ident(t, v, kinds, "id")
    if ck.ident(t, v, kinds, "site_id") and v["site_id"] not in known["site"]:
        ck.bad(t, rid, "site_id", f"refers to a site that is not there ({v['site_id']})")
    for f, limit in TEXT[t].items():
        if f in v:
            ck.text(t, v, kinds, f, limit)
    ck.stamp(t, v, kinds, "started_at")
    ck.stamp(t, v, kinds, "finished_at", required=False)


def _check_signoff(ck: _Check, v: dict, kinds: dict, known: dict) -> None:
    t, rid = "signoff", v.get("id")
    ck.ident(t, v, kinds, "id")
    if ck.ident(t, v, kinds, "site_id") and v["site_id"] not in known["site"]:
        ck.bad(t, rid, "site_id", f"refers to a site that is not there ({v['site_id']})")
    if ck.ident(t, v, kinds, "round_id", required=False) and v["round_id"] not in known["round"]:
        ck.bad(t, rid, "round_id", f"refers to a round that is not there ({v['round_id']})")
    ck.text(t, v, kinds, "signed_by", TEXT[t]["signed_by"], required=True)
    ck.text(t, v, kinds, "note", TEXT[t]["note"])
    ck.stamp(t, v, kinds, "signed_at")
    if (v["round_id"] is None) == (v["day"] is None):
        ck.bad(t, rid, "day", "a sign-off is of one round or of one day")
    if v["day"] is not None:
        ck.text(t, v, kinds, "day", 10, required=True)
        ck.stamp(t, v, kinds, "day_start_utc")
        ck.stamp(t, v, kinds, "day_end_utc")


CHECKS = {"reading": _check_reading, "setting_version": _check_setting, "id_join": _check_join,
          "version_parent": _check_parent, "round": _check_round, "signoff": _check_signoff}


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
                    raise StorageError(f"{path} changed while it was being read (another fieldpad wrote to "
                                       "it); nothing was merged: try again")
                with write(db):
                    _bring_in(db, incoming, report)
            finally:
                db.conn.execute("DETACH DATABASE other")
    report.same_name_sites = [[{**s, "summary": sites.site_summary(db, s["id"])} for s in group]
                              for group in sites.same_name_sites(db)]
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
            for (bad,) in conn.execute(f'SELECT o.id FROM other."{table}" o JOIN main."{table}" m ON m.id = o.id '
                                       f"WHERE {diff} LIMIT 20"):
                ck.bad(table, bad, "(whole row)", "differs from the row of the same id already here: rows are "
                                                  "never changed, so this file was altered")
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
    the same content-made rows ``sites.backfill_history`` makes, so every laptop agrees."""
    out = []
    for entity, fields in sites.HISTORY_FIELDS.items():
        have = {(r[0], r[1]) for r in conn.execute(
            "SELECT DISTINCT entity_id, field FROM other.setting_version WHERE entity = ?", [entity])}
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
                row = sites.legacy_setting(entity, v, f)
                if conn.execute("SELECT 1 FROM main.setting_version WHERE id = ?", [row["id"]]).fetchone():
                    continue
                out.append((row, {k: "null" if x is None else "text" for k, x in row.items()}))
    return out


class _Versions(dict):
    """Reading versions by id -> (reading id, version): those coming in, and those here looked up one by one
    (a database of a million readings is not read into memory to check a day's merge)."""

    def __init__(self, conn):
        super().__init__()
        self.conn = conn

    def get(self, key, default=None):
        if key in self:
            return self[key]
        if not isinstance(key, str):
            return default
        row = self.conn.execute("SELECT reading_id, version FROM main.reading WHERE id = ?", [key]).fetchone()
        return (row[0], row[1]) if row else default


def _known(conn, rows: dict) -> dict:
    """Ids that rows may refer to: here already, or coming in."""
    known = {
        "site": {r[0] for r in conn.execute("SELECT id FROM main.site")},
        "board": {r[0] for r in conn.execute("SELECT id FROM main.board")},
        "round": {r[0] for r in conn.execute("SELECT id FROM main.round")},
        "reading": _Versions(conn),
    }
    for v, _ in rows["setting_version"][1]:
        if v.get("entity") in ("site", "board") and isinstance(v.get("entity_id"), str) and v.get("field") == "name":
            known[v["entity"]].add(v["entity_id"])
    for v, _ in rows["round"][1]:
        if isinstance(v.get("id"), str):
            known["round"].add(v["id"])
    for v, _ in rows["reading"][1]:
        if isinstance(v.get("id"), str):
            known["reading"][v["id"]] = (v.get("reading_id"), v.get("version"))
    return known


def _check_new_entities(ck: _Check, conn, rows: dict) -> None:
    """A site or board that is new here must come with the fields its row cannot do without."""
    have = {"site": {r[0] for r in conn.execute("SELECT id FROM main.site")},
            "board": {r[0] for r in conn.execute("SELECT id FROM main.board")}}
    given: dict = {}
    for v, _ in rows["setting_version"][1]:
        if v.get("entity") in have and isinstance(v.get("entity_id"), str):
            given.setdefault((v["entity"], v["entity_id"]), set()).add(v.get("field"))
    need = {"site": ("name",), "board": ("site_id", "name", "system")}
    for (entity, eid), fields in given.items():
        if eid not in have[entity]:
            for f in need[entity]:
                if f not in fields:
                    ck.bad("setting_version", eid, f, f"a new {entity} without its {f}")


def _round_order(r: dict) -> list:
    """A total order of a round's contents, its finish aside: a text given ranks above none."""
    return [(r[c] is not None, str(r[c]) if r[c] is not None else "") for c in sorted(r) if c != "finished_at"]


def _bring_in(db, incoming: dict, report: MergeReport) -> None:
    conn = db.conn
    # This database's own settings from before there was a history first (rows made from their content:
    # the other file may bring the very same ones, which are then here already).
    sites.backfill_history(db)
    for table in ("setting_version", "id_join"):
        added = 0
        for v, _ in incoming[table][1]:
            if not conn.execute(f"SELECT 1 FROM {table} WHERE id = ?", [v["id"]]).fetchone():
                insert(db, table, v)
                added += 1
        report.added[table] = added
    before = {e: {r[0] for r in conn.execute(f"SELECT id FROM {e}")} for e in ("site", "board")}
    sites.materialize(db, "site")
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
    sites.apply_joins(db)  # boards materialized here, on the sites as shown
    try:
        for table in ("reading", "version_parent", "signoff"):
            cols = incoming[table][0]
            col_sql = ", ".join(f'"{c}"' for c in cols)
            conn.executemany(f'INSERT INTO "{table}" ({col_sql}) VALUES ({", ".join("?" * len(cols))})',
                             ([v[c] for c in cols] for v, _ in incoming[table][1]))
            report.added[table] = len(incoming[table][1])
    except sqlite3.IntegrityError as e:  # checked above; a constraint of the schema still has the last word
        raise ValidationError([("row", f"not merged: {e}")]) from None
    for e in ("site", "board"):
        report.added[e] = len({r[0] for r in conn.execute(f"SELECT id FROM {e}")} - before[e])
    report.added["round"] = added_rounds
    report.updated["round"] = changed_rounds
