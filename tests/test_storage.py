"""The field database against real SQLite files in a temporary folder."""

import os
import sqlite3
import stat

import pytest
from conftest import BAL

from fieldpad.storage import drafts, rounds, sites, versions
from fieldpad.storage.db import (
    NewerDatabaseError,
    StorageError,
    _migrations,
    backup,
    check,
    connect,
    open_db,
    schema_version_names,
)
from fieldpad.storage.ids import parse_time, uuid7
from fieldpad.storage.rows import ValidationError


def test_connection_settings(db):
    assert db.execute("PRAGMA foreign_keys").fetchone()[0] == 1
    assert db.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    assert db.execute("PRAGMA synchronous").fetchone()[0] == 2  # FULL
    assert db.execute("PRAGMA busy_timeout").fetchone()[0] >= 5000


def test_new_file_is_private(db_path, db):
    assert stat.S_IMODE(os.stat(db_path).st_mode) == 0o600


def test_migrations_from_empty_file(db):
    applied = [r["name"] for r in db.query("SELECT name FROM _sqlite_migrations ORDER BY rowid")]
    assert applied == schema_version_names()
    assert applied[:5] == [
        "0001_initial",
        "0002_drafts",
        "0003_rounds_signoff",
        "0004_crew_identity",
        "0005_board_overrides",
    ]
    assert "0007_sync" in applied
    assert {"site", "board", "round", "reading", "draft", "signoff", "sync_state", "sync_log"} <= set(db.table_names())


def test_upgrade_from_every_earlier_version_keeps_data_and_backs_up(tmp_path):
    names = schema_version_names()
    for stop in names[1:]:
        path = tmp_path / f"old-{stop}.db"
        import sqlite_utils

        old = sqlite_utils.Database(connect(path))
        _migrations().apply(old, stop_before=stop)
        now = "2026-01-01T00:00:00.000000Z"
        old["site"].insert({"id": "s1", "name": "Old", "created_at": now, "updated_at": now})
        old["board"].insert(
            {"id": "b1", "site_id": "s1", "name": "B", "system": "wye", "created_at": now, "updated_at": now}
        )
        old["reading"].insert(
            {
                "id": "r1",
                "reading_id": "r1",
                "version": 1,
                "board_id": "b1",
                "taken_at": now,
                "recorded_at": now,
                "inputs_json": "{}",
                "system": "wye",
                "standard": "ansi",
                "va": 277.0,
            }
        )
        old.close()
        db = open_db(path)
        assert [r["name"] for r in db.query("SELECT name FROM _sqlite_migrations ORDER BY rowid")] == names
        assert db["reading"].get("r1")["va"] == 277.0
        backups = list(tmp_path.glob(f"old-{stop}.db.before-{stop}-*.bak"))
        assert len(backups) == 1
        assert sqlite3.connect(backups[0]).execute("SELECT COUNT(*) FROM reading").fetchone()[0] == 1
        db.close()


def test_newer_database_is_refused_and_untouched(db_path, db):
    db["_sqlite_migrations"].insert({"migration_set": "fieldpad", "name": "9999_future", "applied_at": "2030-01-01"})
    db.close()
    before = db_path.read_bytes()
    with pytest.raises(NewerDatabaseError, match="newer fieldpad"):
        open_db(db_path)
    assert db_path.read_bytes() == before


def test_not_a_database(tmp_path):
    p = tmp_path / "notes.db"
    p.write_text("hello, this is not a database\n")
    with pytest.raises(StorageError, match="not a fieldpad database"):
        open_db(p)
    assert p.read_text() == "hello, this is not a database\n"


def test_env_and_flag(tmp_path, monkeypatch):
    from fieldpad.storage.db import resolve_path

    monkeypatch.setenv("FIELDPAD_DB", str(tmp_path / "env.db"))
    assert resolve_path(None) == tmp_path / "env.db"
    assert resolve_path(tmp_path / "flag.db") == tmp_path / "flag.db"


def test_uuid7_is_time_ordered_and_unique():
    ids = [uuid7() for _ in range(2000)]
    assert len(set(ids)) == 2000
    assert all(i[14] == "7" for i in ids)  # version nibble (RFC 9562)
    assert [i[:13] for i in ids] == sorted(i[:13] for i in ids)


def test_times():
    assert parse_time("2026-03-14T09:30:00+01:00") == "2026-03-14T08:30:00.000000Z"
    assert parse_time("2026-03-14T09:30:00Z") == "2026-03-14T09:30:00.000000Z"
    with pytest.raises(ValueError, match="ISO 8601"):
        parse_time("yesterday")


