"""Sites, boards, rounds, readings and drafts: the reads and writes that the app, the report and the
commands make (bulk import is ``importer.py``, merge of other databases ``merge.py``).

Writes run in one transaction each (:func:`fieldpad.storage.db.write`) and are
committed before the function returns.  Readings are never updated or
deleted: a correction or a void adds a version (:func:`correct_reading`,
:func:`void_reading`).  Values are validated by the core before they are
stored; what was typed is kept as typed (``inputs_json``) beside the parsed
numbers.
"""
from __future__ import annotations

import json
from dataclasses import dataclass

import sqlite_utils

from ..core.fields import NUMERIC_FIELDS, SYSTEMS
from ..core.phase_colours import COLOUR_SETS, phase_labels
from ..core.readings import stored_text, validate_record
from ..core.thresholds import Thresholds
from .db import StorageError, write
from .ids import utc_now, uuid7

BOARD_FIELDS = ("name", "location", "kind", "system", "nominal_v", "frequency_hz", "af_incident_energy_cal_cm2",
                "af_working_distance_mm", "af_boundary_mm", "af_ppe", "af_label_date")


class ValidationError(StorageError):
    """Values that cannot be saved; ``problems`` is a list of (field, reason)."""

    def __init__(self, problems):
        self.problems = list(problems)
        super().__init__("; ".join(f"{f}: {r}" for f, r in self.problems))


def _clean_text(value, field, problems, required=False, limit=10_000):
    text, why = stored_text(value, limit)
    if why:
        problems.append((field, why))
    elif text is None and required:
        problems.append((field, "is required"))
    return text


_NO_NUMBER = object()


def _number(value, field, problems, low=0.0, high=1e6):
    """A setting typed as a number (a decimal comma is accepted): float, None when empty, or
    ``_NO_NUMBER`` after recording the problem."""
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    try:
        x = float(str(value).replace(",", ".")) if isinstance(value, str) else float(value)
    except (TypeError, ValueError):
        problems.append((field, f"{value!r} is not a number"))
        return _NO_NUMBER
    if not (x == x and low <= x < high):
        problems.append((field, f"{value!r} is not a plausible value"))
        return _NO_NUMBER
    return x


def _insert(db, table: str, row: dict) -> None:
    """Plain INSERT of one row (sqlite-utils' insert() inspects the table on every call,
    which doubles the cost of saving one reading)."""
    cols = ", ".join(f'"{c}"' for c in row)
    db.conn.execute(f'INSERT INTO "{table}" ({cols}) VALUES ({", ".join("?" * len(row))})', list(row.values()))


# ---- sites -----------------------------------------------------------------

def _site_values(fields: dict, problems: list) -> dict:
    """Check site fields (any subset); ``thresholds`` is a dict of overrides."""
    out = {}
    for k, v in fields.items():
        if k == "name":
            out[k] = _clean_text(v, "name", problems, required=True, limit=200)
        elif k == "description":
            out[k] = _clean_text(v, "description", problems, limit=2000)
        elif k == "voltage_standard":
            if v not in ("ansi", "iec"):
                problems.append((k, "use ansi or iec"))
            out[k] = v
        elif k == "phase_labels":
            if v not in ("ABC", "L123"):
                problems.append((k, "use ABC or L123"))
            out[k] = v
        elif k == "colour_set":
            if v not in COLOUR_SETS:
                problems.append((k, f"use one of {', '.join(COLOUR_SETS)}"))
            out[k] = v
        elif k == "label_review_years":
            years = _number(v, k, problems, low=0.1, high=50.01)
            if years is None:
                problems.append((k, "is required"))
            elif years is not _NO_NUMBER:
                out[k] = years
        elif k == "thresholds":
            overrides = {}
            for name, value in (v or {}).items():
                x = _number(value, name, problems)
                if x is not None and x is not _NO_NUMBER:
                    overrides[name] = x
            try:
                Thresholds().with_overrides(overrides)
            except KeyError as e:
                problems.append(("thresholds", str(e).strip("'\"")))
            out["thresholds_json"] = json.dumps(overrides, sort_keys=True)
        else:
            problems.append((k, "unknown site field"))
    return out


