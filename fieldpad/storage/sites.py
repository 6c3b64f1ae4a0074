"""Sites and boards: create, edit, look up, list; their thresholds and phase labels.

Writes run in one transaction each (:func:`fieldpad.storage.db.write`) and are committed before the
function returns."""
from __future__ import annotations

import hashlib
import json

from ..core.fields import SYSTEMS
from ..core.phase_colours import COLOUR_SETS, phase_labels
from ..core.readings import stored_text
from ..core.thresholds import Thresholds
from .db import StorageError, write
from .ids import local_text, stamp_after, utc_now, uuid7
from .rows import NO_NUMBER, ValidationError, clean_text, insert, number

#: Site settings with a history (column names of the site table).
SITE_FIELDS = ("name", "description", "voltage_standard", "phase_labels", "colour_set", "thresholds_json",
               "label_review_years")
BOARD_FIELDS = ("name", "location", "kind", "system", "nominal_v", "frequency_hz", "af_incident_energy_cal_cm2",
                "af_working_distance_mm", "af_boundary_mm", "af_ppe", "af_label_date",
                "voltage_standard", "colour_set")  # the last two: None = the site's (migration 0005)

#: Fields whose every change is kept (``setting_version``): generic, so a new board field needs only its
#: column and its place in BOARD_FIELDS.
HISTORY_FIELDS = {"site": SITE_FIELDS, "board": ("site_id",) + BOARD_FIELDS}


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


def create_site(db, name, *, description=None, voltage_standard="ansi", phase_labels="ABC",
                colour_set="iec60445", thresholds=None, label_review_years=5.0, site_id=None, by=None) -> str:
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
        elif k in ("nominal_v", "frequency_hz", "af_incident_energy_cal_cm2", "af_working_distance_mm",
                   "af_boundary_mm"):
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
    rows = list(db.query("SELECT * FROM board WHERE site_id = ? AND name = ? AND joined_into IS NULL ORDER BY id "
                         "LIMIT 1", [site_id, name]))
    return rows[0] if rows else None


def board_standard(board: dict, site: dict) -> str:
    """The voltage standard a board's readings are checked against: its own, else its site's."""
    return board.get("voltage_standard") or site["voltage_standard"]


def board_colour_set(board: dict, site: dict) -> str:
    """The phase colours a board is drawn with: its own set, else its site's."""
    return board.get("colour_set") or site["colour_set"]


def list_boards(db, site_id) -> list[dict]:
    """The site's boards that stand on its own (joined ones are shown as the board they were joined into)."""
    return list(db.query("SELECT * FROM board WHERE site_id = ? AND joined_into IS NULL ORDER BY name, id",
                         [site_id]))


# ---- history of settings, field by field -------------------------------------


def _record(db, entity: str, entity_id: str, values: dict, recorded_at: str, by=None) -> None:
    by = stored_text(by, 200)[0]
    for f, v in values.items():
        insert(db, "setting_version", {"id": uuid7(), "entity": entity, "entity_id": entity_id, "field": f,
                                       "value_json": json.dumps(v, ensure_ascii=False), "recorded_at": recorded_at,
                                       "recorded_by": by})


def _change(db, entity: str, entity_id: str, values: dict, by=None) -> None:
    """History rows for the fields that change, stamped after every earlier row of those fields (a laptop
    whose clock is behind another's still has its edit shown), then the settings row recomputed."""
    row = db[entity].get(entity_id)
    changed = {f: v for f, v in values.items() if row.get(f) != v}
    if not changed:
        return
    # Settings from before there was a history: their rows first (made from their content, as of the row's
    # creation), so the history is whole and every laptop that had the same settings makes the same rows.
    have = {r[0] for r in db.conn.execute("SELECT DISTINCT field FROM setting_version WHERE entity = ? AND "
                                          "entity_id = ?", [entity, entity_id])}
    for f in HISTORY_FIELDS[entity]:
        if f not in have and f in row:
            insert(db, "setting_version", legacy_setting(entity, row, f))
    marks = ", ".join("?" * len(changed))
    latest = db.conn.execute(f"SELECT MAX(recorded_at) FROM setting_version WHERE entity = ? AND entity_id = ? "
                             f"AND field IN ({marks})", [entity, entity_id, *changed]).fetchone()[0]
    _record(db, entity, entity_id, changed, stamp_after(latest), by)
    materialize(db, entity, [entity_id])


