"""The supervisor's export: current readings with their computed results and findings.

Results are computed here from the stored inputs by the core (they are not
stored), with each site's own thresholds and phase labels.
"""

from __future__ import annotations

import csv
import io
import json
from datetime import date, datetime, time, timedelta

from ..core.fields import NUMERIC_FIELDS
from ..core.phase_colours import phase_labels
from ..core.results import RESULT_FIELDS, analyze_records
from ..core.thresholds import Thresholds
from ..formats.records import EXPORT_FORMAT, findings_cell, formula_guard
from ..storage import sites, versions
from ..storage.db import StorageError
from ..storage.ids import local_text, to_utc_text, utc_now

FORMAT_VERSION = 1
META_FIELDS = (
    "site",
    "board",
    "taken_at",
    "technician",
    "instrument",
    "round",
    "note",
    "reading_id",
    "version",
    "reason",
    "recorded_at",
)
INPUT_FIELDS = ("system", "standard") + NUMERIC_FIELDS
RESULT_COLUMNS = tuple(f for f in RESULT_FIELDS if f != "findings")
#: Columns added after the contract's (their places are kept): the version's own id (imported again, the
#: same reading is recognised), and ``taken_at`` in this machine's local time with its UTC offset.
ADDED_FIELDS = ("version_id", "taken_at_local")
CSV_FIELDS = META_FIELDS + INPUT_FIELDS + RESULT_COLUMNS + ("findings",) + ADDED_FIELDS
LOCAL_FORMAT = "%Y-%m-%d %H:%M:%S %z"
#: Readings analysed and written per block by the streaming exports.
EXPORT_BLOCK = 40_000  # above the analysis's split size (2 x 16,384): its threads share a block
#: Text that a spreadsheet would run as a formula starts with one of these.
USER_TEXT = ("site", "board", "technician", "instrument", "round", "note", "reason")


def day_range_utc(day: str) -> tuple[str, str]:
    """UTC start and end of a local calendar day given as YYYY-MM-DD."""
    d = date.fromisoformat(day)
    start = datetime.combine(d, time.min).astimezone()
    end = datetime.combine(d + timedelta(days=1), time.min).astimezone()
    return to_utc_text(start), to_utc_text(end)


def analyze_rows(rows: list[dict]) -> list[dict]:
    """Core results for stored reading rows, each with its site's thresholds and labels."""
    out: list = [None] * len(rows)
    groups: dict = {}
    for k, r in enumerate(rows):
        groups.setdefault((r.get("thresholds_json") or "{}", r.get("phase_labels") or "ABC"), []).append(k)
    for (th_json, labels), idx in groups.items():
        th = Thresholds().with_overrides(json.loads(th_json))
        lab = phase_labels(labels)
        recs = [
            {**{f: rows[k][f] for f in NUMERIC_FIELDS}, "system": rows[k]["system"], "standard": rows[k]["standard"]}
            for k in idx
        ]
        for k, res in zip(idx, analyze_records(recs, th, lab)):
            out[k] = res
    return out


def export_records(db, *, day=None, site=None, site_id=None, round_id=None) -> list[dict]:
    """One record per current reading: meta, inputs, results, findings.  ``site_id`` picks one site (a site
    joined into it included); ``site`` by name only where one site has it (two: StorageError)."""
    start = end = None
    if day:
        start, end = day_range_utc(day)
    if site and not site_id:
        found = sites.sites_matching(db, site)
        if len(found) > 1:
            raise StorageError(
                f"{len(found)} sites are named {site!r}: choose one by id ({', '.join(s['id'] for s in found)})"
            )
        if not found:
            return []
        site_id = found[0]["id"]
    rows = versions.current_readings(db, day_start_utc=start, day_end_utc=end, site_id=site_id, round_id=round_id)
    results = analyze_rows(rows)
    competing = versions.conflicts(db, {r["reading_id"] for r in rows})
    out = []
    for r, res in zip(rows, results):
        out.append(
            {
                "site": r["site_name"],
                "board": r["board_name"],
                "taken_at": r["taken_at"],
                "taken_at_local": local_text(r["taken_at"], LOCAL_FORMAT),
                "technician": r["technician"],
                "instrument": r["instrument"],
                "round": r["round_label"],
                "note": r["note"],
                "reading_id": r["reading_id"],
                "version": r["version"],
                "version_id": r["id"],
                "reason": r["reason"],
                "recorded_at": r["recorded_at"],
                "board_id": r["shown_board_id"],
                "site_id": r["site_id"],
                "conflict": r["reading_id"] in competing,
                "inputs": {f: r[f] for f in INPUT_FIELDS},
                "results": {f: res[f] for f in RESULT_COLUMNS},
                "findings": res["findings"],
            }
        )
    return out


