"""Benchmark of the field database (not part of the test run).

Builds a database of N readings (default 1,000,000) over 500 boards in a temporary folder, then prints:
* a board's history (last 50 readings): median and 95th percentile over 200 boards (target < 20 ms);
* the day's export query (current versions of one day's readings, joined with boards and sites)
  (target < 200 ms), and the whole export with computed results for that day;
* saving one reading with synchronous=FULL through fieldpad, median and 95th percentile over 200 saves,
  beside the same insert and commit through bare sqlite3 on the same file (target: within 2x).

Usage: python tests/bench/bench_storage.py [N]
"""

from __future__ import annotations

import json
import random
import sqlite3
import statistics
import sys
import tempfile
import time
from datetime import UTC, datetime, timedelta
from pathlib import Path

from fieldpad.report.export import export_records
from fieldpad.storage import sites, versions
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
DAYS = 365


def pct(values, q):
    values = sorted(values)
    return values[min(len(values) - 1, int(q * len(values)))]


def build(path: Path, n: int):
    db = open_db(path)
    sid = sites.create_site(db, "Bench Works")
    boards = [sites.create_board(db, sid, f"B{k:03d}", nominal_v=480) for k in range(500)]
    cols = [r[1] for r in db.execute("PRAGMA table_info(reading)").fetchall()]
    rng = random.Random(5)
    t0 = datetime(2026, 1, 1, tzinfo=UTC)
    inputs = json.dumps(BAL)
    t = time.perf_counter()
    db.conn.execute("PRAGMA synchronous=OFF")  # building the fixture only
    batch = []
    for k in range(n):
        rid = uuid7()
        taken = (t0 + timedelta(seconds=rng.random() * DAYS * 86400)).strftime("%Y-%m-%dT%H:%M:%S.%fZ")
        row = {
            "id": rid,
            "reading_id": rid,
            "version": 1,
            "board_id": boards[k % 500],
            "taken_at": taken,
            "recorded_at": taken,
            "inputs_json": inputs,
            "system": "wye",
            "standard": "ansi",
            "void": 0,
            "nominal_v": 480.0,
            "va": 270 + rng.random() * 10,
            "vb": 277.0,
            "vc": 277.0,
            "va_deg": 0.0,
            "vb_deg": -120.0,
            "vc_deg": 120.0,
            "ia": 100.0,
            "ib": 90.0,
            "ic": 95.0,
            "ia_deg": -30.0,
            "ib_deg": -150.0,
            "ic_deg": 90.0,
        }
        batch.append(tuple(row.get(c) for c in cols))
        if len(batch) == 50_000:
            db.conn.executemany(f"INSERT INTO reading VALUES ({','.join('?' * len(cols))})", batch)
            batch = []
    if batch:
        db.conn.executemany(f"INSERT INTO reading VALUES ({','.join('?' * len(cols))})", batch)
    db.conn.execute("PRAGMA synchronous=FULL")
    db.conn.execute("ANALYZE")
    print(f"built {n:,} readings over 500 boards in {time.perf_counter() - t:.1f} s")
    db.close()
    return boards


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    with tempfile.TemporaryDirectory() as d:
        path = Path(d) / "bench.db"
        boards = build(path, n)
        db = open_db(path)

        times = []
        for b in random.Random(1).sample(boards, 200):
            t = time.perf_counter()
            rows = versions.board_history(db, b, 50)
            times.append((time.perf_counter() - t) * 1e3)
        print(
            f"board history (last 50; {len(rows)} rows): median {statistics.median(times):.2f} ms, "
            f"p95 {pct(times, 0.95):.2f} ms (target < 20 ms)"
        )

        times = []
        for day in ("2026-03-14", "2026-06-01", "2026-09-30", "2026-11-11", "2026-12-01"):
            from fieldpad.report.export import day_range_utc

            start, end = day_range_utc(day)
            t = time.perf_counter()
            rows = versions.current_readings(db, day_start_utc=start, day_end_utc=end)
            times.append((time.perf_counter() - t) * 1e3)
        print(
            f"day's export query ({len(rows):,} readings that day): median {statistics.median(times):.1f} ms, "
            f"max {max(times):.1f} ms (target < 200 ms)"
        )
        t = time.perf_counter()
        recs = export_records(db, day="2026-12-01")
        print(
            f"whole day's export with computed results and findings ({len(recs):,} readings): "
            f"{(time.perf_counter() - t) * 1e3:.0f} ms"
        )

        fp, bare = [], []
        raw = sqlite3.connect(str(path), isolation_level=None)
        raw.execute("PRAGMA synchronous=FULL")
        raw.execute("PRAGMA foreign_keys=ON")
        cols = [r[1] for r in raw.execute("PRAGMA table_info(reading)").fetchall()]
        for k in range(200):
            t = time.perf_counter()
            versions.save_reading(db, boards[k], BAL, technician="bench")
            fp.append((time.perf_counter() - t) * 1e3)
            rid = uuid7()
            row = {
                "id": rid,
                "reading_id": rid,
                "version": 1,
                "board_id": boards[k],
                "taken_at": "2026-12-02",
                "recorded_at": "2026-12-02",
                "inputs_json": json.dumps(BAL),
                "system": "wye",
                "standard": "ansi",
                "void": 0,
                "va": 277.0,
            }
            values = tuple(row.get(c) for c in cols)
            t = time.perf_counter()
            raw.execute("BEGIN IMMEDIATE")
            raw.execute(f"INSERT INTO reading VALUES ({','.join('?' * len(cols))})", values)
            raw.execute("COMMIT")
            bare.append((time.perf_counter() - t) * 1e3)
        print(f"save one reading through fieldpad: median {statistics.median(fp):.2f} ms, p95 {pct(fp, 0.95):.2f} ms")
        print(
            f"same insert + commit through bare sqlite3: median {statistics.median(bare):.2f} ms, "
            f"p95 {pct(bare, 0.95):.2f} ms"
        )
        print(
            f"ratio fieldpad / bare: median {statistics.median(fp) / statistics.median(bare):.2f}x, "
            f"p95 {pct(fp, 0.95) / pct(bare, 0.95):.2f}x (target <= 2x)"
        )


if __name__ == "__main__":
    main()
