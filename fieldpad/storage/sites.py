"""Sites and boards: create, edit, look up, list; their thresholds and phase labels; same names under two
ids.  The history of their settings, and joins, are ``settings_history.py``.

Writes run in one transaction each (:func:`fieldpad.storage.db.write`) and are committed before the
function returns."""

from __future__ import annotations

import json

from ..core.fields import SYSTEMS
from ..core.phase_colours import COLOUR_SETS, phase_labels
from ..core.thresholds import Thresholds
from .db import write
from .ids import local_text, utc_now, uuid7
from .rows import NO_NUMBER, ValidationError, clean_text, number
from .settings_history import BOARD_FIELDS, _change, _record


def _site_values(fields: dict, problems: list) -> dict:
    """Check site fields (any subset); ``thresholds`` is a dict of overrides."""
    out = {}
    for k, v in fields.items():
        if k == "name":
            out[k] = clean_text(v, "name", problems, required=True, limit=200)
        elif k == "description":
            out[k] = clean_text(v, "description", problems, limit=2000)
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
            years = number(v, k, problems, low=0.1, high=50.01)
            if years is None:
                problems.append((k, "is required"))
            elif years is not NO_NUMBER:
                out[k] = years
        elif k == "thresholds":
            overrides = {}
            for name, value in (v or {}).items():
                x = number(value, name, problems)
                if x is not None and x is not NO_NUMBER:
                    overrides[name] = x
            try:
                Thresholds().with_overrides(overrides)
            except KeyError as e:
                problems.append(("thresholds", str(e).strip("'\"")))
            out["thresholds_json"] = json.dumps(overrides, sort_keys=True)
        else:
            problems.append((k, "unknown site field"))
    return out


def create_site(
    db,
    name,
    *,
    description=None,
    voltage_standard="ansi",
    phase_labels="ABC",
    colour_set="iec60445",
    thresholds=None,
    label_review_years=5.0,
    site_id=None,
    by=None,
) -> str:
    problems: list = []
    values = _site_values(
        {
            "name": name,
            "description": description,
            "voltage_standard": voltage_standard,
            "phase_labels": phase_labels,
            "colour_set": colour_set,
            "label_review_years": label_review_years,
            "thresholds": thresholds or {},
        },
        problems,
    )
    if problems:
        raise ValidationError(problems)
    now = utc_now()
    sid = site_id or uuid7()
    with write(db):
        db["site"].insert({"id": sid, **values, "created_at": now, "updated_at": now})
        _record(db, "site", sid, values, now, by)
    return sid


def update_site(db, site_id, *, by=None, **changes) -> None:
    """Change site settings; ``thresholds`` (a dict) replaces the site's threshold overrides.  Each
    changed field gets a history row (merged field by field with other laptops' changes)."""
    problems: list = []
    values = _site_values(changes, problems)
    if problems:
        raise ValidationError(problems)
    with write(db):
        _change(db, "site", site_id, values, by)


def get_site(db, site_id) -> dict:
    return db["site"].get(site_id)


def find_site(db, name) -> dict | None:
    """The first site (by id) of that name that is not joined into another; :func:`sites_matching` for all."""
    rows = list(db.query("SELECT * FROM site WHERE name = ? AND joined_into IS NULL ORDER BY id LIMIT 1", [name]))
    return rows[0] if rows else None


def list_sites(db) -> list[dict]:
    """Every site that stands on its own (a site joined into another is shown as that one)."""
    return list(db.query("SELECT * FROM site WHERE joined_into IS NULL ORDER BY name, id"))


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
        elif k in (
            "nominal_v",
            "frequency_hz",
            "af_incident_energy_cal_cm2",
            "af_working_distance_mm",
            "af_boundary_mm",
        ):
            x = number(v, k, problems)
            if x is not NO_NUMBER:
                out[k] = x
        elif k == "system":
            if v not in SYSTEMS:
                problems.append(("system", f"unknown system {v!r}"))
            out[k] = v
        elif k in ("voltage_standard", "colour_set"):  # a board's own setting; empty = the site's
            v = None if v is None or str(v).strip() == "" else str(v).strip()
            allowed = ("ansi", "iec") if k == "voltage_standard" else tuple(COLOUR_SETS)
            if v is not None and v not in allowed:
                problems.append((k, f"use one of {', '.join(allowed)}, or leave it to the site"))
            out[k] = v
        elif k == "af_label_date":
            text = clean_text(v, k, problems, limit=10)
            if text:
                import datetime as _dt

                try:
                    _dt.date.fromisoformat(text)
                except ValueError:
                    problems.append((k, f"{text!r} is not a date (YYYY-MM-DD)"))
            out[k] = text
        else:
            out[k] = clean_text(v, k, problems, required=(k == "name"), limit=200 if k == "name" else 2000)
    return out


