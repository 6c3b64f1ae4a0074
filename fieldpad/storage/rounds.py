"""Rounds: a walk of a site's boards; start, finish, list, and which boards a round has read."""
from __future__ import annotations

from .db import write
from .ids import utc_now, uuid7


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
