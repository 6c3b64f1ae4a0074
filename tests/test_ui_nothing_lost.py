"""The app loses nothing typed: drafts are flushed before every way out (Esc, Ctrl+Q, the terminal closing),
quitting with unsaved values asks, and every write on a database that cannot be written says so on screen
instead of ending in a traceback.  Real terminal (tmux) and real read-only mounts where they are needed."""

import shutil
import time

import pytest
from test_nothing_lost import fill_disk, filled, remount_ro, tmpfs
from test_ui import Terminal, grid_row, seeded

from fieldpad.storage import drafts, sites, versions
from fieldpad.storage.db import open_db
from fieldpad.ui.app import FieldpadApp
from fieldpad.ui.sheet import ReadingSheet

needs_tmux = pytest.mark.skipif(
    shutil.which("tmux") is None, reason="tmux is not installed (the .ci/run script installs it)"
)


def record_notifications(app) -> list[str]:
    """Every message the app shows as a notification, in order (through its public ``notify``)."""
    shown, notify = [], app.notify

    def recording(message, *args, **kwargs):
        shown.append(str(message))
        return notify(message, *args, **kwargs)

    app.notify = recording
    return shown


async def open_first_sheet(pilot):
    """From the board list, open the first board's reading sheet."""
    await pilot.pause()
    await pilot.press("enter")
    await pilot.pause()


def draft_values(path):
    d = open_db(path)
    bid = sites.list_boards(d, sites.list_sites(d)[0]["id"])[0]["id"]
    draft = drafts.get_draft(d, bid)
    d.close()
    return (draft or {}).get("values", {})


@needs_tmux
def test_closing_the_terminal_keeps_every_typed_field_as_a_draft(tmp_path):
    db = tmp_path / "hup.db"
    seeded(db)
    term = Terminal(db)
    try:
        term.wait("MDB-7")
        term.keys("Enter")
        term.wait("Label:")
        term.keys("2", "7", "7", "Tab", "1", "0", "0", "Tab", "-", "3", "1")  # VA° is not a Tab stop
        term.wait("-31")
    finally:
        term.close()  # tmux kills the session: the app gets SIGHUP, as when a terminal window is closed
    deadline = time.time() + 15
    while time.time() < deadline and draft_values(db).get("ia_deg") != "-31":
        time.sleep(0.2)
    assert draft_values(db) == {"va": "277", "ia": "100", "ia_deg": "-31"}


async def test_quit_with_unsaved_values_asks_and_the_draft_holds_every_field(tmp_path):
    p = tmp_path / "q.db"
    seeded(p)
    app = FieldpadApp(p, technician="T")
    async with app.run_test(size=(80, 24)) as pilot:
        await open_first_sheet(pilot)
        assert isinstance(app.screen, ReadingSheet)
        await pilot.press("2", "7", "7", "tab", "1", "2", "ctrl+q")  # no pause before the quit
        await pilot.pause()
        assert "Quit fieldpad?" in str(app.screen.query_one(".question").render())
        await pilot.press("n")
        await pilot.pause()
        assert isinstance(app.screen, ReadingSheet)  # "no" goes back to the sheet, values intact
    assert draft_values(p) == {"va": "277", "ia": "12"}


async def test_writes_on_a_read_only_database_say_so_and_the_app_goes_on(tmp_path):
    with tmpfs(tmp_path / "stick", "4m") as stick:
        p = stick / "site.db"
        filled(p, 2)
        remount_ro(stick)
        app = FieldpadApp(p, technician="T")
        notes = record_notifications(app)
        async with app.run_test(size=(80, 24)) as pilot:
            await pilot.pause()
            await pilot.press("r")  # start a round
            await pilot.pause()
            shown = " ".join(notes)
            assert "NOT SAVED: the round was not started" in shown and "read-only file system" in shown
            await pilot.press("h")  # history, then void the reading
            await pilot.pause()
            await pilot.press("x")
            await pilot.pause()
            await pilot.press(*"wrong board", "enter")
            await pilot.pause()
            shown = " ".join(notes)
            assert "NOT SAVED: the reading was not voided" in shown
            await pilot.press("escape", "enter")  # back to the list, open the sheet, type, save
            await pilot.pause()
            await pilot.press("2", "7", "7", "f2", "y")  # only VA typed: asked first
            await pilot.pause()
            status = str(app.screen.query_one("#status").render())
            assert "NOT SAVED" in status and "read-only" in status and "NOT SAVED: NOT SAVED" not in status
            assert app.screen.query_one("EntryGrid").values["va"] == "277"
        assert app.return_code in (0, None)
        d = open_db(p)
        assert d["reading"].count == 2 and versions.counts(d)["round"] == 0
        d.close()


async def test_leaving_when_the_draft_cannot_be_written_asks_before_losing_anything(tmp_path):
    with tmpfs(tmp_path / "disk", "2m") as disk:
        p = disk / "full.db"
        seeded(p)
        app = FieldpadApp(p, technician="T")
        async with app.run_test(size=(80, 24)) as pilot:
            await open_first_sheet(pilot)
            fill_disk(disk)  # the laptop's disk fills up while the sheet is open
            await pilot.press("2", "7", "7", "escape")
            await pilot.pause()
            assert "LOSE what is typed" in str(app.screen.query_one(".question").render())
            await pilot.press("n")
            await pilot.pause()
            sheet = app.screen
            assert isinstance(sheet, ReadingSheet) and sheet.query_one("EntryGrid").values["va"] == "277"
            assert "DRAFT NOT KEPT" in str(sheet.query_one("#status").render())
            (disk / "ballast").unlink()  # space again: Esc now keeps the draft
            await pilot.press("escape")
            await pilot.pause()
            assert "kept as a draft" in str(app.screen.query_one(".question").render())
            await pilot.press("y")
            await pilot.pause()
        assert draft_values(p) == {"va": "277"}


async def test_the_draft_holds_every_field_at_every_keystroke_and_a_busy_database_does_not_stop_typing(tmp_path):
    import sqlite3

    p = tmp_path / "k.db"
    seeded(p)
    app = FieldpadApp(p, technician="T")
    async with app.run_test(size=(80, 24)) as pilot:
        await open_first_sheet(pilot)
        await pilot.press("2", "7", "7", "tab", "1", "2")
        # Read by another connection straight after the keys: no timer, no way out was needed.
        assert draft_values(p) == {"va": "277", "ia": "12"}
        other = sqlite3.connect(p, isolation_level=None)
        other.execute("BEGIN IMMEDIATE")  # another process holds the write lock (as a long import would)
        t = time.perf_counter()
        await pilot.press("3")
        waited = time.perf_counter() - t
        assert grid_row(app.screen, 1)[5] == "123"  # IA, as drawn
        assert waited < 2.0  # a keystroke does not wait out the 30 s busy timeout
        other.execute("COMMIT")
        other.close()
        await pilot.press("4")
        assert draft_values(p) == {"va": "277", "ia": "1234"}
