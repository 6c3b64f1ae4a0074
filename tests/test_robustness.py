"""Robustness: damaged and foreign files, full disk, read-only, hostile text, safe file writing.

The robustness run (tests/robustness/run.py) repeats the random and crash parts at larger counts.
"""

import os
import sqlite3
import subprocess
import sys

import pytest
from conftest import BAL

from fieldpad.report.export import export_records, to_csv
from fieldpad.report.html import to_html
from fieldpad.storage import sites, versions
from fieldpad.storage.db import StorageError, open_db
from fieldpad.storage.files import atomic_write_text
from fieldpad.ui.safe import printable


def cli(*args):
    return subprocess.run([sys.executable, "-m", "fieldpad", *args], capture_output=True, text=True, timeout=120)


def _filled(path, n=40):
    db = open_db(path)
    sid = sites.create_site(db, "Damage Lab")
    bid = sites.create_board(db, sid, "B1")
    for _ in range(n):
        versions.save_reading(db, bid, BAL, note="n" * 300)
    db.close()


@pytest.mark.parametrize("damage", ["truncated", "garbled", "text", "empty-header", "other-sqlite", "newer"])
def test_damaged_or_foreign_files_get_a_message_and_are_not_changed(tmp_path, damage):
    p = tmp_path / "x.db"
    _filled(p)
    data = p.read_bytes()
    if damage == "truncated":
        p.write_bytes(data[: len(data) // 3])
    elif damage == "garbled":
        p.write_bytes(data[:100] + os.urandom(4096) + data[4196:])
    elif damage == "text":
        p.write_text("site,board\nnot,a database\n")
    elif damage == "empty-header":
        p.write_bytes(b"SQLite format 3\x00" + b"\x00" * 200)
    elif damage == "other-sqlite":
        p.unlink()
        c = sqlite3.connect(p)
        c.execute("CREATE TABLE recipes (name TEXT)")
        c.commit()
        c.close()
    elif damage == "newer":
        c = sqlite3.connect(p)
        c.execute(
            "INSERT INTO _sqlite_migrations (migration_set, name, applied_at) "
            "VALUES ('fieldpad', '9999_future', '2030-01-01')"
        )
        c.commit()
        c.close()
    for suffix in ("-wal", "-shm"):
        if os.path.exists(str(p) + suffix):
            os.unlink(str(p) + suffix)
    before = p.read_bytes()
    for args in (("db", "info"), ("export", "--format", "csv"), ("import", str(tmp_path / "none.csv"))):
        r = cli(*args, "--db", str(p))
        assert r.returncode in (1, 2), (damage, args, r.stdout)
        assert "Traceback" not in r.stderr and r.stderr.strip(), (damage, args)
        assert len(r.stderr.strip().splitlines()) <= 2
    assert p.read_bytes() == before  # never an overwrite
    chk = cli("db", "check", "--db", str(p))
    assert "Traceback" not in chk.stderr + chk.stdout


def fill_up(db, bid):
    """Save until even a reading without a note no longer fits under max_page_count."""
    for size in (5000, 500, 50, 0, -1):
        try:
            for _ in range(5000):
                versions.save_reading(db, bid, {"va": "1"} if size < 0 else BAL, note="x" * size if size > 0 else None)
        except StorageError:
            continue
    with pytest.raises(StorageError, match="full"):
        versions.save_reading(db, bid, {"va": "1"})


def test_full_disk_is_reported_and_nothing_saved_is_harmed(db, board):
    for _ in range(5):
        versions.save_reading(db, board, BAL)
    pages = db.execute("PRAGMA page_count").fetchone()[0]
    db.execute(f"PRAGMA max_page_count = {pages}")
    with pytest.raises(StorageError, match="full"):
        for _ in range(2000):
            versions.save_reading(db, board, BAL, note="y" * 5000)
    db.execute("PRAGMA max_page_count = 1073741823")
    assert db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    assert versions.counts(db)["reading"] >= 5


async def test_app_keeps_typed_values_when_the_disk_is_full(tmp_path):
    from fieldpad.ui.app import FieldpadApp
    from fieldpad.ui.entry_grid import EntryGrid
    from fieldpad.ui.sheet import ReadingSheet

    p = tmp_path / "full.db"
    _filled(p, 2)
    app = FieldpadApp(p, technician="T")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        bid = sites.list_boards(app.db, app.site_id)[0]["id"]
        app.push_screen(ReadingSheet(bid))
        await pilot.pause()
        await pilot.press("2", "7", "7", "tab", "tab", "1", "0")
        app.db.execute(f"PRAGMA max_page_count = {app.db.execute('PRAGMA page_count').fetchone()[0]}")
        fill_up(app.db, bid)
        await pilot.press("f2", "y")  # phases B and C not typed: asked first
        await pilot.pause()
        sheet = app.screen
        assert sheet.query_one(EntryGrid).values["va"] == "277"
        assert "NOT SAVED" in str(sheet.query_one("#status").render())


HOSTILE = [
    "Robert'); DROP TABLE reading;--",
    "<img src=x onerror=alert(1)>",
    '=HYPERLINK("http://x")',
    "\x1b[31mred\x1b[0m\x07",
    "x" * 200,
    "\u202eevil\u202c",
    "Schaltschrank ⚡ 🔌",
    "tab\there",
    "-2+3",
]


def test_hostile_text_is_stored_as_typed_escaped_and_neutralised(db):
    sid = sites.create_site(db, HOSTILE[1])
    for k, text in enumerate(HOSTILE):
        bid = sites.create_board(db, sid, f"{text[:150]}#{k}", location=text)
        versions.save_reading(db, bid, BAL, technician=text[:200], note=text, taken_at=f"2026-12-01T10:0{k}:00Z")
    rows = versions.current_readings(db)
    assert {r["note"] for r in rows} == set(HOSTILE)  # stored exactly as typed
    assert db["reading"].count == len(HOSTILE)  # nothing dropped
    html = to_html(db, export_records(db))
    assert "<img src=x" not in html
    assert "\x1b" not in html and "\x07" not in html
    csv_text = to_csv(export_records(db))
    assert ",=HYPERLINK" not in csv_text and "'=HYPERLINK" in csv_text
    assert ",-2+3" not in csv_text and "'-2+3" in csv_text
    for text in HOSTILE:
        shown = printable(text)
        assert not any(ord(c) < 32 or 0x7F <= ord(c) <= 0x9F for c in shown)


async def test_board_list_shows_hostile_names_without_control_sequences(db_path, db):
    from textual.widgets import DataTable

    from fieldpad.ui.app import FieldpadApp

    sid = sites.create_site(db, "\x1b]0;owned\x07Site")
    sites.create_board(db, sid, "\x1b[2J<b>B</b>")
    db.close()
    app = FieldpadApp(db_path, technician="T")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        cell = app.screen.query_one(DataTable).get_row_at(0)[0]
        assert "\x1b" not in str(cell) and "<b>B</b>" in str(cell)


def test_interrupted_export_leaves_no_half_file(tmp_path, monkeypatch):
    target = tmp_path / "day.csv"
    target.write_text("previous export\n")

    def boom(*a, **k):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "replace", boom)
    with pytest.raises(OSError):
        atomic_write_text(target, "new content " * 1000)
    assert target.read_text() == "previous export\n"
    assert [p.name for p in tmp_path.iterdir()] == ["day.csv"]


def test_files_are_private(tmp_path, db_path, db, board):
    versions.save_reading(db, board, BAL)
    out = atomic_write_text(tmp_path / "e.csv", to_csv(export_records(db)))
    assert out.stat().st_mode & 0o777 == 0o600
    assert db_path.stat().st_mode & 0o777 == 0o600
