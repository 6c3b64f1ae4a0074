"""Sign-offs: a supervisor's signature on a round or on a day of a site, each a record of its own.

Readings are never edited to sign them.  A sign-off covers the readings of its round, or the readings
taken at its site during its local calendar day (the UTC range that day had on the laptop that signed is
stored with it, so every laptop later agrees on what was signed).  A version of a covered reading recorded
after the sign-off (a correction, a void, or a reading added late) is "after sign-off": the report and the
day review say so.  Signing again is a new row; nothing here is updated or deleted.
"""

from __future__ import annotations

from datetime import date, datetime, time, timedelta

from .db import StorageError, write
from .ids import local_text, to_utc_text, utc_now, uuid7
from .rows import ValidationError, clean_text

NAME_LIMIT = 200


def local_day_range_utc(day: str) -> tuple[str, str]:
    """UTC start and end (exclusive) of a local calendar day ``YYYY-MM-DD`` on this laptop."""
    d = date.fromisoformat(day)
    start = datetime.combine(d, time.min).astimezone()
    end = datetime.combine(d + timedelta(days=1), time.min).astimezone()
    return to_utc_text(start), to_utc_text(end)


def sign_off(
    db, site_id, *, by, day: str | None = None, round_id: str | None = None, note=None, signed_at: str | None = None
) -> str:
    """Record a sign-off of a round (``round_id``) or of a local day (``day``, YYYY-MM-DD) at the site.

    Committed on return; the new sign-off's id.

    Raises
    ------
    ValidationError
        Nothing stored: no name, a name or note the text rule refuses, neither or both of round and day,
        a day that is not a date, a round of another site or none.
    """
    problems: list = []
    by = clean_text(by, "signed by", problems, required=True, limit=NAME_LIMIT)
    note = clean_text(note, "note", problems)
    start = end = None
    if (day is None) == (round_id is None):
        problems.append(("scope", "give either a round or a day to sign off, not both"))
    elif day is not None:
        try:
            start, end = local_day_range_utc(day)
        except (TypeError, ValueError):
            problems.append(("day", f"{day!r} is not a date (YYYY-MM-DD)"))
    else:
        row = db.conn.execute("SELECT site_id FROM round WHERE id = ?", [round_id]).fetchone()
        if row is None:
            problems.append(("round", f"no round {round_id!r}"))
        elif row[0] != site_id:
            problems.append(("round", "the round belongs to another site"))
    if db.conn.execute("SELECT 1 FROM site WHERE id = ?", [site_id]).fetchone() is None:
        problems.append(("site", f"no site {site_id!r}"))
    if problems:
        raise ValidationError(problems)
    sid = uuid7()
    with write(db):
        db.conn.execute(
            "INSERT INTO signoff (id, site_id, round_id, day, day_start_utc, day_end_utc, signed_by, signed_at, "
            "note) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
            [sid, site_id, round_id, day, start, end, by, signed_at or utc_now(), note],
        )
    return sid


def get_signoff(db, signoff_id) -> dict:
    rows = list(db.query(_SELECT + " WHERE so.id = ?", [signoff_id]))
    if not rows:
        raise StorageError(f"no sign-off {signoff_id}")
    return rows[0]


_SELECT = (
    "SELECT so.*, ro.label AS round_label, ro.started_at AS round_started_at "
    "FROM signoff so LEFT JOIN round ro ON ro.id = so.round_id"
)


def signoffs_for_range(db, site_id, start_utc: str, end_utc: str) -> list[dict]:
    """Sign-offs that may cover readings of the site taken in ``[start_utc, end_utc)``: the day sign-offs
    whose day overlaps the range and the sign-offs of rounds with a reading in it or started in it.
    Oldest signature first."""
    return list(
        db.query(
            _SELECT + " WHERE so.site_id = :s AND ("
            " (so.day IS NOT NULL AND so.day_start_utc < :b AND so.day_end_utc > :a)"
            " OR so.round_id IN (SELECT id FROM round WHERE site_id = :s AND started_at >= :a AND started_at < :b)"
            " OR so.round_id IN (SELECT r.round_id FROM reading_current r JOIN board b ON b.id = r.board_id"
            "   WHERE b.site_id = :s AND r.taken_at >= :a AND r.taken_at < :b))"
            " ORDER BY so.signed_at, so.id",
            {"s": site_id, "a": start_utc, "b": end_utc},
        )
    )


def signoffs_of_site(db, site_id) -> list[dict]:
    """Every sign-off of the site, oldest signature first."""
    return list(db.query(_SELECT + " WHERE so.site_id = ? ORDER BY so.signed_at, so.id", [site_id]))


def covers(so: dict, *, site_id, round_id, taken_at: str) -> bool:
    """Whether sign-off ``so`` covers a reading of the site (its round, or taken in its day)."""
    if so["site_id"] != site_id:
        return False
    if so["round_id"] is not None:
        return so["round_id"] == round_id
    return so["day_start_utc"] <= taken_at < so["day_end_utc"]


def signed_before(signoffs, *, site_id, round_id, taken_at: str, recorded_at: str) -> dict | None:
    """The first sign-off covering the reading that was signed before this version was recorded, or None:
    the version was recorded after sign-off."""
    for so in signoffs:
        if so["signed_at"] < recorded_at and covers(so, site_id=site_id, round_id=round_id, taken_at=taken_at):
            return so
    return None


def scope_text(so: dict) -> str:
    """What was signed, in words: ``day 2026-12-01`` or ``round "Round 2 — …"``."""
    if so["round_id"] is not None:
        return f"round “{so.get('round_label') or local_text(so.get('round_started_at'))}”"
    return f"day {so['day']}"


def describe(so: dict, fmt: str = "%Y-%m-%d %H:%M") -> str:
    """One line: ``day 2026-12-01 signed off by Ana Ruiz, 2026-12-01 17:05: all boards read``."""
    text = f"{scope_text(so)} signed off by {so['signed_by']}, {local_text(so['signed_at'], fmt)}"
    return text + (f": {so['note']}" if so["note"] else "")
