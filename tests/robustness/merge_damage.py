"""Damaged incoming files for ``fieldpad merge``: a healthy laptop's file with bytes flipped, or with rows
altered behind fieldpad's back (bad UTF-8, text in numeric columns, out-of-range numbers, broken references,
bad times and JSON, unknown settings), merged into a healthy database.  Each trial counts as broken if the
main database afterwards fails its check, cannot be exported (CSV and the HTML report) or its history
read, lost a version it had, or changed although the merge was refused; a crash (anything but a refusal
with a message) counts too.  The scenario and its data are invented."""

from __future__ import annotations

import random
import shutil
import sqlite3
import sys
from pathlib import Path

from fieldpad.report.export import export_records, to_csv
from fieldpad.report.html import to_html
from fieldpad.storage import settings_history, sites, versions
from fieldpad.storage.db import StorageError, check, open_db
from fieldpad.storage.merge import merge_file

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

#: (table, column, SQL value) written into one random row of the incoming file.
BAD_VALUES = [
    ("reading", "note", "CAST(X'4d44c328' AS TEXT)"),
    ("reading", "technician", "CAST(X'ff' AS TEXT)"),
    ("reading", "va", "'abc'"),
    ("reading", "ia_deg", "'12 lag'"),
    ("reading", "vb", "1e300"),
    ("reading", "vc", "-5"),
    ("reading", "va_deg", "720"),
    ("reading", "i_n", "X'00'"),
    ("reading", "version", "0"),
    ("reading", "version", "'2x'"),
    ("reading", "void", "7"),
    ("reading", "supersedes", "'no-such-version'"),
    ("reading", "board_id", "'no-such-board'"),
    ("reading", "round_id", "'no-such-round'"),
    ("reading", "taken_at", "'soon'"),
    ("reading", "recorded_at", "'2026-13-45T99:00:00.000000Z'"),
    ("reading", "inputs_json", "'{'"),
    ("reading", "inputs_json", "'[1, 2]'"),
    ("reading", "system", "'star'"),
    ("reading", "standard", "'nema'"),
    ("reading", "note", "'x' || char(0) || 'y'"),
    ("reading", "note", "printf('%.20000c', 'a')"),
    ("reading", "reason", "NULL"),
    ("reading", "id", "CAST(X'c3' AS TEXT)"),
    ("reading", "reading_id", "'other'"),
    ("reading", "technician", "' Sam '"),
    ("reading", "nominal_v", "0"),
    ("setting_version", "value_json", "'{'"),
    ("setting_version", "value_json", "'\"x\"'"),
    ("setting_version", "value_json", "'-3'"),
    ("setting_version", "value_json", "'[1]'"),
    ("setting_version", "value_json", "CAST(X'22ff22' AS TEXT)"),
    ("setting_version", "field", "'colour'"),
    ("setting_version", "entity", "'panel'"),
    ("setting_version", "entity_id", "NULL"),
    ("setting_version", "recorded_at", "'later'"),
    ("setting_version", "value_json", "'null'"),
    ("round", "site_id", "'no-such-site'"),
    ("round", "label", "CAST(X'80' AS TEXT)"),
    ("round", "started_at", "42"),
    ("id_join", "keep_id", "'nobody'"),
]


def make_source(path: Path, rng: random.Random) -> None:
    db = open_db(path)
    sid = sites.create_site(db, "Fernwick")
    boards = [
        sites.create_board(
            db, sid, f"MDB-{k}", af_incident_energy_cal_cm2=1.2 + k, af_ppe=str(k % 5), af_label_date="2026-01-10"
        )
        for k in range(3)
    ]
    other = sites.create_site(db, "Fernwick annex")
    boards.append(sites.create_board(db, other, "DB-1"))
    from fieldpad.storage import rounds

    rnd = rounds.start_round(db, sid, "Sam", label="AM")
    saved = []
    for k in range(12):
        saved.append(
            versions.save_reading(
                db,
                boards[k % len(boards)],
                {**BAL, "va": str(270 + k)},
                technician="Sam",
                note=f"note {k}",
                round_id=rnd,
            ).reading_id
        )
    for rid in saved[:4]:
        versions.correct_reading(db, rid, {**BAL, "vb": "279"}, reason="re-read", by="Sam")
    versions.void_reading(db, saved[5], reason="wrong board", by="Sam")
    sites.update_board(db, boards[0], name="MDB-0 main", by="Sam")
    settings_history.join(db, "board", boards[1], boards[2], by="Sam")
    rounds.finish_round(db, rnd)
    db.close()


