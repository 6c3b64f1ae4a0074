"""Rounds: a walk of a site's boards; start, finish, list, and which boards a round has read.

Every round has a name or purpose (``label``), given when it starts; without one it is called
"Round N — YYYY-MM-DD HH:MM" (N counts the site's rounds, the time is the start in local time).
"""

from __future__ import annotations

from .db import write
from .ids import local_text, utc_now, uuid7
from .rows import ValidationError, clean_text

#: Longest round name kept (the import's limit for the ``round`` column too).
LABEL_LIMIT = 200


def default_label(db, site_id, started_at: str | None = None) -> str:
    """The name a new round of the site gets unless one is typed: ``Round N — YYYY-MM-DD HH:MM`` (local)."""
    n = db.conn.execute("SELECT COUNT(*) FROM round WHERE site_id = ?", [site_id]).fetchone()[0] + 1
    return f"Round {n} — {local_text(started_at or utc_now(), '%Y-%m-%d %H:%M')}"


def start_round(db, site_id, technician=None, *, label=None, note=None, started_at=None, round_id=None) -> str:
    """Start a round; ``label`` is its name or purpose (empty: :func:`default_label`).  Committed on return.

    Raises ``ValidationError`` (nothing stored) for a name the text rule refuses."""
    rid = round_id or uuid7()
    started_at = started_at or utc_now()
    problems: list = []
    label = clean_text(label, "round name", problems, limit=LABEL_LIMIT)
    note = clean_text(note, "note", problems)
    if problems:
        raise ValidationError(problems)
    with write(db):
        db["round"].insert(
            {
                "id": rid,
                "site_id": site_id,
                "label": label or default_label(db, site_id, started_at),
                "technician": technician,
                "started_at": started_at,
                "finished_at": None,
                "note": note,
            }
        )
    return rid


def get_round(db, round_id) -> dict | None:
    rows = list(db.query("SELECT * FROM round WHERE id = ?", [round_id]))
    return rows[0] if rows else None


def find_round(db, key: str, site_id=None) -> list[dict]:
    """Rounds whose id is ``key`` or whose name is ``key`` exactly (optionally at one site)."""
    sql = "SELECT * FROM round WHERE (id = :k OR label = :k)" + (" AND site_id = :s" if site_id else "")
    return list(db.query(sql + " ORDER BY started_at", {"k": key, "s": site_id}))


def round_name(row: dict | None) -> str:
    """How a round is called on screen and on paper (a round with no label, from an old import: its start)."""
    if not row:
        return ""
    return row.get("label") or f"round of {local_text(row['started_at'])}"


def rounds_of_day(db, site_id, day_start_utc: str, day_end_utc: str) -> list[dict]:
    """The site's rounds that have a reading taken in the UTC range, or that started in it; by start."""
    return list(
        db.query(
            "SELECT * FROM round WHERE site_id = :s AND (started_at >= :a AND started_at < :b OR id IN ("
            " SELECT r.round_id FROM reading_current r WHERE r.taken_at >= :a AND r.taken_at < :b))"
            " ORDER BY started_at, id",
            {"s": site_id, "a": day_start_utc, "b": day_end_utc},
        )
    )


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
    return {
        r["board_id"]
        for r in db.query("SELECT DISTINCT board_id FROM reading_current WHERE round_id = ? AND void = 0", [round_id])
    }


def round_progress(db, round_id) -> tuple[int, int]:
    """(boards with a current reading in this round, boards of the round's site)."""
    row = next(
        db.query(
            "SELECT (SELECT COUNT(DISTINCT board_id) FROM reading_current WHERE round_id = :r AND void = 0) AS done,"
            " (SELECT COUNT(*) FROM board WHERE site_id = (SELECT site_id FROM round WHERE id = :r)) AS total",
            {"r": round_id},
        )
    )
    return row["done"], row["total"]


# ---- readings ----------------------------------------------------------------