def create_site(db, name, *, description=None, voltage_standard="ansi", phase_labels="ABC",
                colour_set="iec60445", thresholds=None, label_review_years=5.0, site_id=None) -> str:
    problems: list = []
    values = _site_values({"name": name, "description": description, "voltage_standard": voltage_standard,
                           "phase_labels": phase_labels, "colour_set": colour_set,
                           "label_review_years": label_review_years, "thresholds": thresholds or {}}, problems)
    if problems:
        raise ValidationError(problems)
    now = utc_now()
    sid = site_id or uuid7()
    with write(db):
        db["site"].insert({"id": sid, **values, "created_at": now, "updated_at": now})
    return sid


def update_site(db, site_id, **changes) -> None:
    """Change site settings; ``thresholds`` (a dict) replaces the site's threshold overrides."""
    problems: list = []
    values = _site_values(changes, problems)
    if problems:
        raise ValidationError(problems)
    with write(db):
        db["site"].update(site_id, {**values, "updated_at": utc_now()})


def get_site(db, site_id) -> dict:
    return db["site"].get(site_id)


def find_site(db, name) -> dict | None:
    rows = list(db.query("SELECT * FROM site WHERE name = ? ORDER BY id LIMIT 1", [name]))
    return rows[0] if rows else None


def list_sites(db) -> list[dict]:
    return list(db.query("SELECT * FROM site ORDER BY name, id"))


def site_thresholds(site: dict) -> Thresholds:
    return Thresholds().with_overrides(json.loads(site.get("thresholds_json") or "{}"))


def site_labels(site: dict) -> tuple[str, str, str]:
    return phase_labels(site.get("phase_labels"))


# ---- boards ----------------------------------------------------------------

def _board_values(fields: dict, problems: list) -> dict:
    out = {}
    for k, v in fields.items():
        if k not in BOARD_FIELDS:
            problems.append((k, "unknown board field"))
        elif k in ("nominal_v", "frequency_hz", "af_incident_energy_cal_cm2", "af_working_distance_mm",
                   "af_boundary_mm"):
            x = _number(v, k, problems)
            if x is not _NO_NUMBER:
                out[k] = x
        elif k == "system":
            if v not in SYSTEMS:
                problems.append(("system", f"unknown system {v!r}"))
            out[k] = v
        elif k == "af_label_date":
            text = _clean_text(v, k, problems, limit=10)
            if text:
                import datetime as _dt
                try:
                    _dt.date.fromisoformat(text)
                except ValueError:
                    problems.append((k, f"{text!r} is not a date (YYYY-MM-DD)"))
            out[k] = text
        else:
            out[k] = _clean_text(v, k, problems, required=(k == "name"), limit=200 if k == "name" else 2000)
    return out


def create_board(db, site_id, name, *, system="wye", board_id=None, **fields) -> str:
    problems: list = []
    values = _board_values({"name": name, "system": system, **fields}, problems)
    if problems:
        raise ValidationError(problems)
    now = utc_now()
    bid = board_id or uuid7()
    with write(db):
        db["board"].insert({"id": bid, "site_id": site_id, **values, "created_at": now, "updated_at": now})
    return bid


def update_board(db, board_id, **fields) -> None:
    problems: list = []
    values = _board_values(fields, problems)
    if problems:
        raise ValidationError(problems)
    with write(db):
        db["board"].update(board_id, {**values, "updated_at": utc_now()})


def get_board(db, board_id) -> dict:
    return db["board"].get(board_id)


def find_board(db, site_id, name) -> dict | None:
    rows = list(db.query("SELECT * FROM board WHERE site_id = ? AND name = ? ORDER BY id LIMIT 1", [site_id, name]))
    return rows[0] if rows else None


def list_boards(db, site_id) -> list[dict]:
    return list(db.query("SELECT * FROM board WHERE site_id = ? ORDER BY name, id", [site_id]))


# ---- rounds ----------------------------------------------------------------

def start_round(db, site_id, technician=None, *, label=None, note=None, started_at=None, round_id=None) -> str:
    rid = round_id or uuid7()
    with write(db):
        db["round"].insert({"id": rid, "site_id": site_id, "label": label, "technician": technician,
                            "started_at": started_at or utc_now(), "finished_at": None, "note": note})
    return rid


def finish_round(db, round_id, note=None) -> None:
    with write(db):
        changes = {"finished_at": utc_now()}
        if note is not None:
            changes["note"] = note
        db["round"].update(round_id, changes)