def make_main(path: Path) -> None:
    db = open_db(path)
    sid = sites.create_site(db, "Fernwick")
    bid = sites.create_board(db, sid, "MDB-1", af_incident_energy_cal_cm2=38, af_ppe="4")
    for k in range(3):
        versions.save_reading(db, bid, {**BAL, "va": str(280 + k)}, technician="Ana")
    db.close()


def flip_bytes(path: Path, rng: random.Random) -> str:
    data = bytearray(path.read_bytes())
    n = rng.choice([1, 1, 2, 4, 16])
    for _ in range(n):
        k = rng.randrange(len(data))
        data[k] ^= 1 << rng.randrange(8)
    path.write_bytes(bytes(data))
    return f"{n} byte flip(s)"


def bad_value(path: Path, rng: random.Random) -> str:
    table, col, value = rng.choice(BAD_VALUES)
    conn = sqlite3.connect(path)
    try:
        conn.execute("PRAGMA ignore_check_constraints = ON")
        conn.execute("PRAGMA foreign_keys = OFF")
        ids = [r[0] for r in conn.execute(f"SELECT rowid FROM {table}")]
        if not ids:
            return "nothing to alter"
        conn.execute(f"UPDATE {table} SET {col} = {value} WHERE rowid = ?", [rng.choice(ids)])
        conn.commit()
    except sqlite3.DatabaseError as e:  # a NOT NULL or a unique id: the value could not be written
        return f"{table}.{col} not alterable ({e})"
    finally:
        conn.close()
    return f"{table}.{col} = {value}"


def snapshot(db) -> tuple:
    return tuple(
        sorted(r[0] for r in db.conn.execute(f"SELECT id FROM {t}"))
        for t in ("reading", "setting_version", "id_join", "version_parent", "round")
    )


def healthy(db) -> list[str]:
    """What is wrong with the main database as a person would find it (empty: nothing)."""
    problems = check(db)
    try:
        recs = export_records(db)
        to_csv(recs)
        to_html(db, recs)
        for r in db.query("SELECT DISTINCT reading_id FROM reading"):
            versions.history(db, r["reading_id"])
        for s in sites.list_sites(db):
            for b in sites.list_boards(db, s["id"]):
                versions.board_history(db, b["id"])
    except Exception as e:  # what the user would see as a failure
        problems.append(f"{type(e).__name__}: {e}")
    return problems


def run_merge_damage(tmp: str, n: int, seed: int = 16) -> dict:
    rng = random.Random(seed)
    folder = Path(tmp) / "merge-damage"
    folder.mkdir()
    make_source(folder / "source.db", rng)
    make_main(folder / "main-pristine.db")
    counts = {"tried": 0, "refused": 0, "merged": 0, "broke": 0, "crashes": 0, "flips": 0, "values": 0}
    for k in range(n):
        incoming = folder / f"in-{k}.db"
        shutil.copy(folder / "source.db", incoming)
        if k % 2:
            what = flip_bytes(incoming, rng)
            counts["flips"] += 1
        else:
            what = bad_value(incoming, rng)
            counts["values"] += 1
        main_path = folder / f"main-{k}.db"
        shutil.copy(folder / "main-pristine.db", main_path)
        db = open_db(main_path)
        if k % 4 < 2:  # half of the trials: the healthy file was merged before (rows of the same id here)
            merge_file(db, folder / "source.db")
        before = snapshot(db)
        counts["tried"] += 1
        refused = False
        try:
            merge_file(db, incoming)
            counts["merged"] += 1
        except StorageError:
            refused = True
            counts["refused"] += 1
        except Exception as e:
            counts["crashes"] += 1
            print(f"  merge crash on {what}: {type(e).__name__}: {e}", file=sys.stderr)
        problems = healthy(db)
        after = snapshot(db)
        if refused and after != before:
            problems.append("refused, yet rows changed")
        if any(not set(b) <= set(a) for b, a in zip(before, after)):
            problems.append("a row it had is gone")
        if problems:
            counts["broke"] += 1
            if counts["broke"] <= 5:
                print(f"  broke the main database with {what}: {problems[0][:200]}", file=sys.stderr)
        db.close()
        for p in folder.glob(f"*-{k}.db*"):
            p.unlink()
    return counts
