"""``fieldpad import``: readings from a CSV or JSON file, all or nothing.

Each record has the reading fields of ``fieldpad compute`` plus ``site``,
``board`` and ``taken_at`` (required), and ``technician``, ``round``,
``instrument`` and ``note``.  The columns that ``fieldpad export`` adds
(results, findings, ids, versions) are read past, so an export can be
imported again.  If any record is bad nothing is imported.
"""
from __future__ import annotations

import json
from dataclasses import dataclass, field

from ..core.fields import NUMERIC_FIELDS
from ..core.readings import stored_text, validate_record
from ..core.results import RESULT_FIELDS
from ..formats.records import PROBLEMS_KEY, formula_unguard, parse_records, record_problems
from . import rounds, sites
from .db import write
from .ids import parse_time, utc_now, uuid7

META = ("site", "board", "taken_at", "technician", "round", "instrument", "note")
#: Export-only columns, read past on import.
EXPORT_ONLY = ("reading_id", "version", "reason", "recorded_at", "taken_at_local") + tuple(RESULT_FIELDS)
TEXT_LIMITS = {"site": 200, "board": 200, "technician": 200, "round": 200, "instrument": 200, "note": 10_000}


@dataclass
class ImportReport:
    readings: int = 0
    sites_created: list = field(default_factory=list)
    boards_created: list = field(default_factory=list)
    problems: list = field(default_factory=list)  # "where: field: reason"


def import_bytes(db, data: bytes, progress=None) -> ImportReport:
    """Validate every record, then store them all in one transaction.

    ``progress(done, total)`` is called while storing.  Raises
    :class:`fieldpad.formats.records.InputError` for a file that cannot be read.
    """
    parsed = parse_records(data)
    report = ImportReport()
    prepared = []
    for where, rec in parsed.records:
        early = record_problems(rec)
        report.problems.extend(f"{where}: {f}: {r}" for f, r in early)
        if early and "__extra__" in rec:
            continue
        rec.pop(PROBLEMS_KEY, None)
        rec = {k: v for k, v in rec.items() if k not in EXPORT_ONLY}
        clean, problems = validate_record(rec, extra_fields=META)
        for name in META:
            value, why = stored_text(formula_unguard(rec.get(name)), TEXT_LIMITS.get(name, 10_000))
            if why:
                problems.append((name, why))
            clean[name] = value
        for name in ("site", "board", "taken_at"):
            if not clean.get(name):
                problems.append((name, "is required"))
        if clean.get("taken_at"):
            try:
                clean["taken_at"] = parse_time(clean["taken_at"])
            except ValueError as e:
                problems.append(("taken_at", str(e)))
        system_given = bool(rec.get("system") and str(rec["system"]).strip())
        report.problems.extend(f"{where}: {f}: {r}" for f, r in problems)
        prepared.append((where, clean, rec, system_given))
    if report.problems:
        return report

    # Boards that exist must agree on the system type.
    site_by_name = {}
    for where, clean, _rec, system_given in prepared:
        s = site_by_name.get(clean["site"]) or sites.find_site(db, clean["site"])
        if s:
            site_by_name[clean["site"]] = s
            b = sites.find_board(db, s["id"], clean["board"])
            if b and system_given and b["system"] != clean["system"]:
                report.problems.append(f"{where}: system: board {clean['board']!r} is {b['system']}, "
                                       f"the record says {clean['system']}")
    if report.problems:
        return report

    total = len(prepared)
    with write(db):
        site_ids, site_std, board_rows, round_ids = {}, {}, {}, {}
        rows = []
        for k, (_where, clean, rec, system_given) in enumerate(prepared):
            sname, bname = clean["site"], clean["board"]
            if sname not in site_ids:
                s = sites.find_site(db, sname)
                if s is None:
                    std = clean["standard"] if rec.get("standard") else "ansi"
                    site_ids[sname] = sites.create_site(db, sname, voltage_standard=std)
                    site_std[sname] = std
                    report.sites_created.append(sname)
                else:
                    site_ids[sname] = s["id"]
                    site_std[sname] = s["voltage_standard"]
            sid = site_ids[sname]
            if (sid, bname) not in board_rows:
                b = sites.find_board(db, sid, bname)
                if b is None:
                    bid = sites.create_board(db, sid, bname, system=clean["system"], nominal_v=clean["nominal_v"])
                    b = sites.get_board(db, bid)
                    report.boards_created.append(f"{sname} / {bname}")
                board_rows[(sid, bname)] = b
            board = board_rows[(sid, bname)]
            rid = None
            if clean.get("round"):
                key = (sid, clean["round"])
                if key not in round_ids:
                    found = list(db.query("SELECT id FROM round WHERE site_id = ? AND label = ? LIMIT 1", key))
                    round_ids[key] = found[0]["id"] if found else rounds.start_round(
                        db, sid, clean.get("technician"), label=clean["round"], started_at=clean["taken_at"])
                rid = round_ids[key]
            record = {f: rec[f] for f in rec if f not in META and rec[f] not in (None, "")}
            record.setdefault("system", board["system"])
            now = utc_now()
            vid = uuid7()
            values = {f: clean[f] for f in NUMERIC_FIELDS}
            if values["nominal_v"] is None:
                values["nominal_v"] = board["nominal_v"]
            rows.append({
                "id": vid, "reading_id": vid, "version": 1, "supersedes": None, "board_id": board["id"],
                "round_id": rid, "taken_at": clean["taken_at"], "technician": clean.get("technician"),
                "instrument": clean.get("instrument"), "note": clean.get("note"), "void": 0, "reason": None,
                "recorded_at": now, "recorded_by": clean.get("technician"),
                "inputs_json": json.dumps(record, ensure_ascii=False, sort_keys=True),
                "system": board["system"] if not system_given else clean["system"],
                "standard": clean["standard"] if rec.get("standard") else site_std[sname], **values,
            })
            if len(rows) >= 1000:
                db["reading"].insert_all(rows)
                rows = []
                if progress:
                    progress(k + 1, total)
        if rows:
            db["reading"].insert_all(rows)
        if progress:
            progress(total, total)
    report.readings = total
    return report