def backfill_history(db) -> int:
    """History rows for settings stored before there was a history (a database from before schema
    0004, a field added later): one row per field without any, as of the row's creation, with an id
    made from its content, so that every laptop that backfills the same settings makes the same rows.
    Returns how many were added."""
    added = 0
    for entity, fields in HISTORY_FIELDS.items():
        have = {(r[0], r[1]) for r in db.conn.execute(
            "SELECT DISTINCT entity_id, field FROM setting_version WHERE entity = ?", [entity])}
        for row in db.query(f"SELECT * FROM {entity}"):
            for f in fields:
                if (row["id"], f) not in have and f in row:
                    insert(db, "setting_version", legacy_setting(entity, row, f))
                    added += 1
    return added


def legacy_setting(entity: str, row: dict, field: str) -> dict:
    value_json = json.dumps(row[field], ensure_ascii=False)
    digest = hashlib.sha256(json.dumps([entity, row["id"], field, value_json, row["created_at"]]).encode())
    return {"id": "legacy-" + digest.hexdigest()[:32], "entity": entity, "entity_id": row["id"], "field": field,
            "value_json": value_json, "recorded_at": row["created_at"], "recorded_by": None}


def materialize(db, entity: str, ids=None) -> int:
    """Recompute settings rows from their history: each field's latest row (latest recorded_at, then
    largest id), ``created_at``/``updated_at`` the first and last recorded times.  A row missing here
    (it came from another laptop) is created.  ``ids``: only these entities.  Returns rows changed."""
    fields = HISTORY_FIELDS[entity]
    where, params = "", [entity]
    if ids is not None:
        ids = list(ids)
        if not ids:
            return 0
        where = f" AND entity_id IN ({', '.join('?' * len(ids))})"
        params += ids
    latest: dict = {}
    span: dict = {}
    for eid, f, value_json, at, _vid in db.conn.execute(
            "SELECT entity_id, field, value_json, recorded_at, id FROM setting_version WHERE entity = ?"
            + where + " ORDER BY entity_id, field, recorded_at, id", params):
        if f in fields:
            latest.setdefault(eid, {})[f] = json.loads(value_json)
        lo, hi = span.get(eid, (at, at))
        span[eid] = (min(lo, at), max(hi, at))
    site_of = canonical(db, "site") if entity == "board" else {}
    changed = 0
    for eid, values in latest.items():
        if entity == "board" and "site_id" in values:
            values["site_id"] = site_of.get(values["site_id"], values["site_id"])
        values["created_at"], values["updated_at"] = span[eid]
        row = db[entity].get(eid) if db.conn.execute(f"SELECT 1 FROM {entity} WHERE id = ?", [eid]).fetchone() \
            else None
        if row is None:
            insert(db, entity, {"id": eid, **values})
            changed += 1
        else:
            diff = {k: v for k, v in values.items() if row.get(k) != v}
            if diff:
                db[entity].update(eid, diff)
                changed += 1
    return changed


def setting_history(db, entity: str, entity_id: str) -> list[dict]:
    """Every recorded change of a site's or board's settings, oldest first (value decoded)."""
    return [{**r, "value": json.loads(r["value_json"])} for r in db.query(
        "SELECT * FROM setting_version WHERE entity = ? AND entity_id = ? ORDER BY recorded_at, id",
        [entity, entity_id])]


# ---- identity: same names under two ids, joins --------------------------------


def canonical(db, entity: str) -> dict:
    """Where each joined site or board is shown: {other_id: keep_id}, chains followed.  Joins apply in the
    order they were recorded (then by id); one that would undo an earlier one (KEEP already shown as
    OTHER) is passed over, so every laptop computes the same map from the same rows."""
    into: dict = {}

    def root(x):
        while x in into:
            x = into[x]
        return x

    for keep, other in db.conn.execute("SELECT keep_id, other_id FROM id_join WHERE entity = ? "
                                       "ORDER BY recorded_at, id", [entity]):
        k, o = root(keep), root(other)
        if k != o:
            into[o] = k
    return {x: root(x) for x in into}


def apply_joins(db) -> int:
    """Set ``joined_into`` on sites and boards (and a joined site's boards on the site kept) from the
    recorded joins.  Returns rows changed."""
    changed = 0
    site_map = canonical(db, "site")
    for entity, mapping in (("site", site_map), ("board", None)):
        if entity == "board":
            # Boards of a joined site are the kept site's boards (their history keeps the site they had).
            changed += materialize(db, "board")
            mapping = canonical(db, "board")
        for eid, now_into in db.conn.execute(f"SELECT id, joined_into FROM {entity}").fetchall():
            want = mapping.get(eid)
            if want != now_into:
                db.conn.execute(f"UPDATE {entity} SET joined_into = ? WHERE id = ?", [want, eid])
                changed += 1
    return changed


