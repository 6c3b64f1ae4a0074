"""Benchmark of the supervisor's exports (not part of the test run).

* the printable HTML report for one day with 200 boards and 400 readings (two named rounds, one signed off,
  corrections and voids), beside the CSV export of the same readings;
* the CSV export of 100,000 readings (with computed results and findings), beside a bare sqlite3 + csv
  writer dumping the same stored rows (no analysis) in the same run;
* the xlsx workbook of the same 100,000 readings (readings, findings, corrections sheets), beside that CSV.

Usage: python tests/bench/bench_report.py
"""

from __future__ import annotations

import csv
import io
import json
import random
import sqlite3
import tempfile
import time
from pathlib import Path

from fieldpad.report.export import export_records, to_csv
from fieldpad.report.html import to_html
from fieldpad.report.xlsx import write_xlsx
from fieldpad.storage import rounds, signoffs, sites, versions
from fieldpad.storage.db import open_db
from fieldpad.storage.ids import uuid7

BAL = {
    "va": "277",
    "vb": "277",
    "vc": "277",
    "va_deg": "0",
    "vb_deg": "-120",
    "vc_deg": "120",
    "ia": "100",
    "ib": "100",
    "ic": "100",
    "ia_deg": "-30",
    "ib_deg": "-150",
    "ic_deg": "90",
}


def build(path: Path, boards: int, readings: int, spread_days: int, rounds_of_day: bool = False):
    db = open_db(path)
    sid = sites.create_site(db, "Bench Works")
    rids = [
        rounds.start_round(db, sid, "tech 0", label=name, started_at=start)
        for name, start in (
            ("Morning walk", "2026-03-10T07:00:00.000000Z"),
            ("Afternoon walk", "2026-03-10T12:00:00.000000Z"),
        )
    ]
    bids = [
        sites.create_board(
            db, sid, f"B{k:03d}", nominal_v=480, af_incident_energy_cal_cm2=4.0, af_ppe="1", af_label_date="2024-01-01"
        )
        for k in range(boards)
    ]
    cols = [r[1] for r in db.execute("PRAGMA table_info(reading)").fetchall()]
    rng = random.Random(3)
    rows = []
    for k in range(readings):
        rid = uuid7()
        day = k % spread_days
        taken = f"2026-03-{10 + day % 18:02d}T{8 + (k // boards) % 9:02d}:{k % 60:02d}:00.000000Z"
        row = {
            "id": rid,
            "reading_id": rid,
            "version": 1,
            "board_id": bids[k % boards],
            "taken_at": taken,
            "recorded_at": taken,
            "inputs_json": json.dumps(BAL),
            "system": "wye",
            "standard": "ansi",
            "void": 0,
            "technician": f"tech {k % 3}",
            "nominal_v": 480.0,
            "round_id": rids[(k // boards) % 2] if rounds_of_day else None,
            "va": 270 + rng.random() * 10,
            "vb": 277.0,
            "vc": 277.0 - rng.random() * 8,
            "va_deg": 0.0,
            "vb_deg": -120.0,
            "vc_deg": 120.0,
            "ia": 100.0 + rng.random() * 30,
            "ib": 90.0,
            "ic": 95.0,
            "ia_deg": -30.0,
            "ib_deg": -150.0,
            "ic_deg": 90.0,
        }
        rows.append(tuple(row.get(c) for c in cols))
    with db.conn:
        db.conn.execute("BEGIN")
        db.conn.executemany(f"INSERT INTO reading VALUES ({','.join('?' * len(cols))})", rows)
    if rounds_of_day:  # what a supervisor's day holds besides readings: a sign-off, corrections, voids
        signoffs.sign_off(db, sid, by="Bench Supervisor", round_id=rids[0])
        ids = [r[0] for r in db.execute("SELECT reading_id FROM reading ORDER BY taken_at LIMIT 20")]
        for rid in ids[:10]:
            versions.correct_reading(db, rid, {**BAL, "ia": "101"}, reason="misread clamp", by="tech 1")
        for rid in ids[10:15]:
            versions.void_reading(db, rid, reason="wrong board", by="tech 2")
    return db


def main():
    with tempfile.TemporaryDirectory() as d:
        db = build(Path(d) / "html.db", boards=200, readings=400, spread_days=1, rounds_of_day=True)
        t = time.perf_counter()
        recs = export_records(db, day="2026-03-10")
        html = to_html(db, recs, day="2026-03-10")
        t_html = time.perf_counter() - t
        t = time.perf_counter()
        small_csv = to_csv(export_records(db, day="2026-03-10"))
        t_small_csv = time.perf_counter() - t
        print(f"HTML report, 200 boards / {len(recs)} readings: {t_html * 1e3:.0f} ms, {len(html) / 1e6:.2f} MB")
        print(
            f"CSV export of the same day: {t_small_csv * 1e3:.0f} ms, {len(small_csv) / 1e6:.2f} MB "
            f"(report / CSV: {t_html / t_small_csv:.1f}x)"
        )
        db.close()

        db = build(Path(d) / "csv.db", boards=500, readings=100_000, spread_days=18)
        t = time.perf_counter()
        text = to_csv(export_records(db))
        t_fp = time.perf_counter() - t
        print(f"fieldpad CSV export of 100,000 readings (results + findings): {t_fp:.2f} s, {len(text) / 1e6:.1f} MB")
        t = time.perf_counter()
        conn = sqlite3.connect(Path(d) / "csv.db")
        cur = conn.execute("SELECT * FROM reading")
        buf = io.StringIO()
        w = csv.writer(buf)
        w.writerow([c[0] for c in cur.description])
        w.writerows(cur)
        t_bare = time.perf_counter() - t
        print(
            f"bare sqlite3 + csv writer, same rows, stored columns only: {t_bare:.2f} s, "
            f"{len(buf.getvalue()) / 1e6:.1f} MB"
        )
        print(f"ratio fieldpad / bare: {t_fp / t_bare:.1f}x (fieldpad also computes every result and finding)")
        t = time.perf_counter()
        out = Path(d) / "readings.xlsx"
        write_xlsx(db, export_records(db), out)
        t_xlsx = time.perf_counter() - t
        print(
            f"fieldpad xlsx export of the same 100,000 readings (readings, findings, corrections sheets): "
            f"{t_xlsx:.2f} s, {out.stat().st_size / 1e6:.1f} MB (xlsx / CSV: {t_xlsx / t_fp:.1f}x)"
        )


if __name__ == "__main__":
    main()
