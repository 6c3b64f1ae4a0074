"""Readings and their versions: save, correct, void, history, the current version of each.

Readings are never updated or deleted: a correction or a void adds a version (:func:`correct_reading`,
:func:`void_reading`), each in one transaction committed before the function returns.  Values are
validated by the core before they are stored; what was typed is kept as typed (``inputs_json``) beside
the parsed numbers.  Bulk import is ``importer.py``, merge of other databases ``merge.py``.

Versions from several laptops: each version names the version it supersedes.  A *head* is a version no
other supersedes; the *current* version is the head recorded last (then the largest id), a rule every
laptop computes the same way from the same rows (the views ``reading_head`` and ``reading_current``,
schema 0004).  Two versions that supersede the same one (two laptops changed it) leave two heads: a
*conflict*, flagged in history, day review and report until a supervisor settles it with a new version
that supersedes every head (:func:`settle_reading`)."""

from __future__ import annotations

import json
from dataclasses import dataclass

import sqlite_utils

from ..core.fields import NUMERIC_FIELDS
from ..core.readings import validate_record
from .db import StorageError, write
from .ids import stamp_after, utc_now, uuid7
from .rows import ValidationError, clean_text, insert


@dataclass
class SavedReading:
    id: str  # the version's id
    reading_id: str
    version: int


def _reading_row(inputs: dict, board: dict) -> tuple[dict, list]:
    """Validate typed inputs for a board; the row's value columns and problems."""
    typed = {k: v for k, v in inputs.items() if v is not None and str(v).strip() != ""}
    record = dict(typed)
    record.setdefault("system", board["system"])
    if board.get("nominal_v") is not None:
        record.setdefault("nominal_v", board["nominal_v"])
    record.setdefault("standard", board["_standard"])
    clean, problems = validate_record(record)
    row = {k: clean[k] for k in NUMERIC_FIELDS}
    row["system"] = clean["system"]
    row["standard"] = clean["standard"]
    row["inputs_json"] = json.dumps(typed, ensure_ascii=False, sort_keys=True)
    return row, problems


def _board_for_reading(db, board_id) -> dict:
    # Straight through sqlite3 (on the path of every save; sqlite-utils' query() parses the SQL first).
    cur = db.conn.execute(
        "SELECT b.*, COALESCE(b.voltage_standard, s.voltage_standard) AS _standard "
        "FROM board b JOIN site s ON s.id = b.site_id "
        "WHERE b.id = ?",
        [board_id],
    )
    row = cur.fetchone()
    if row is None:
        raise StorageError(f"no board {board_id}")
    return dict(zip([d[0] for d in cur.description], row))


def save_reading(
    db, board_id, inputs: dict, *, technician=None, instrument=None, note=None, round_id=None, taken_at=None
) -> SavedReading:
    """Validate and store a new reading (version 1); committed on return.

    Raises
    ------
    ValidationError
        Nothing is stored; ``problems`` names each field and reason.
    """
    board = _board_for_reading(db, board_id)
    row, problems = _reading_row(inputs, board)
    meta_problems: list = []
    technician = clean_text(technician, "technician", meta_problems, limit=200)
    instrument = clean_text(instrument, "instrument", meta_problems, limit=200)
    note = clean_text(note, "note", meta_problems)
    if problems or meta_problems:
        raise ValidationError(problems + meta_problems)
    now = utc_now()
    vid = uuid7()
    with write(db):
        insert(
            db,
            "reading",
            {
                "id": vid,
                "reading_id": vid,
                "version": 1,
                "supersedes": None,
                "board_id": board_id,
                "round_id": round_id,
                "taken_at": taken_at or now,
                "technician": technician,
                "instrument": instrument,
                "note": note,
                "void": 0,
                "reason": None,
                "recorded_at": now,
                "recorded_by": technician,
                **row,
            },
        )
        db.execute("DELETE FROM draft WHERE board_id = ?", [board_id])
    return SavedReading(vid, vid, 1)


def current_version(db, reading_id) -> dict:
    rows = list(db.query("SELECT * FROM reading_current WHERE reading_id = ?", [reading_id]))
    if not rows:
        raise StorageError(f"no reading {reading_id}")
    return rows[0]


