"""The settings of sites and boards as rows that are only ever added: each change of a field is one
``setting_version`` row (merged field by field with other laptops' changes), the site and board rows are
recomputed from them (``materialize``), settings stored before there was a history get rows made from
their content (``backfill_history``, ``legacy_setting``), and two ids found to be the same site or board
are joined (``id_join`` rows; ``canonical``, ``apply_joins``).  Creating and editing sites and boards is
``sites.py``.

Writes run inside the caller's transaction, or one each (:func:`fieldpad.storage.db.write`), committed
before the function returns."""

from __future__ import annotations

import hashlib
import json

from ..core.readings import stored_text
from .db import StorageError, write
from .ids import stamp_after, utc_now, uuid7
from .rows import ValidationError, clean_text, insert

#: Site settings with a history (column names of the site table).
SITE_FIELDS = (
    "name",
    "description",
    "voltage_standard",
    "phase_labels",
    "colour_set",
    "thresholds_json",
    "label_review_years",
)
BOARD_FIELDS = (
    "name",
    "location",
    "kind",
    "system",
    "nominal_v",
    "frequency_hz",
    "af_incident_energy_cal_cm2",
    "af_working_distance_mm",
    "af_boundary_mm",
    "af_ppe",
    "af_label_date",
    "voltage_standard",
    "colour_set",
)  # the last two: None = the site's (migration 0005)

#: Fields whose every change is kept (``setting_version``): generic, so a new board field needs only its
#: column and its place in BOARD_FIELDS.
HISTORY_FIELDS = {"site": SITE_FIELDS, "board": ("site_id",) + BOARD_FIELDS}


# ---- history of settings, field by field -------------------------------------


def _record(db, entity: str, entity_id: str, values: dict, recorded_at: str, by=None) -> None:
    by = stored_text(by, 200)[0]
    for f, v in values.items():
        insert(
            db,
            "setting_version",
            {
                "id": uuid7(),
                "entity": entity,
                "entity_id": entity_id,
                "field": f,
                "value_json": json.dumps(v, ensure_ascii=False),
                "recorded_at": recorded_at,
                "recorded_by": by,
            },
        )


def _change(db, entity: str, entity_id: str, values: dict, by=None) -> None:
    """History rows for the fields that change, stamped after every earlier row of those fields (a laptop
    whose clock is behind another's still has its edit shown), then the settings row recomputed."""
    row = db[entity].get(entity_id)
    changed = {f: v for f, v in values.items() if row.get(f) != v}
    if not changed:
        return
    # Settings from before there was a history: their rows first (made from their content, as of the row's
    # creation), so the history is whole and every laptop that had the same settings makes the same rows.
    have = {
        r[0]
        for r in db.conn.execute(
            "SELECT DISTINCT field FROM setting_version WHERE entity = ? AND entity_id = ?", [entity, entity_id]
        )
    }
    for f in HISTORY_FIELDS[entity]:
        if f not in have and f in row:
            insert(db, "setting_version", legacy_setting(entity, row, f))
    marks = ", ".join("?" * len(changed))
    latest = db.conn.execute(
        f"SELECT MAX(recorded_at) FROM setting_version WHERE entity = ? AND entity_id = ? AND field IN ({marks})",
        [entity, entity_id, *changed],
    ).fetchone()[0]
    _record(db, entity, entity_id, changed, stamp_after(latest), by)
    materialize(db, entity, [entity_id])


def backfill_history(db) -> int:
    """History rows for settings stored before there was a history (a database from before schema
    0004, a field added later): one row per field without any, as of the row's creation, with an id
    made from its content, so that every laptop that backfills the same settings makes the same rows.
    Returns how many were added."""
    added = 0
    for entity, fields in HISTORY_FIELDS.items():
        have = {
            (r[0], r[1])
            for r in db.conn.execute("SELECT DISTINCT entity_id, field FROM setting_version WHERE entity = ?", [entity])
        }
        for row in db.query(f"SELECT * FROM {entity}"):
            for f in fields:
                if (row["id"], f) not in have and f in row:
                    insert(db, "setting_version", legacy_setting(entity, row, f))
                    added += 1
    return added


def legacy_setting(entity: str, row: dict, field: str) -> dict:
    value_json = json.dumps(row[field], ensure_ascii=False)
    digest = hashlib.sha256(json.dumps([entity, row["id"], field, value_json, row["created_at"]]).encode())
    return {
        "id": "legacy-" + digest.hexdigest()[:32],
        "entity": entity,
        "entity_id": row["id"],
        "field": field,
        "value_json": value_json,
        "recorded_at": row["created_at"],
        "recorded_by": None,
    }


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
        + where
        + " ORDER BY entity_id, field, recorded_at, id",
        params,
    ):
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
        row = db[entity].get(eid) if db.conn.execute(f"SELECT 1 FROM {entity} WHERE id = ?", [eid]).fetchone() else None
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
    return [
        {**r, "value": json.loads(r["value_json"])}
        for r in db.query(
            "SELECT * FROM setting_version WHERE entity = ? AND entity_id = ? ORDER BY recorded_at, id",
            [entity, entity_id],
        )
    ]


# ---- identity: joins of two ids -------------------------------------------------


def canonical(db, entity: str) -> dict:
    """Where each joined site or board is shown: {other_id: keep_id}, chains followed.  Joins apply in the
    order they were recorded (then by id); one that would undo an earlier one (KEEP already shown as
    OTHER) is passed over, so every laptop computes the same map from the same rows."""
    into: dict = {}

    def root(x):
        while x in into:
            x = into[x]
        return x

    for keep, other in db.conn.execute(
        "SELECT keep_id, other_id FROM id_join WHERE entity = ? ORDER BY recorded_at, id", [entity]
    ):
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
                raise StorageError(
                    f"no {entity} with id {eid} ({role}); list them with "
                    f"'fieldpad export --site NAME' or the merge report"
                )
            rows[role] = found[0]
        keep, other = rows["KEEP"], rows["OTHER"]
        if (keep["joined_into"] or keep["id"]) == (other["joined_into"] or other["id"]):
            raise StorageError(
                f"{entity} {other_id} is already shown as {keep['joined_into'] or keep_id}: nothing to join"
            )
        if keep["joined_into"]:
            raise StorageError(f"{entity} {keep_id} is itself joined into {keep['joined_into']}: keep that one")
        if entity == "board" and keep["site_id"] != other["site_id"]:
            raise StorageError(
                f"boards {keep_id} and {other_id} are on different sites ({keep['site_id']}, "
                f"{other['site_id']}): join the sites first (fieldpad join-sites KEEP_ID OTHER_ID)"
            )
        insert(
            db,
            "id_join",
            {
                "id": uuid7(),
                "entity": entity,
                "keep_id": keep_id,
                "other_id": other_id,
                "recorded_at": utc_now(),
                "recorded_by": by,
                "reason": reason,
            },
        )
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
