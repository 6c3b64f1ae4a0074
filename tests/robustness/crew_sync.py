"""The crew on one server: laptops (processes) that save, correct, void and sync at once; syncs killed at
random moments; the server stopped in the middle of a sync; a technician trying to rewrite the record.

``crew_test(...)`` returns the figures (run.py prints them).  As a child:
``python crew_sync.py laptop DB URL ROLE N SECONDS SEED`` saves N readings on its own board over at least
SECONDS, corrects about 1 in 10 and voids about 1 in 40 of its own, and syncs after every few saves,
printing one JSON line of what it made at the end.
Scenario of our own: the crew of a distribution centre, one board per technician.
"""

from __future__ import annotations

import json
import os
import random
import secrets
import signal
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve()
TABLES = ("site", "board", "round", "setting_version", "id_join", "reading", "version_parent", "signoff")
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


def laptop(path: str, url: str, role: str, n: int, seconds: float, seed: int) -> None:
    from fieldpad.storage import server, server_schema, sites, versions
    from fieldpad.storage.db import open_db

    rng = random.Random(seed)
    db = open_db(path)
    site_id = next(db.query("SELECT id FROM site"))["id"]
    board = sites.create_board(db, site_id, f"DB-{role}", system="wye", nominal_v=480)
    made, syncs, failures = [], 0, []
    start = time.monotonic()
    pause = seconds / n
    for k in range(n):
        r = versions.save_reading(db, board, {**BAL, "ia": f"{90 + rng.random() * 20:.2f}"}, technician=role)
        made.append(r.id)
        if rng.random() < 0.1:
            made.append(versions.correct_reading(db, r.reading_id, {**BAL, "ia": "101"}, reason="re-read", by=role).id)
        if rng.random() < 0.025:
            made.append(versions.void_reading(db, r.reading_id, reason="wrong board", by=role).id)
        if k % 50 == 49:
            try:
                server.sync(db, url)
                syncs += 1
            except server_schema.ServerError as e:
                failures.append(str(e)[:200])
        lag = start + pause * (k + 1) - time.monotonic()
        if lag > 0:
            time.sleep(lag)
    print(json.dumps({"role": role, "made": made, "syncs": syncs, "failures": failures}), flush=True)


def content(db) -> dict:
    return {t: sorted(tuple(r) for r in db.conn.execute(f"SELECT * FROM {t}")) for t in TABLES}


def _server_count(psycopg, url, table="reading") -> int:
    with psycopg.connect(url) as conn:
        return conn.execute(f"SELECT COUNT(*) FROM {table}").fetchone()[0]