def list_rounds(db, site_id) -> list[dict]:
    return list(db.query("SELECT * FROM round WHERE site_id = ? ORDER BY started_at DESC", [site_id]))


def boards_read_in_round(db, round_id) -> set[str]:
    """Ids of the boards with a current (not void) reading in this round."""
    return {r["board_id"] for r in db.query(
        "SELECT DISTINCT board_id FROM reading_current WHERE round_id = ? AND void = 0", [round_id])}


def round_progress(db, round_id) -> tuple[int, int]:
    """(boards with a current reading in this round, boards of the round's site)."""
    row = next(db.query(
        "SELECT (SELECT COUNT(DISTINCT board_id) FROM reading_current WHERE round_id = :r AND void = 0) AS done,"
        " (SELECT COUNT(*) FROM board WHERE site_id = (SELECT site_id FROM round WHERE id = :r)) AS total",
        {"r": round_id}))
    return row["done"], row["total"]


# ---- readings ----------------------------------------------------------------

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
    cur = db.conn.execute("SELECT b.*, s.voltage_standard AS _standard FROM board b JOIN site s ON s.id = b.site_id "
                          "WHERE b.id = ?", [board_id])
    row = cur.fetchone()
    if row is None:
        raise StorageError(f"no board {board_id}")
    return dict(zip([d[0] for d in cur.description], row))


def save_reading(db, board_id, inputs: dict, *, technician=None, instrument=None, note=None, round_id=None,
                 taken_at=None) -> SavedReading:
    """Validate and store a new reading (version 1); committed on return.

    Raises
    ------
    ValidationError
        Nothing is stored; ``problems`` names each field and reason.
    """
    board = _board_for_reading(db, board_id)
    row, problems = _reading_row(inputs, board)
    meta_problems: list = []
    technician = _clean_text(technician, "technician", meta_problems, limit=200)
    instrument = _clean_text(instrument, "instrument", meta_problems, limit=200)
    note = _clean_text(note, "note", meta_problems)
    if problems or meta_problems:
        raise ValidationError(problems + meta_problems)
    now = utc_now()
    vid = uuid7()
    with write(db):
        _insert(db, "reading", {
            "id": vid, "reading_id": vid, "version": 1, "supersedes": None, "board_id": board_id,
            "round_id": round_id, "taken_at": taken_at or now, "technician": technician, "instrument": instrument,
            "note": note, "void": 0, "reason": None, "recorded_at": now, "recorded_by": technician, **row,
        })
        db.execute("DELETE FROM draft WHERE board_id = ?", [board_id])
    return SavedReading(vid, vid, 1)


def current_version(db, reading_id) -> dict:
    rows = list(db.query("SELECT * FROM reading_current WHERE reading_id = ?", [reading_id]))
    if not rows:
        raise StorageError(f"no reading {reading_id}")
    return rows[0]


def correct_reading(db, reading_id, inputs: dict, *, reason, by=None, note=None, taken_at=None) -> SavedReading:
    """A new version of a reading with corrected values; the old one stays readable."""
    problems: list = []
    reason = _clean_text(reason, "reason", problems, required=True, limit=2000)
    with write(db):
        cur = current_version(db, reading_id)
        board = _board_for_reading(db, cur["board_id"])
        row, p2 = _reading_row(inputs, board)
        if problems or p2:
            raise ValidationError(problems + p2)
        vid = uuid7()
        _insert(db, "reading", {
            **{k: cur[k] for k in ("reading_id", "board_id", "round_id", "technician", "instrument")},
            "id": vid, "version": cur["version"] + 1, "supersedes": cur["id"],
            "taken_at": taken_at or cur["taken_at"], "note": note if note is not None else cur["note"],
            "void": 0, "reason": reason, "recorded_at": utc_now(), "recorded_by": by, **row,
        })
        return SavedReading(vid, reading_id, cur["version"] + 1)


def void_reading(db, reading_id, *, reason, by=None) -> SavedReading:
    """Mark a reading void by adding a version; every earlier version stays."""
    problems: list = []
    reason = _clean_text(reason, "reason", problems, required=True, limit=2000)
    if problems:
        raise ValidationError(problems)
    with write(db):
        cur = current_version(db, reading_id)
        vid = uuid7()
        _insert(db, "reading", {**cur, "id": vid, "version": cur["version"] + 1, "supersedes": cur["id"],
                              "void": 1, "reason": reason, "recorded_at": utc_now(), "recorded_by": by})
        return SavedReading(vid, reading_id, cur["version"] + 1)


