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
META_FIELDS = ("site", "board", "taken_at", "technician", "instrument", "round", "note",
               "reading_id", "version", "reason", "recorded_at")
INPUT_FIELDS = ("system", "standard") + NUMERIC_FIELDS
RESULT_COLUMNS = tuple(f for f in RESULT_FIELDS if f != "findings")
CSV_FIELDS = META_FIELDS + INPUT_FIELDS + RESULT_COLUMNS + ("findings",)
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
        recs = [{**{f: rows[k][f] for f in NUMERIC_FIELDS}, "system": rows[k]["system"],
                 "standard": rows[k]["standard"]} for k in idx]
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
            raise StorageError(f"{len(found)} sites are named {site!r}: choose one by id "
                               f"({', '.join(s['id'] for s in found)})")
        if not found:
            return []
        site_id = found[0]["id"]
    rows = versions.current_readings(db, day_start_utc=start, day_end_utc=end, site_id=site_id, round_id=round_id)
    results = analyze_rows(rows)
    competing = versions.conflicts(db, {r["reading_id"] for r in rows})
    out = []
    for r, res in zip(rows, results):
        out.append({
            "site": r["site_name"], "board": r["board_name"], "taken_at": r["taken_at"],
            "taken_at_local": local_text(r["taken_at"], "%Y-%m-%d %H:%M:%S %z"),
            "technician": r["technician"], "instrument": r["instrument"], "round": r["round_label"],
            "note": r["note"], "reading_id": r["reading_id"], "version": r["version"], "reason": r["reason"],
            "recorded_at": r["recorded_at"], "board_id": r["shown_board_id"], "site_id": r["site_id"],
            "conflict": r["reading_id"] in competing,
            "inputs": {f: r[f] for f in INPUT_FIELDS},
            "results": {f: res[f] for f in RESULT_COLUMNS},
            "findings": res["findings"],
        })
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
        w.writerow(["" if v is None else v for v in row])
    return "\ufeff" + buf.getvalue()  # BOM: spreadsheets then read the file as UTF-8


def to_json(records: list[dict], *, day=None, site=None) -> str:
    doc = {"format": EXPORT_FORMAT, "format_version": FORMAT_VERSION, "generated_at": utc_now(),
           "filters": {"day": day, "site": site}, "readings": records}
    return json.dumps(doc, ensure_ascii=False, indent=2) + "\n"