def create_board(db, site_id, name, *, system="wye", board_id=None, by=None, **fields) -> str:
    problems: list = []
    values = _board_values({"name": name, "system": system, **fields}, problems)
    if problems:
        raise ValidationError(problems)
    now = utc_now()
    bid = board_id or uuid7()
    with write(db):
        db["board"].insert({"id": bid, "site_id": site_id, **values, "created_at": now, "updated_at": now})
        _record(db, "board", bid, {"site_id": site_id, **{f: values.get(f) for f in BOARD_FIELDS}}, now, by)
    return bid


def update_board(db, board_id, *, by=None, **fields) -> None:
    """Change board settings; each changed field gets a history row (merged field by field)."""
    problems: list = []
    values = _board_values(fields, problems)
    if problems:
        raise ValidationError(problems)
    with write(db):
        _change(db, "board", board_id, values, by)


def get_board(db, board_id) -> dict:
    return db["board"].get(board_id)


def find_board(db, site_id, name) -> dict | None:
    rows = list(
        db.query(
            "SELECT * FROM board WHERE site_id = ? AND name = ? AND joined_into IS NULL ORDER BY id LIMIT 1",
            [site_id, name],
        )
    )
    return rows[0] if rows else None


def board_standard(board: dict, site: dict) -> str:
    """The voltage standard a board's readings are checked against: its own, else its site's."""
    return board.get("voltage_standard") or site["voltage_standard"]


def board_colour_set(board: dict, site: dict) -> str:
    """The phase colours a board is drawn with: its own set, else its site's."""
    return board.get("colour_set") or site["colour_set"]


def list_boards(db, site_id) -> list[dict]:
    """The site's boards that stand on its own (joined ones are shown as the board they were joined into)."""
    return list(db.query("SELECT * FROM board WHERE site_id = ? AND joined_into IS NULL ORDER BY name, id", [site_id]))


# ---- identity: same names under two ids (joins: settings_history.py) -----------


def same_name_sites(db) -> list[list[dict]]:
    """Sites that stand on their own and share a name: each group's rows, by id."""
    out: dict = {}
    for s in db.query(
        "SELECT * FROM site WHERE joined_into IS NULL AND name IN (SELECT name FROM site WHERE "
        "joined_into IS NULL GROUP BY name HAVING COUNT(*) > 1) ORDER BY name, id"
    ):
        out.setdefault(s["name"], []).append(s)
    return list(out.values())


def same_name_boards(db) -> list[list[dict]]:
    """Boards of one site (as shown) that stand on their own and share a name, with ``site_name``."""
    out: dict = {}
    for b in db.query(
        "SELECT b.*, s.name AS site_name FROM board b JOIN site s ON s.id = b.site_id "
        "WHERE b.joined_into IS NULL AND EXISTS (SELECT 1 FROM board o WHERE o.site_id = b.site_id "
        "AND o.name = b.name AND o.id <> b.id AND o.joined_into IS NULL) ORDER BY s.name, b.name, b.id"
    ):
        out.setdefault((b["site_id"], b["name"]), []).append(b)
    return list(out.values())


def sites_matching(db, text: str) -> list[dict]:
    """The site a person named: by id (a joined site's id gives the site it is shown as), else every site
    of that name that stands on its own (several: the caller asks which)."""
    rows = list(db.query("SELECT * FROM site WHERE id = ?", [text]))
    if rows:
        s = rows[0]
        return [get_site(db, s["joined_into"])] if s["joined_into"] else [s]
    return list(db.query("SELECT * FROM site WHERE name = ? AND joined_into IS NULL ORDER BY id", [text]))


def site_summary(db, site_id: str) -> str:
    """A few words that tell two same-named sites apart: boards, readings, first recorded."""
    row = db.conn.execute(
        "SELECT (SELECT COUNT(*) FROM board WHERE site_id = :s AND joined_into IS NULL), "
        "(SELECT COUNT(*) FROM reading_current r JOIN board b ON b.id = r.board_id WHERE b.site_id = :s "
        " AND r.void = 0), "
        "(SELECT created_at FROM site WHERE id = :s)",
        {"s": site_id},
    ).fetchone()
    return f"{row[0]} board(s), {row[1]} reading(s), created {local_text(row[2])}"
