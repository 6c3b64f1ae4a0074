"""Drafts: what is typed on a sheet and not yet saved, kept per board so a crash or a closed terminal
loses nothing.  Not durable on every keystroke (the WAL is synced at the next checkpoint)."""

from __future__ import annotations

import json

from .db import write
from .ids import utc_now


def save_draft(db, board_id, fields: dict, wait_ms: int | None = None) -> None:
    """Keep what is typed on a board's sheet (one draft per board).  Saved at every keystroke, so it is
    committed without waiting for the disk (``durable=False``): it survives the app being killed, and a
    power cut can lose at most the last keystrokes of a draft, never a saved reading.  ``wait_ms``: how
    long to wait for another process's write (a keystroke does not wait long; see ``db.write``)."""
    with write(db, durable=False, wait_ms=wait_ms):
        db.conn.execute(
            "INSERT INTO draft (board_id, fields_json, updated_at) VALUES (?, ?, ?) "
            "ON CONFLICT(board_id) DO UPDATE SET fields_json = excluded.fields_json, "
            "updated_at = excluded.updated_at",
            [board_id, json.dumps(fields, ensure_ascii=False), utc_now()],
        )


def get_draft(db, board_id) -> dict | None:
    rows = list(db.query("SELECT fields_json FROM draft WHERE board_id = ?", [board_id]))
    return json.loads(rows[0]["fields_json"]) if rows else None


def clear_draft(db, board_id, wait_ms: int | None = None) -> None:
    with write(db, durable=False, wait_ms=wait_ms):
        db.execute("DELETE FROM draft WHERE board_id = ?", [board_id])