def correct_reading(db, reading_id, inputs: dict, *, reason, by=None, note=None, taken_at=None) -> SavedReading:
    """A new version of a reading with corrected values; the old one stays readable.  It supersedes the
    current version only: a conflict (several heads) stays flagged until it is settled."""
    problems: list = []
    reason = clean_text(reason, "reason", problems, required=True, limit=2000)
    by = clean_text(by, "by", problems, limit=200)
    with write(db):
        cur = current_version(db, reading_id)
        board = _board_for_reading(db, cur["board_id"])
        row, p2 = _reading_row(inputs, board)
        if problems or p2:
            raise ValidationError(problems + p2)
        vid = uuid7()
        insert(
            db,
            "reading",
            {
                **{k: cur[k] for k in ("reading_id", "board_id", "round_id", "technician", "instrument")},
                "id": vid,
                "version": cur["version"] + 1,
                "supersedes": cur["id"],
                "taken_at": taken_at or cur["taken_at"],
                "note": note if note is not None else cur["note"],
                "void": 0,
                "reason": reason,
                "recorded_at": stamp_after(cur["recorded_at"]),
                "recorded_by": by,
                **row,
            },
        )
        return SavedReading(vid, reading_id, cur["version"] + 1)


def void_reading(db, reading_id, *, reason, by=None) -> SavedReading:
    """Mark a reading void by adding a version; every earlier version stays."""
    problems: list = []
    reason = clean_text(reason, "reason", problems, required=True, limit=2000)
    by = clean_text(by, "by", problems, limit=200)
    if problems:
        raise ValidationError(problems)
    with write(db):
        cur = current_version(db, reading_id)
        vid = uuid7()
        insert(
            db,
            "reading",
            {
                **cur,
                "id": vid,
                "version": cur["version"] + 1,
                "supersedes": cur["id"],
                "void": 1,
                "reason": reason,
                "recorded_at": stamp_after(cur["recorded_at"]),
                "recorded_by": by,
            },
        )
        return SavedReading(vid, reading_id, cur["version"] + 1)


def heads(db, reading_id) -> list[dict]:
    """The versions of a reading that no other supersedes, the current one first."""
    return list(
        db.query("SELECT * FROM reading_head WHERE reading_id = ? ORDER BY recorded_at DESC, id DESC", [reading_id])
    )


def conflicts(db, reading_ids=None) -> dict[str, list[str]]:
    """Readings whose versions compete (more than one head): reading id -> head version ids, current first.
    ``reading_ids``: only these (else every reading of the database)."""
    if reading_ids is not None and len(reading_ids) <= 50_000:
        forked = sorted(set(reading_ids))  # a day's export: each reading's heads through the indexes
    else:
        # Only a version superseded twice can leave two heads: look there (the supersedes index).
        forked = [
            r[0]
            for r in db.conn.execute(
                "SELECT DISTINCT f.reading_id FROM reading f WHERE f.supersedes IN (SELECT supersedes FROM reading "
                "WHERE supersedes IS NOT NULL GROUP BY supersedes HAVING COUNT(*) > 1)"
            )
        ]
        if reading_ids is not None:
            wanted = set(reading_ids)
            forked = [r for r in forked if r in wanted]
    out: dict = {}
    for k in range(0, len(forked), 500):
        part = forked[k : k + 500]
        for rid, vid in db.conn.execute(
            f"SELECT reading_id, id FROM reading_head WHERE reading_id IN ({', '.join('?' * len(part))}) "
            "ORDER BY reading_id, recorded_at DESC, id DESC",
            part,
        ):
            out.setdefault(rid, []).append(vid)
    return {rid: vids for rid, vids in out.items() if len(vids) > 1}


def settle_reading(db, reading_id, keep_version_id, *, reason, by=None) -> SavedReading:
    """Settle a conflict: a new version with the values (or the void) of ``keep_version_id`` (any version
    of the reading) that supersedes every head, so the reading has one head again.  Every version stays.

    Raises
    ------
    StorageError
        No such reading or version, or nothing to settle (a single head)."""
    problems: list = []
    reason = clean_text(reason, "reason", problems, required=True, limit=2000)
    by = clean_text(by, "by", problems, limit=200)
    if problems:
        raise ValidationError(problems)
    with write(db):
        tops = heads(db, reading_id)
        if not tops:
            raise StorageError(f"no reading {reading_id}")
        if len(tops) < 2:
            raise StorageError(
                f"reading {reading_id} has no competing versions: nothing to settle "
                "(a correction is an ordinary new version)"
            )
        keep = list(db.query("SELECT * FROM reading WHERE id = ? AND reading_id = ?", [keep_version_id, reading_id]))
        if not keep:
            raise StorageError(
                f"reading {reading_id} has no version {keep_version_id}; its competing versions: "
                + ", ".join(h["id"] for h in tops)
            )
        first = next((h for h in tops if h["id"] == keep_version_id), tops[0])
        vid = uuid7()
        now = stamp_after(max(h["recorded_at"] for h in tops))
        insert(
            db,
            "reading",
            {
                **keep[0],
                "id": vid,
                "version": max(h["version"] for h in tops) + 1,
                "supersedes": first["id"],
                "reason": reason,
                "recorded_at": now,
                "recorded_by": by,
            },
        )
        for h in tops:
            if h["id"] != first["id"]:
                insert(
                    db, "version_parent", {"id": uuid7(), "version_id": vid, "parent_id": h["id"], "recorded_at": now}
                )
        return SavedReading(vid, reading_id, max(h["version"] for h in tops) + 1)