def history(db, reading_id) -> list[dict]:
    """Every version of a reading, oldest first."""
    return list(db.query("SELECT * FROM reading WHERE reading_id = ? ORDER BY version, recorded_at, id",
                         [reading_id]))


def board_history(db, board_id, limit=50) -> list[dict]:
    """The current version of the board's last ``limit`` readings, newest first (voids included)."""
    return list(db.query(
        "SELECT * FROM reading_current WHERE board_id = ? ORDER BY taken_at DESC LIMIT ?", [board_id, limit]))


def previous_reading(db, board_id, before_reading_id=None) -> dict | None:
    """The latest current, non-void reading of the board (other than ``before_reading_id``)."""
    rows = list(db.query(
        "SELECT * FROM reading_current WHERE board_id = ? AND void = 0 AND reading_id IS NOT ? "
        "ORDER BY taken_at DESC LIMIT 1", [board_id, before_reading_id]))
    return rows[0] if rows else None


def current_readings(db, *, day_start_utc=None, day_end_utc=None, site_id=None, round_id=None,
                     include_void=False) -> list[dict]:
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
    sql = ("SELECT r.*, b.name AS board_name, b.site_id AS site_id, s.name AS site_name, "
           "s.phase_labels AS phase_labels, s.thresholds_json AS thresholds_json, "
           "ro.label AS round_label "
           "FROM reading_current r JOIN board b ON b.id = r.board_id JOIN site s ON s.id = b.site_id "
           "LEFT JOIN round ro ON ro.id = r.round_id"
           + (" WHERE " + " AND ".join(where) if where else "")
           + " ORDER BY s.name, b.name, r.taken_at, r.id")
    return list(db.query(sql, params))


def inputs_of(row: dict) -> dict:
    """The values as typed for a stored reading version."""
    return json.loads(row["inputs_json"])


# ---- drafts ------------------------------------------------------------------

def save_draft(db, board_id, fields: dict, wait_ms: int | None = None) -> None:
    """Keep what is typed on a board's sheet (one draft per board).  Saved at every keystroke, so it is
    committed without waiting for the disk (``durable=False``): it survives the app being killed, and a
    power cut can lose at most the last keystrokes of a draft, never a saved reading.  ``wait_ms``: how
    long to wait for another process's write (a keystroke does not wait long; see ``db.write``)."""
    with write(db, durable=False, wait_ms=wait_ms):
        db.conn.execute("INSERT INTO draft (board_id, fields_json, updated_at) VALUES (?, ?, ?) "
                        "ON CONFLICT(board_id) DO UPDATE SET fields_json = excluded.fields_json, "
                        "updated_at = excluded.updated_at",
                        [board_id, json.dumps(fields, ensure_ascii=False), utc_now()])


def get_draft(db, board_id) -> dict | None:
    rows = list(db.query("SELECT fields_json FROM draft WHERE board_id = ?", [board_id]))
    return json.loads(rows[0]["fields_json"]) if rows else None


def clear_draft(db, board_id, wait_ms: int | None = None) -> None:
    with write(db, durable=False, wait_ms=wait_ms):
        db.execute("DELETE FROM draft WHERE board_id = ?", [board_id])


def counts(db: sqlite_utils.Database) -> dict:
    q = "SELECT (SELECT COUNT(*) FROM {0}) AS n"
    out = {t: next(db.query(q.format(t)))["n"] for t in ("site", "board", "round", "reading", "draft")}
    out["current readings"] = next(db.query("SELECT COUNT(*) AS n FROM reading_current WHERE void = 0"))["n"]
    return out


def reading_days(db, site_id) -> list[str]:
    """Local calendar days (YYYY-MM-DD) with current readings at the site, newest first."""
    from .ids import local_text

    rows = db.query("SELECT r.taken_at FROM reading_current r JOIN board b ON b.id = r.board_id "
                    "WHERE b.site_id = ? AND r.void = 0", [site_id])
    return sorted({local_text(r["taken_at"], "%Y-%m-%d") for r in rows}, reverse=True)
