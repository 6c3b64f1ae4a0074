"""Sync throughput against a bare COPY, measured in the same run on a throwaway PostgreSQL cluster.

Prints, for N reading versions on one laptop:
  * send:     `fieldpad sync` of a laptop whose N versions the server lacks (readings/s);
  * receive:  `fieldpad sync` of a second, empty laptop that brings those N back (readings/s);
  * baseline: a bare COPY of the same reading rows (the same columns) into a table of the same schema,
    on the same server, and the ratio (target: send within 3x of it).

Usage: python tests/bench/bench_sync.py [N]   (default 20000)
"""

from __future__ import annotations

import os
import secrets
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
import pg_cluster  # noqa: E402
import psycopg  # noqa: E402

from fieldpad.storage import server, server_schema, sites, versions  # noqa: E402
from fieldpad.storage.db import open_db  # noqa: E402

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


def main(n: int) -> None:
    with tempfile.TemporaryDirectory() as tmp, pg_cluster.Cluster() as c:
        os.environ["PGPASSFILE"] = str(c.passfile)
        with psycopg.connect(c.url(), autocommit=True) as conn:
            conn.execute("CREATE DATABASE crew")
        admin = c.url(database="crew")
        server_schema.init(admin)
        with psycopg.connect(admin, autocommit=True) as conn:
            pw = secrets.token_urlsafe(12)
            conn.execute(f"CREATE ROLE ana LOGIN PASSWORD '{pw}'")
            conn.execute("GRANT fieldpad_technician TO ana")
        c.add_password("ana", pw)
        url = c.url("ana", database="crew")

        db = open_db(Path(tmp) / "ana.db")
        board = sites.create_board(db, sites.create_site(db, "Bench Yard"), "MDB-1")
        for i in range(n):
            versions.save_reading(db, board, {**BAL, "ia": f"{90 + i % 20}"}, technician="ana")

        cols = [r[1] for r in db.conn.execute("PRAGMA table_info(reading)")]
        rows = db.conn.execute(f"SELECT {', '.join(cols)} FROM reading").fetchall()
        with psycopg.connect(admin) as conn:
            conn.execute("CREATE TABLE bare_reading (LIKE reading INCLUDING ALL)")
            conn.commit()
            t = time.perf_counter()
            with conn.cursor().copy(f"COPY bare_reading ({', '.join(cols)}) FROM STDIN") as cp:
                for r in rows:
                    cp.write_row(r)
            conn.commit()
            t_copy = time.perf_counter() - t

        t = time.perf_counter()
        rep = server.sync(db, url)
        t_send = time.perf_counter() - t
        assert rep.sent["reading"] == n, rep

        other = open_db(Path(tmp) / "ben.db")
        t = time.perf_counter()
        rep2 = server.sync(other, url)
        t_recv = time.perf_counter() - t
        assert rep2.received["reading"] == n, rep2

        print(f"reading versions: {n}")
        print(f"bare COPY (baseline): {t_copy:.3f} s  {n / t_copy:,.0f} readings/s")
        print(
            f"sync, send:           {t_send:.3f} s  {n / t_send:,.0f} readings/s  "
            f"{t_send / t_copy:.2f}x the bare COPY (target <= 3x)"
        )
        print(
            f"sync, receive:        {t_recv:.3f} s  {n / t_recv:,.0f} readings/s  {t_recv / t_copy:.2f}x the bare COPY"
        )


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 20000)