def to_csv(records: list[dict]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(CSV_FIELDS)
    for rec in records:
        meta = [formula_guard(rec[f]) if f in USER_TEXT else rec[f] for f in META_FIELDS]
        inputs, results = rec["inputs"], rec["results"]
        row = meta + [inputs[f] for f in INPUT_FIELDS] + [results[f] for f in RESULT_COLUMNS]
        row.append(findings_cell(rec["findings"]))
        row += [rec["version_id"], rec["taken_at_local"]]
        w.writerow(["" if v is None else v for v in row])
    return "\ufeff" + buf.getvalue()  # BOM: spreadsheets then read the file as UTF-8


def to_json(records: list[dict], *, day=None, site=None) -> str:
    doc = {
        "format": EXPORT_FORMAT,
        "format_version": FORMAT_VERSION,
        "generated_at": utc_now(),
        "filters": {"day": day, "site": site},
        "readings": records,
    }
    return json.dumps(doc, ensure_ascii=False, indent=2) + "\n"


# ---- streaming exports: a block of readings at a time, written from columns -----------------------------------

_STREAM_COLUMNS = (
    "id",
    "reading_id",
    "version",
    "taken_at",
    "technician",
    "instrument",
    "note",
    "reason",
    "recorded_at",
    "board_id",
    "system",
    "standard",
) + NUMERIC_FIELDS


def _current_query(db, *, day=None, site=None, site_id=None):
    """The current readings, as :func:`fieldpad.storage.versions.current_readings` selects and orders them
    (a board joined into another shown as that one, sites by id), as a cursor of tuples; None when ``site``
    names no site.  ``site`` by name only where one site has it (two: StorageError)."""
    where, params = ["r.void = 0"], {}
    if day:
        start, end = day_range_utc(day)
        where.append("r.taken_at >= :start AND r.taken_at < :end")
        params.update(start=start, end=end)
    if site and not site_id:
        found = sites.sites_matching(db, site)
        if len(found) > 1:
            raise StorageError(
                f"{len(found)} sites are named {site!r}: choose one by id ({', '.join(s['id'] for s in found)})"
            )
        if not found:
            return None
        site_id = found[0]["id"]
    if site_id:
        where.append("b.site_id = :site")
        params["site"] = site_id
    cols = ", ".join(f"r.{c}" for c in _STREAM_COLUMNS)
    sql = (
        f"SELECT {cols}, b.id, b.site_id, b.name, s.name, s.phase_labels, s.thresholds_json, ro.label "
        "FROM reading_current r JOIN board b0 ON b0.id = r.board_id "
        "JOIN board b ON b.id = COALESCE(b0.joined_into, b0.id) JOIN site s ON s.id = b.site_id "
        "LEFT JOIN round ro ON ro.id = r.round_id WHERE "
        + " AND ".join(where)
        + " ORDER BY s.name, s.id, b.name, b.id, r.taken_at, r.id"
    )
    return db.conn.execute(sql, params)


def _blocks(cursor, rows=EXPORT_BLOCK):
    """Runs of rows with one site setting (thresholds, labels), at most ``rows`` long, as column dicts."""
    names = _STREAM_COLUMNS + (
        "shown_board_id",
        "site_id",
        "board_name",
        "site_name",
        "phase_labels",
        "thresholds_json",
        "round_label",
    )
    while True:
        batch = cursor.fetchmany(rows)
        if not batch:
            return
        start = 0
        key = lambda r: (r[-2], r[-3])  # noqa: E731
        for k in range(1, len(batch) + 1):
            if k == len(batch) or key(batch[k]) != key(batch[start]):
                part = batch[start:k]
                yield dict(zip(names, (list(c) for c in zip(*part))))
                start = k


def _analyse(block):
    import numpy as np

    from ..core.analysis import analyze
    from ..core.fields import STANDARDS, SYSTEMS

    th = Thresholds().with_overrides(json.loads(block["thresholds_json"][0] or "{}"))
    labels = phase_labels(block["phase_labels"][0] or "ABC")
    cols = {f: np.array(block[f], dtype=float) for f in NUMERIC_FIELDS}  # None -> NaN
    system = np.array([SYSTEMS[s] for s in block["system"]], np.int8)
    standard = np.array([STANDARDS.get(s, 0) for s in block["standard"]], np.int8)
    return cols, analyze(cols, system, standard, th), labels, standard


def local_times(utc_texts: list, fmt: str = LOCAL_FORMAT) -> list:
    """Stored UTC times in this machine's local time (:func:`fieldpad.storage.ids.local_text` of each), at
    once: the UTC offset is looked up once per quarter hour (time zones change their offset only on a quarter
    hour), the rest is array arithmetic."""
    from datetime import UTC

    import numpy as np

    if fmt != LOCAL_FORMAT:
        return [local_text(t, fmt) for t in utc_texts]
    try:
        t = np.array([s[:-1] if s and s.endswith("Z") else "NaT" for s in utc_texts], dtype="datetime64[s]")
    except ValueError:
        return [local_text(t, fmt) for t in utc_texts]
    secs = t.astype(np.int64)
    bad = np.isnat(t)
    quarter, inverse = np.unique(np.where(bad, 0, secs) // 900, return_inverse=True)
    offsets = np.array(
        [datetime.fromtimestamp(int(q) * 900, UTC).astimezone().utcoffset().total_seconds() for q in quarter.tolist()],
        np.int64,
    )
    off = offsets[np.asarray(inverse).ravel()]
    local = np.datetime_as_string((secs + off).astype("datetime64[s]"), unit="s")
    texts = np.char.replace(local, "T", " ")
    names = {o: f"{'+' if o >= 0 else '-'}{abs(o) // 3600:02d}{abs(o) % 3600 // 60:02d}" for o in set(offsets.tolist())}
    out = [f"{a} {names[o]}" for a, o in zip(texts.tolist(), off.tolist())]
    for i in np.flatnonzero(bad).tolist():
        out[i] = local_text(utc_texts[i], fmt)
    return out


def write_csv(db, out, *, day=None, site=None, site_id=None) -> int:
    """The CSV export (:func:`to_csv` of :func:`export_records`, the same bytes) written to the binary
    stream ``out`` a block at a time; returns the number of readings, or -1 when ``site`` names no site."""
    from ..formats.writers import (
        ascii_cells,
        assemble,
        csv_text,
        findings_csv_cells,
        fixed_text,
        float_cells,
        result_columns,
        slices,
        vocab_cells,
    )

    cursor = _current_query(db, day=day, site=site, site_id=site_id)
    if cursor is None:
        return -1
    out.write(("\ufeff" + ",".join(CSV_FIELDS) + "\r\n").encode("utf-8"))
    count = 0

    def guarded(v):
        return csv_text(formula_guard(v))

    for block in _blocks(cursor):
        cols, whole, labels, _std = _analyse(block)
        for lo, hi, result in slices(whole):
            n = hi - lo
            parts = []
            for f in META_FIELDS:
                values = block[{"site": "site_name", "board": "board_name", "round": "round_label"}.get(f, f)][lo:hi]
                if f == "version":
                    parts.append(ascii_cells([str(v) for v in values]))
                elif f in ("taken_at", "reading_id", "recorded_at"):
                    parts.append(ascii_cells(values))
                else:
                    parts.append(fixed_text(values, guarded if f in USER_TEXT else csv_text))
                parts.append(b",")
            for f in ("system", "standard"):
                parts.append(ascii_cells(block[f][lo:hi]))
                parts.append(b",")
            for f in NUMERIC_FIELDS:
                parts.append(float_cells(cols[f][lo:hi], rounded=False))
                parts.append(b",")
            rc = result_columns(result, labels)
            for f in RESULT_COLUMNS:
                kind = rc[f]
                parts.append(
                    float_cells(kind[1]) if kind[0] == "num" else vocab_cells(kind[1], kind[2], quote=csv_text)
                )
                parts.append(b",")
            parts.append(findings_csv_cells(result, labels))
            parts.append(b",")
            parts.append(ascii_cells(block["id"][lo:hi]))
            parts.append(b",")
            parts.append(ascii_cells(local_times(block["taken_at"][lo:hi])))
            parts.append(b"\r\n")
            out.write(assemble(parts, n))
            count += n
    return count


def write_json(db, out, *, day=None, site=None, site_id=None) -> int:
    """The JSON export (:func:`to_json` of :func:`export_records`) written to ``out`` a block at a time."""
    cursor = _current_query(db, day=day, site=site, site_id=site_id)
    if cursor is None:
        return -1
    head = json.dumps(
        {
            "format": EXPORT_FORMAT,
            "format_version": FORMAT_VERSION,
            "generated_at": utc_now(),
            "filters": {"day": day, "site": site},
            "readings": [],
        },
        ensure_ascii=False,
        indent=2,
    )
    before, after = head.rsplit('"readings": []', 1)
    out.write((before + '"readings": [').encode("utf-8"))
    count = 0
    from ..core.results import to_records

    for block in _blocks(cursor):
        cols, result, labels, std = _analyse(block)
        results = to_records(result, labels, std)
        local = local_times(block["taken_at"])
        competing = versions.conflicts(db, set(block["reading_id"]))
        texts = []
        for i, res in enumerate(results):
            rec = {
                "site": block["site_name"][i],
                "board": block["board_name"][i],
                "taken_at": block["taken_at"][i],
                "taken_at_local": local[i],
                "technician": block["technician"][i],
                "instrument": block["instrument"][i],
                "round": block["round_label"][i],
                "note": block["note"][i],
                "reading_id": block["reading_id"][i],
                "version": block["version"][i],
                "version_id": block["id"][i],
                "reason": block["reason"][i],
                "recorded_at": block["recorded_at"][i],
                "board_id": block["shown_board_id"][i],
                "site_id": block["site_id"][i],
                "conflict": block["reading_id"][i] in competing,
                "inputs": {f: block[f][i] for f in INPUT_FIELDS},
                "results": {f: res[f] for f in RESULT_COLUMNS},
                "findings": res["findings"],
            }
            texts.append("\n    " + json.dumps(rec, ensure_ascii=False, indent=2).replace("\n", "\n    "))
        out.write(((",") if count else "").encode() + ",".join(texts).encode("utf-8"))
        count += len(results)
    out.write(("\n  " if count else "").encode() + ("]" + after + "\n").encode("utf-8"))
    return count
