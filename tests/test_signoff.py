"""Rounds with names and sign-offs: storage, the upgrade that names old rounds, the signoff command."""

import os
import sqlite3
import subprocess
import sys

import pytest
import sqlite_utils
from conftest import BAL

from fieldpad.storage import rounds, signoffs, sites, versions
from fieldpad.storage.db import _migrations, connect, open_db
from fieldpad.storage.rows import ValidationError


def test_a_round_gets_the_name_typed_or_round_n_with_its_start(db):
    sid = sites.create_site(db, "Yard")
    r1 = rounds.start_round(db, sid, "Ana", started_at="2026-12-01T08:00:00.000000Z")
    r2 = rounds.start_round(db, sid, "Ana", label="  after the fan swap ", started_at="2026-12-01T09:00:00.000000Z")
    assert rounds.get_round(db, r1)["label"].startswith("Round 1 — 2026-12-01 ")
    assert rounds.get_round(db, r2)["label"] == "after the fan swap"
    assert rounds.default_label(db, sid).startswith("Round 3 — ")
    with pytest.raises(ValidationError, match="round name"):
        rounds.start_round(db, sid, "Ana", label="x" * 201)
    assert len(rounds.list_rounds(db, sid)) == 2  # nothing stored by the refused one


def test_upgrade_names_the_rounds_an_older_database_left_unnamed(tmp_path):
    path = tmp_path / "old.db"
    old = sqlite_utils.Database(connect(path))
    _migrations().apply(old, stop_before="0003_rounds_signoff")
    now = "2026-01-01T00:00:00.000000Z"
    old["site"].insert({"id": "s1", "name": "Old", "created_at": now, "updated_at": now})
    old["site"].insert({"id": "s2", "name": "Other", "created_at": now, "updated_at": now})
    for rid, site, start, label in (
        ("r2", "s1", "2026-01-02T10:00:00.000000Z", None),
        ("r1", "s1", "2026-01-01T10:00:00.000000Z", ""),
        ("r3", "s1", "2026-01-03T10:00:00.000000Z", "night check"),
        ("r4", "s2", "2026-01-05T10:00:00.000000Z", None),
    ):
        old["round"].insert({"id": rid, "site_id": site, "label": label, "started_at": start})
    old.close()
    db = open_db(path)
    got = {r["id"]: r["label"] for r in db.query("SELECT id, label FROM round")}
    assert got["r1"].startswith("Round 1 — 2026-01-01") and got["r2"].startswith("Round 2 — 2026-01-02")
    assert got["r3"] == "night check" and got["r4"].startswith("Round 1 — 2026-01-05")
    db.close()


def test_signoff_is_its_own_record_and_later_versions_are_after_it(db, board):
    sid = sites.get_board(db, board)["site_id"]
    rid = rounds.start_round(db, sid, "Ana", label="Morning walk")
    s = versions.save_reading(db, board, BAL, technician="Ana", round_id=rid, taken_at="2026-12-01T10:00:00.000000Z")
    before = [dict(r) for r in db.query("SELECT * FROM reading")]
    so_id = signoffs.sign_off(db, sid, by="Carla", round_id=rid, note="ok")
    assert [dict(r) for r in db.query("SELECT * FROM reading")] == before  # readings untouched
    so = signoffs.get_signoff(db, so_id)
    assert signoffs.describe(so).startswith("round “Morning walk” signed off by Carla, ")
    v2 = versions.correct_reading(db, s.reading_id, {**BAL, "ia": "101"}, reason="misread", by="Ben")
    row = versions.current_version(db, s.reading_id)
    first = versions.history(db, s.reading_id)[0]
    args = {"site_id": sid, "round_id": rid, "taken_at": row["taken_at"]}
    assert signoffs.signed_before([so], **args, recorded_at=row["recorded_at"])["id"] == so_id
    assert signoffs.signed_before([so], **args, recorded_at=first["recorded_at"]) is None
    assert v2.version == 2
    # A day sign-off covers what was taken in that local day at its site, not the day after.
    day = signoffs.get_signoff(db, signoffs.sign_off(db, sid, by="Carla", day="2026-12-01"))
    start, end = signoffs.local_day_range_utc("2026-12-01")
    assert day["day_start_utc"] == start and day["day_end_utc"] == end
    assert signoffs.covers(day, site_id=sid, round_id=None, taken_at=start)
    assert not signoffs.covers(day, site_id=sid, round_id=None, taken_at=end)
    assert not signoffs.covers(day, site_id="elsewhere", round_id=None, taken_at=start)


def test_signoff_refuses_what_it_cannot_store(db, board):
    sid = sites.get_board(db, board)["site_id"]
    other = sites.create_site(db, "Elsewhere")
    foreign = rounds.start_round(db, other, "Ana")
    for kwargs, why in (
        ({"by": "", "day": "2026-12-01"}, "signed by: is required"),
        ({"by": "C", "day": "12/01/2026"}, "is not a date"),
        ({"by": "C"}, "either a round or a day"),
        ({"by": "C", "day": "2026-12-01", "round_id": foreign}, "either a round or a day"),
        ({"by": "C", "round_id": foreign}, "another site"),
        ({"by": "C", "round_id": "nope"}, "no round"),
    ):
        with pytest.raises(ValidationError, match=why):
            signoffs.sign_off(db, sid, **kwargs)
    assert next(db.query("SELECT COUNT(*) AS n FROM signoff"))["n"] == 0


def _fieldpad(*args, env=None):
    return subprocess.run(
        [sys.executable, "-m", "fieldpad.cli", *args],
        capture_output=True,
        text=True,
        timeout=60,
        env={**os.environ, **(env or {})},
    )


def test_signoff_command(db_path, db, board):
    sid = sites.get_board(db, board)["site_id"]
    rid = rounds.start_round(db, sid, "Ana", label="Morning walk")
    db.close()
    p = _fieldpad("signoff", "--db", str(db_path), "--day", "2026-12-01", "--by", "Carla Lind", "--note", "=all read")
    assert p.returncode == 0, p.stderr
    assert "day 2026-12-01 signed off by Carla Lind" in p.stderr and p.stdout == ""
    p = _fieldpad("signoff", "--db", str(db_path), "--round", "Morning walk", "--by", "Carla Lind")
    assert p.returncode == 0, p.stderr
    p = _fieldpad("signoff", "--db", str(db_path), "--round", rid, "--by", "Carla Lind", "--site", "North Cold Store")
    assert p.returncode == 0, p.stderr
    for args, why in (
        (["--by", "X"], "give --day YYYY-MM-DD"),
        (["--day", "yesterday", "--by", "X"], "is not a date"),
        (["--round", "Evening", "--by", "X"], "no round with the id or name 'Evening'"),
        (["--day", "2026-12-01", "--by", "X", "--site", "Nowhere"], "no site named 'Nowhere'"),
        (["--day", "2026-12-01", "--by", " "], "signed by: is required"),
    ):
        p = _fieldpad("signoff", "--db", str(db_path), *args)
        assert p.returncode == 2 and why in p.stderr and "nothing was signed" in p.stderr, (args, p.stderr)
    rows = (
        sqlite3.connect(db_path)
        .execute("SELECT day, round_id, signed_by, note FROM signoff ORDER BY signed_at")
        .fetchall()
    )
    assert rows == [
        ("2026-12-01", None, "Carla Lind", "=all read"),
        (None, rid, "Carla Lind", None),
        (None, rid, "Carla Lind", None),
    ]