class TestReadings:
    def test_save_keeps_values_as_typed(self, db, board):
        saved = versions.save_reading(db, board, {**BAL, "va": "277,5 V"}, technician="Sam")
        row = versions.current_version(db, saved.reading_id)
        assert row["va"] == 277.5
        assert versions.inputs_of(row)["va"] == "277,5 V"
        assert row["nominal_v"] == 480.0  # from the board

    def test_bad_values_name_the_field_and_store_nothing(self, db, board):
        with pytest.raises(ValidationError) as e:
            versions.save_reading(db, board, {**BAL, "vb": "abc", "ic": "-3"})
        assert {f for f, _ in e.value.problems} == {"vb", "ic"}
        assert db["reading"].count == 0

    def test_corrections_and_voids_keep_every_version(self, db, board):
        s = versions.save_reading(db, board, BAL, technician="Sam")
        c = versions.correct_reading(db, s.reading_id, {**BAL, "vc": "276"}, reason="misread C", by="Ana")
        assert c.version == 2
        hist = versions.history(db, s.reading_id)
        assert [h["version"] for h in hist] == [1, 2]
        assert hist[0]["vc"] == 277.0 and hist[1]["vc"] == 276.0
        assert hist[1]["supersedes"] == hist[0]["id"] and hist[1]["reason"] == "misread C"
        assert versions.current_version(db, s.reading_id)["vc"] == 276.0
        versions.void_reading(db, s.reading_id, reason="wrong board", by="Ana")
        assert len(versions.history(db, s.reading_id)) == 3
        assert versions.current_readings(db) == []
        assert len(versions.current_readings(db, include_void=True)) == 1

    def test_correction_needs_a_reason(self, db, board):
        s = versions.save_reading(db, board, BAL)
        with pytest.raises(ValidationError, match="reason"):
            versions.correct_reading(db, s.reading_id, BAL, reason=" ")

    def test_board_history_and_previous(self, db, board):
        ids = [
            versions.save_reading(db, board, BAL, taken_at=f"2026-12-01T0{k}:00:00.000000Z").reading_id
            for k in range(5)
        ]
        hist = versions.board_history(db, board, limit=3)
        assert [h["reading_id"] for h in hist] == ids[::-1][:3]
        assert versions.previous_reading(db, board, ids[4])["reading_id"] == ids[3]

    def test_drafts(self, db, board):
        drafts.save_draft(db, board, {"va": "27"})
        assert drafts.get_draft(db, board) == {"va": "27"}
        versions.save_reading(db, board, BAL)
        assert drafts.get_draft(db, board) is None

    def test_round_progress(self, db, board):
        site = sites.get_board(db, board)["site_id"]
        sites.create_board(db, site, "DB-2")
        rid = rounds.start_round(db, site, "Sam", label="AM")
        versions.save_reading(db, board, BAL, round_id=rid)
        assert rounds.round_progress(db, rid) == (1, 2)

    def test_foreign_keys_enforced(self, db):
        with pytest.raises(sqlite3.IntegrityError):
            db["board"].insert(
                {"id": "x", "site_id": "missing", "name": "n", "system": "wye", "created_at": "t", "updated_at": "t"}
            )

    def test_board_validation(self, db):
        sid = sites.create_site(db, "S")
        with pytest.raises(ValidationError) as e:
            sites.create_board(db, sid, "", system="star", nominal_v="abc", af_label_date="someday")
        assert {f for f, _ in e.value.problems} == {"name", "system", "nominal_v", "af_label_date"}


def test_backup_and_check(db, board, tmp_path):
    versions.save_reading(db, board, BAL)
    dest = backup(db, tmp_path / "copy.db")
    assert sqlite3.connect(dest).execute("SELECT COUNT(*) FROM reading").fetchone()[0] == 1
    with pytest.raises(StorageError, match="already exists"):
        backup(db, dest)
    assert check(db) == []


def test_site_thresholds_are_validated_and_stored(db):
    sid = sites.create_site(db, "T", thresholds={"vuf_pct": "1,5"})
    assert sites.site_thresholds(sites.get_site(db, sid)).vuf_pct == 1.5
    sites.update_site(db, sid, thresholds={"lvur_pct": "0.8", "vuf_pct": ""}, label_review_years="4")
    site = sites.get_site(db, sid)
    assert sites.site_thresholds(site).lvur_pct == 0.8 and sites.site_thresholds(site).vuf_pct == 2.0
    with pytest.raises(ValidationError) as e:
        sites.update_site(db, sid, thresholds={"vuf_pct": "lots", "bogus": "1"}, label_review_years="-1")
    assert {f for f, _ in e.value.problems} == {"vuf_pct", "thresholds", "label_review_years"}