def join(db, entity: str, keep_id: str, other_id: str, *, by=None, reason=None) -> list[tuple]:
    """Record that ``other_id`` is the same site (or board) as ``keep_id``: from then on it is shown as
    ``keep_id`` (its readings, boards and history included), on every laptop that merges this record.
    The kept one's settings stand; returns the fields where the other's differed, as
    ``(field, kept value, other's value)``, for the person to check.

    Raises
    ------
    StorageError
        An unknown id, the same one twice, already joined, or boards on different sites."""
    if entity not in HISTORY_FIELDS:
        raise StorageError(f"cannot join {entity!r}: only sites and boards")
    problems: list = []
    reason = clean_text(reason, "reason", problems, limit=2000)
    by = clean_text(by, "by", problems, limit=200)
    if problems:
        raise ValidationError(problems)
    with write(db):
        rows = {}
        for role, eid in (("KEEP", keep_id), ("OTHER", other_id)):
            found = list(db.query(f"SELECT * FROM {entity} WHERE id = ?", [eid]))
            if not found:
                raise StorageError(f"no {entity} with id {eid} ({role}); list them with "
                                   f"'fieldpad export --site NAME' or the merge report")
            rows[role] = found[0]
        keep, other = rows["KEEP"], rows["OTHER"]
        if (keep["joined_into"] or keep["id"]) == (other["joined_into"] or other["id"]):
            raise StorageError(f"{entity} {other_id} is already shown as {keep['joined_into'] or keep_id}: "
                               "nothing to join")
        if keep["joined_into"]:
            raise StorageError(f"{entity} {keep_id} is itself joined into {keep['joined_into']}: keep that one")
        if entity == "board" and keep["site_id"] != other["site_id"]:
            raise StorageError(f"boards {keep_id} and {other_id} are on different sites ({keep['site_id']}, "
                               f"{other['site_id']}): join the sites first (fieldpad join-sites KEEP_ID OTHER_ID)")
        insert(db, "id_join", {"id": uuid7(), "entity": entity, "keep_id": keep_id, "other_id": other_id,
                               "recorded_at": utc_now(), "recorded_by": by, "reason": reason})
        backfill_history(db)
        apply_joins(db)
    fields = [f for f in HISTORY_FIELDS[entity] if f != "site_id"]
    return [(f, keep[f], other[f]) for f in fields if keep.get(f) != other.get(f)]


def joined_differences(db, entity: str, keep_id: str, fields=None) -> list[tuple[str, object, str]]:
    """Settings of the sites (boards) joined into ``keep_id`` that differ from the kept one's: ``(field,
    their value, their id)``, so a report can say that another laptop recorded, say, another arc-flash
    label for the same board."""
    keep = db[entity].get(keep_id)
    out = []
    for other in db.query(f"SELECT * FROM {entity} WHERE joined_into = ? ORDER BY id", [keep_id]):
        for f in fields or [f for f in HISTORY_FIELDS[entity] if f != "site_id"]:
            if other.get(f) is not None and other.get(f) != keep.get(f):
                out.append((f, other[f], other["id"]))
    return out


def same_name_sites(db) -> list[list[dict]]:
    """Sites that stand on their own and share a name: each group's rows, by id."""
    out: dict = {}
    for s in db.query("SELECT * FROM site WHERE joined_into IS NULL AND name IN (SELECT name FROM site WHERE "
                      "joined_into IS NULL GROUP BY name HAVING COUNT(*) > 1) ORDER BY name, id"):
        out.setdefault(s["name"], []).append(s)
    return list(out.values())


def same_name_boards(db) -> list[list[dict]]:
    """Boards of one site (as shown) that stand on their own and share a name, with ``site_name``."""
    out: dict = {}
    for b in db.query("SELECT b.*, s.name AS site_name FROM board b JOIN site s ON s.id = b.site_id "
                      "WHERE b.joined_into IS NULL AND EXISTS (SELECT 1 FROM board o WHERE o.site_id = b.site_id "
                      "AND o.name = b.name AND o.id <> b.id AND o.joined_into IS NULL) ORDER BY s.name, b.name, b.id"):
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
        "(SELECT created_at FROM site WHERE id = :s)", {"s": site_id}).fetchone()
    return f"{row[0]} board(s), {row[1]} reading(s), created {local_text(row[2])}"
