"""The checks every row coming in by ``merge`` passes (see ``merge.py``): rows are read without trusting
them (each value with its storage class, text as bytes so invalid UTF-8 is found, not crashed on), then
each table's rows are held to the rules of save and import (``validate_record``, the one text rule
``stored_text``, the site and board field rules, references, times).  Problems are lines naming file,
table, row id, field and reason; any one refuses the whole file (``MergeRefused``)."""

from __future__ import annotations

import json
import re
from pathlib import Path

from ..core.fields import NUMERIC_FIELDS
from ..core.readings import stored_text, validate_record
from . import settings_history, sites
from .db import StorageError

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
        super().__init__(
            problems[0]
            + (f" (and {more} more problem(s))" if more else "")
            + ("" if problems[0].endswith("nothing was merged") else "; nothing was merged")
        )


# ---- reading rows without trusting them ---------------------------------------------------


def _columns(conn, schema: str, table: str) -> list[tuple[str, str]]:
    return [(r[1], (r[2] or "").upper()) for r in conn.execute(f'PRAGMA {schema}.table_info("{table}")')]


def _raw_select(cols: list[str]) -> str:
    """Each column with its storage class; text read as bytes (invalid UTF-8 is found, not crashed on)."""
    return ", ".join(
        f'typeof(o."{c}"), CASE WHEN typeof(o."{c}") = \'text\' THEN CAST(o."{c}" AS BLOB) ELSE o."{c}" END'
        for c in cols
    )


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
    return [_decode(r, cols) for r in conn.execute(f'SELECT {_raw_select(cols)} FROM other."{table}" o {where}')]


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
            self.bad(table, v.get("id"), fld, f"is not valid UTF-8 text ({value.err.reason} at byte {value.err.start})")
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
    if entity not in settings_history.HISTORY_FIELDS:
        ck.bad(t, rid, "entity", f"{entity!r} is not site or board")
        return
    if fld not in settings_history.HISTORY_FIELDS[entity]:
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
    if v["entity"] not in settings_history.HISTORY_FIELDS:
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


CHECKS = {
    "reading": _check_reading,
    "setting_version": _check_setting,
    "id_join": _check_join,
    "version_parent": _check_parent,
    "round": _check_round,
    "signoff": _check_signoff,
}


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
    have = {
        "site": {r[0] for r in conn.execute("SELECT id FROM main.site")},
        "board": {r[0] for r in conn.execute("SELECT id FROM main.board")},
    }
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