def history(db, reading_id) -> list[dict]:
    """Every version of a reading, oldest first, each with ``is_current``, ``is_head`` and ``competing``
    (another version supersedes the same one: two laptops changed it)."""
    rows = list(db.query("SELECT * FROM reading WHERE reading_id = ? ORDER BY version, recorded_at, id", [reading_id]))
    tops = [h["id"] for h in heads(db, reading_id)]
    parents: dict = {}
    for r in rows:
        if r["supersedes"]:
            parents[r["supersedes"]] = parents.get(r["supersedes"], 0) + 1
    for r in rows:
        r["is_current"] = bool(tops) and r["id"] == tops[0]
        r["is_head"] = r["id"] in tops
        r["competing"] = bool(r["supersedes"]) and parents.get(r["supersedes"], 0) > 1
    return rows


def board_history(db, board_id, limit=50) -> list[dict]:
    """The current version of the board's last ``limit`` readings, newest first (voids included)."""
    return list(
        db.query(
            "SELECT * FROM reading_current WHERE board_id IN (SELECT id FROM board WHERE id = :b OR joined_into = :b) "
            "ORDER BY taken_at DESC LIMIT :n",
            {"b": board_id, "n": limit},
        )
    )


def previous_reading(db, board_id, before_reading_id=None) -> dict | None:
    """The latest current, non-void reading of the board (other than ``before_reading_id``)."""
    rows = list(
        db.query(
            "SELECT * FROM reading_current WHERE board_id IN (SELECT id FROM board WHERE id = :b OR joined_into = :b) "
            "AND void = 0 AND reading_id IS NOT :r ORDER BY taken_at DESC LIMIT 1",
            {"b": board_id, "r": before_reading_id},
        )
    )
    return rows[0] if rows else None


def current_readings(
    db, *, day_start_utc=None, day_end_utc=None, site_id=None, round_id=None, include_void=False
) -> list[dict]:
    """Current versions joined with board and site, ordered by site, board and time."""
    where, params = [], {}
    if day_start_utc:
        where.append("r.taken_at >= :start AND r.taken_at < :end")
        params.update(start=day_start_utc, end=day_end_utc)
    if site_id:
        where.append("b.site_id = :site")
        params["site"] = site_id
    if round_id:
        where.append("r.round_id = :round")
        params["round"] = round_id
    if not include_void:
        where.append("r.void = 0")
    # A reading of a board joined into another is shown as that board's (b), on its site (board.site_id is
    # already the site shown).
    sql = (
        "SELECT r.*, b.id AS shown_board_id, b.name AS board_name, b.site_id AS site_id, s.name AS site_name, "
        "s.phase_labels AS phase_labels, s.thresholds_json AS thresholds_json, "
        "ro.label AS round_label "
        "FROM reading_current r JOIN board b0 ON b0.id = r.board_id "
        "JOIN board b ON b.id = COALESCE(b0.joined_into, b0.id) JOIN site s ON s.id = b.site_id "
        "LEFT JOIN round ro ON ro.id = r.round_id"
        + (" WHERE " + " AND ".join(where) if where else "")
        + " ORDER BY s.name, s.id, b.name, b.id, r.taken_at, r.id"
    )
    return list(db.query(sql, params))


def inputs_of(row: dict) -> dict:
    """The values as typed for a stored reading version."""
    return json.loads(row["inputs_json"])


def counts(db: sqlite_utils.Database) -> dict:
    q = "SELECT (SELECT COUNT(*) FROM {0}) AS n"
    out = {t: next(db.query(q.format(t)))["n"] for t in ("site", "board", "round", "reading", "draft")}
    out["current readings"] = next(db.query("SELECT COUNT(*) AS n FROM reading_current WHERE void = 0"))["n"]
    return out


def reading_days(db, site_id) -> list[str]:
    """Local calendar days (YYYY-MM-DD) with current readings at the site, newest first."""
    from .ids import local_text

    rows = db.query(
        "SELECT r.taken_at FROM reading_current r JOIN board b ON b.id = r.board_id WHERE b.site_id = ? AND r.void = 0",
        [site_id],
    )
    return sorted({local_text(r["taken_at"], "%Y-%m-%d") for r in rows}, reverse=True)