def crew_test(folder: Path, laptops: int = 20, per_laptop: int = 2000, seconds: float = 60.0, kills: int = 20) -> dict:
    import psycopg

    sys.path.insert(0, str(HERE.parents[1]))  # tests/: the throwaway cluster
    import pg_cluster

    from fieldpad.storage import server, server_schema, sites, versions
    from fieldpad.storage.db import check, open_db

    out: dict = {}
    with pg_cluster.Cluster() as c:
        os.environ["PGPASSFILE"] = str(c.passfile)
        admin = c.url(database="crew")
        with psycopg.connect(c.url(), autocommit=True) as conn:
            conn.execute("CREATE DATABASE crew")
        server_schema.init(admin)
        roles = [f"tech{i:02d}" for i in range(laptops)]
        with psycopg.connect(admin, autocommit=True) as conn:
            for r in [*roles, "boss"]:
                pw = secrets.token_urlsafe(12)
                conn.execute(f"CREATE ROLE {r} LOGIN PASSWORD '{pw}'")
                c.add_password(r, pw)
                conn.execute(f"GRANT {'fieldpad_supervisor' if r == 'boss' else 'fieldpad_technician'} TO {r}")
        url = {r: c.url(r, database="crew") for r in [*roles, "boss"]}

        # One site, made on the first laptop and handed to the others as a file (as a crew starts).
        seed = folder / "seed.db"
        db = open_db(seed)
        sites.create_site(db, "Distribution Centre 4")
        db.close()
        paths = {}
        for r in roles:
            paths[r] = folder / f"{r}.db"
            paths[r].write_bytes(seed.read_bytes())

        # ---- concurrent laptops ---------------------------------------------------------------------
        t0 = time.monotonic()
        procs = [
            subprocess.Popen(
                [sys.executable, str(HERE), "laptop", str(paths[r]), url[r], r, str(per_laptop), str(seconds), str(i)],
                stdout=subprocess.PIPE,
                text=True,
                env=c.env(),
            )
            for i, r in enumerate(roles)
        ]
        made, failures, syncs = {}, [], 0
        for p in procs:
            line = p.stdout.read().strip().splitlines()[-1]
            p.wait()
            res = json.loads(line)
            made[res["role"]] = res["made"]
            failures += res["failures"]
            syncs += res["syncs"]
        busy = time.monotonic() - t0
        # Every laptop syncs twice more, one after the other: then all hold the same record.
        for _ in range(2):
            for r in roles:
                db = open_db(paths[r])
                server.sync(db, url[r])
                db.close()
        dbs = {r: open_db(paths[r]) for r in roles}
        ref = content(dbs[roles[0]])
        diverged = sum(content(d) != ref for d in dbs.values())
        all_ids = {v for vs in made.values() for v in vs}
        with psycopg.connect(url["boss"]) as conn:
            on_server = {x[0] for x in conn.execute("SELECT id FROM reading")}
            doubled = conn.execute(
                "SELECT COUNT(*) - COUNT(DISTINCT (board_id, taken_at, reading_id, version)) FROM reading"
            ).fetchone()[0]
        lost = len(all_ids - on_server) + sum(
            len(all_ids - {x[0] for x in d.conn.execute("SELECT id FROM reading")}) for d in dbs.values()
        )
        broken = sum(bool(check(d)) for d in dbs.values())
        for d in dbs.values():
            d.close()
        out["concurrent"] = {
            "laptops": laptops,
            "versions": len(all_ids),
            "seconds": busy,
            "syncs": syncs,
            "sync_failures": len(failures),
            "lost": lost,
            "doubled": doubled,
            "diverged": diverged,
            "damaged": broken,
        }

        # ---- syncs killed at random moments ----------------------------------------------------------
        rng = random.Random(11)
        victim = roles[0]
        partial = 0
        for _k in range(kills):
            db = open_db(paths[victim])
            board = next(db.query("SELECT id FROM board WHERE name = ?", [f"DB-{victim}"]))["id"]
            for _ in range(200):
                versions.save_reading(db, board, BAL, technician=victim)
            db.close()
            before = _server_count(psycopg, url["boss"])
            db = open_db(paths[victim])
            pending = db.conn.execute("SELECT COUNT(*) FROM reading WHERE recorded_by = ?", [victim]).fetchone()[0]
            db.close()
            with psycopg.connect(url["boss"]) as conn:
                pending -= conn.execute("SELECT COUNT(*) FROM reading WHERE recorded_by = %s", [victim]).fetchone()[0]
            p = subprocess.Popen(
                [sys.executable, "-m", "fieldpad", "sync", "--server", url[victim], "--db", str(paths[victim])],
                env=c.env(),
                stdout=subprocess.DEVNULL,
                stderr=subprocess.DEVNULL,
            )
            time.sleep(rng.uniform(0.3, 1.5))
            p.send_signal(signal.SIGKILL)
            p.wait()
            after = _server_count(psycopg, url["boss"])
            partial += after not in (before, before + pending)  # all of the send or none of it
        db = open_db(paths[victim])
        server.sync(db, url[victim])
        mine = db.conn.execute("SELECT COUNT(*) FROM reading WHERE recorded_by = ?", [victim]).fetchone()[0]
        damaged = len(check(db))
        db.close()
        with psycopg.connect(url["boss"]) as conn:
            theirs = conn.execute("SELECT COUNT(*) FROM reading WHERE recorded_by = %s", [victim]).fetchone()[0]
        out["killed"] = {"kills": kills, "partial": partial, "lost": mine - theirs, "damaged": damaged}

        # ---- the server stopped in the middle of a sync ----------------------------------------------------
        # A large send; the server is stopped (fast: every session cut off) once the sync's transaction has
        # begun, seen in pg_stat_activity, so the stop lands inside the sync.
        stopped = {"interrupted": 0, "tries": 0, "unclear": 0, "lost": 0, "message": ""}
        for _try in range(3):
            db = open_db(paths[victim])
            board = next(db.query("SELECT id FROM board WHERE name = ?", [f"DB-{victim}"]))["id"]
            for _ in range(20000):
                versions.save_reading(db, board, BAL, technician=victim)
            db.close()
            watch = psycopg.connect(admin, autocommit=True)
            p = subprocess.Popen(
                [sys.executable, "-m", "fieldpad", "sync", "--server", url[victim], "--db", str(paths[victim])],
                env=c.env(),
                stdout=subprocess.PIPE,
                stderr=subprocess.PIPE,
                text=True,
            )
            deadline = time.monotonic() + 60
            while p.poll() is None and time.monotonic() < deadline:
                busy_now = watch.execute(
                    "SELECT COUNT(*) FROM pg_stat_activity WHERE application_name = "
                    "'fieldpad' AND xact_start IS NOT NULL AND usename = %s",
                    [victim],
                ).fetchone()[0]
                if busy_now:
                    break
                time.sleep(0.005)
            watch.close()
            c.stop_server()
            _o, err = p.communicate(timeout=300)
            c.restart()
            stopped["tries"] += 1
            if p.returncode != 0:
                stopped["interrupted"] += 1
                stopped["message"] = err.strip().splitlines()[-1][:200] if err.strip() else ""
                stopped["unclear"] += int("Traceback" in err or p.returncode != 1 or "server" not in err)
            db = open_db(paths[victim])
            server.sync(db, url[victim])
            mine = db.conn.execute("SELECT COUNT(*) FROM reading WHERE recorded_by = ?", [victim]).fetchone()[0]
            db.close()
            with psycopg.connect(url["boss"]) as conn:
                theirs = conn.execute("SELECT COUNT(*) FROM reading WHERE recorded_by = %s", [victim]).fetchone()[0]
            stopped["lost"] += mine - theirs
            if stopped["interrupted"]:
                break
        out["stopped"] = stopped

        # ---- a technician tries to rewrite or impersonate ---------------------------------------------
        with psycopg.connect(url[victim]) as conn:
            one = conn.execute("SELECT board_id FROM reading LIMIT 1").fetchone()[0]
        attacks = [
            "UPDATE reading SET ia = 0",
            "DELETE FROM reading",
            "TRUNCATE reading",
            "UPDATE board SET name = 'x'",
            "DELETE FROM site",
            "DROP TABLE reading",
            "ALTER TABLE reading DISABLE ROW LEVEL SECURITY",
            "UPDATE fieldpad_migrations SET name = 'x'",
            (
                "INSERT INTO reading (id, reading_id, version, board_id, taken_at, void, recorded_at, recorded_by, "
                f"inputs_json, system, standard) VALUES ('f1', 'f1', 1, '{one}', 't', 0, 't', '{roles[1]}', '{{}}', "
                "'wye', 'ansi')"
            ),
            (
                "INSERT INTO reading (id, reading_id, version, board_id, taken_at, void, recorded_at, recorded_by, "
                f"sent_by, inputs_json, system, standard) VALUES ('f2', 'f2', 1, '{one}', 't', 0, 't', '{victim}', "
                f"'{roles[1]}', '{{}}', 'wye', 'ansi')"
            ),
            "SET ROLE boss",
            f"SET SESSION AUTHORIZATION {roles[1]}",
        ]
        refused = 0
        for sql in attacks:
            with psycopg.connect(url[victim]) as conn:
                try:
                    conn.execute(sql)
                    conn.commit()
                except psycopg.Error:
                    refused += 1
        out["attacks"] = {"tried": len(attacks), "refused": refused}
    return out


if __name__ == "__main__":
    if sys.argv[1] == "laptop":
        laptop(sys.argv[2], sys.argv[3], sys.argv[4], int(sys.argv[5]), float(sys.argv[6]), int(sys.argv[7]))
