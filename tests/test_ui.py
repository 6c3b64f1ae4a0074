"""The entry app, headless: pilot tests for the whole flow, SVG snapshots, a real-terminal burst."""

import contextlib
import os
import shutil
import subprocess
import sys
import time
from datetime import UTC

import pytest
from conftest import BAL

from fieldpad.storage import drafts, sites, versions
from fieldpad.storage.db import open_db
from fieldpad.ui.app import FieldpadApp
from fieldpad.ui.entry_grid import EntryGrid
from fieldpad.ui.sheet import ReadingSheet


def seeded(path):
    db = open_db(path)
    sid = sites.create_site(db, "Test Yard", colour_set="na-480y277")
    bid = sites.create_board(
        db,
        sid,
        "MDB-7",
        system="wye",
        nominal_v=480,
        location="Plant room",
        af_incident_energy_cal_cm2=4.2,
        af_working_distance_mm=455,
        af_boundary_mm=900,
        af_ppe="2",
        af_label_date="2024-06-01",
    )
    versions.save_reading(db, bid, BAL, technician="Earlier Tech", taken_at="2026-11-30T09:00:00.000000Z")
    db.close()
    return bid


async def test_first_run_create_site_board_enter_save_correct(tmp_path):
    app = FieldpadApp(tmp_path / "new.db", technician="Test Tech")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press(*"Riverside Depot", "f2")  # the site form opens first on an empty database
        await pilot.pause()
        assert app.site_id is not None
        await pilot.press("n")
        await pilot.press(*"DB-1", "f2")
        await pilot.pause()
        assert [b["name"] for b in sites.list_boards(app.db, app.site_id)] == ["DB-1"]
        await pilot.press("enter")
        await pilot.pause()
        sheet = app.screen
        assert isinstance(sheet, ReadingSheet)
        # The reference angle (VA°) is not a Tab stop: V, Tab, I as one expects.
        keys = [
            "2",
            "7",
            "7",
            "tab",
            "1",
            "0",
            "0",
            "tab",
            "-",
            "3",
            "0",
            "tab",
            "2",
            "7",
            "7",
            "tab",
            "2",
            "4",
            "0",
            "tab",
            "1",
            "0",
            "0",
            "tab",
            "-",
            "1",
            "5",
            "0",
            "tab",
            "2",
            "7",
            "7",
            "tab",
            "1",
            "2",
            "0",
            "tab",
            "1",
            "0",
            "0",
            "tab",
            "9",
            "0",
        ]
        await pilot.press(*keys)
        grid_rows = seen(sheet, "#grid").splitlines()
        assert grid_rows[1].split()[2:] == ["277", "0", "ref", "100", "-30"]
        assert grid_rows[2].split()[2:] == ["277", "240", "100", "-150"]
        assert "Rotation A-B-C (forward)" in seen(sheet, "#results")
        await pilot.press("f2")
        await pilot.pause()
        rows = versions.current_readings(app.db)
        assert len(rows) == 1 and rows[0]["vb_deg"] == 240.0 and rows[0]["technician"] == "Test Tech"
        # VA's angle left blank is stored blank; the analysis takes it as 0° (core.reference).
        assert rows[0]["ia"] == 100.0 and rows[0]["ia_deg"] == -30.0 and rows[0]["va_deg"] is None
        assert "SAVED" in seen(sheet, "#status") and "277" not in seen(sheet, "#grid")  # cleared
        # correct it from the history
        await pilot.press("f4")
        await pilot.pause()
        await pilot.press("c")
        await pilot.pause()
        assert "CORRECTING" in seen(app.screen, "#sheet-title")
        await pilot.press("2", "7", "6", "f2")  # entering a filled field, typing replaces its value
        await pilot.pause()
        await pilot.press(*"meter misread", "enter")
        await pilot.pause()
        hist = versions.history(app.db, rows[0]["reading_id"])
        assert [h["version"] for h in hist] == [1, 2]
        assert hist[1]["va"] == 276.0 and hist[1]["reason"] == "meter misread"


def seen(screen, selector: str) -> str:
    """The text a widget draws, as the technician sees it."""
    w = screen.query_one(selector)
    r = w.render()
    return getattr(r, "plain", None) or str(r)


def grid_row(screen, n: int) -> list[str]:
    """Row ``n`` of the entry grid as drawn (0: the column titles), split into words, the caret left out."""
    return seen(screen, "#grid").replace("▏", " ").splitlines()[n].split()


@contextlib.asynccontextmanager
async def sheet_open(tmp_path, name, size=(80, 24)):
    """The app on a seeded database with the board's reading sheet open: (app, pilot)."""
    bid = seeded(tmp_path / name)
    app = FieldpadApp(tmp_path / name, technician="T")
    async with app.run_test(size=size) as pilot:
        await pilot.pause()
        app.push_screen(ReadingSheet(bid))
        await pilot.pause()
        yield app, pilot


async def test_bad_value_is_not_saved_and_stays_on_screen(tmp_path):
    async with sheet_open(tmp_path, "s.db") as (app, pilot):
        await pilot.press("2", "7", "x", "f2")
        await pilot.pause()
        sheet = app.screen
        assert sheet.query_one(EntryGrid).values["va"] == "27x"
        assert "NOT SAVED" in str(sheet.query_one("#status").render())
        assert versions.counts(app.db)["reading"] == 1


async def test_leaving_with_unsaved_values_asks_and_keeps_a_draft(tmp_path):
    bid = seeded(tmp_path / "d.db")
    app = FieldpadApp(tmp_path / "d.db", technician="T")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        app.push_screen(ReadingSheet(bid))
        await pilot.pause()
        await pilot.press("2", "7", "5", "escape")
        await pilot.pause()
        assert "Leave this sheet" in str(app.screen.question)
        await pilot.press("y")
        await pilot.pause()
        assert drafts.get_draft(app.db, bid)["values"] == {"va": "275"}
        app.push_screen(ReadingSheet(bid))
        await pilot.pause()
        sheet = app.screen
        # The offer does not take the keyboard and says how old the draft is.
        assert "DRAFT kept for this board, typed at" in seen(sheet, "#status")
        assert "(just now)" in seen(sheet, "#status")
        await pilot.press("4")  # typed right after opening: lands in the grid, not swallowed
        assert grid_row(sheet, 1)[2] == "4"
        assert drafts.get_draft(app.db, bid)["earlier"]["values"] == {"va": "275"}  # the draft is not lost
        await pilot.press("f7")  # put the draft back: asks, because something is typed
        await pilot.pause()
        await pilot.press("y")
        await pilot.pause()
        assert grid_row(sheet, 1)[2] == "275"
        assert "put back" in seen(sheet, "#status")
        await pilot.press("4", "0", "2")  # a restored value is replaced by typing, never appended to
        assert grid_row(sheet, 1)[2] == "402"


def test_draft_age_in_words():
    from datetime import datetime

    from fieldpad.ui.sheet_model import draft_age

    now = datetime(2026, 12, 2, 14, 30, tzinfo=UTC)
    assert draft_age({"typed_at": "2026-12-02T14:05:00.000000Z"}, now).endswith("(25 min ago)")
    assert draft_age({"typed_at": "2026-11-29T14:05:00.000000Z"}, now).endswith("(3 days ago)")
    assert draft_age({}, now) == "at a time not recorded"  # a draft kept by an older fieldpad


async def test_mode_switch_keeps_or_converts_what_is_typed_and_says_so(tmp_path):
    async with sheet_open(tmp_path, "m.db", size=(100, 30)) as (app, pilot):
        sheet = app.screen
        await pilot.press(
            *"277", "tab", "tab", "tab", *"277", "tab", *"-120", "tab", "tab", "tab", *"277", "tab", *"120"
        )
        await pilot.press("f5")  # line-to-line with angles: converted from the phasors typed
        assert grid_row(sheet, 0) == ["V", "V°", "I", "I°"]
        assert grid_row(sheet, 1)[2:4] == ["479.8", "30.0"]
        assert "computed from the line-to-neutral values" in seen(sheet, "#status")
        await pilot.press("f5")  # no angles: the V° column is not drawn at all
        assert grid_row(sheet, 0) == ["V", "I", "I°"]
        assert "VAB angle, VBC angle, VCA angle" in seen(sheet, "#status") and "kept aside" in seen(sheet, "#status")
        await pilot.press("f5")  # back to line-to-neutral: the typed voltages come back
        row_b = grid_row(sheet, 2)
        assert row_b[2:4] == ["277", "-120"]
        assert "brought back" in seen(sheet, "#status")


async def test_previous_reading_per_phase_with_the_change(tmp_path):
    async with sheet_open(tmp_path, "p3.db", size=(100, 30)) as (app, pilot):
        sheet = app.screen
        await pilot.press(*"280", "f3")
        shown = seen(sheet, "#results")
        assert "Previous reading" in shown
        va = next(line for line in shown.splitlines() if line.startswith("VA "))
        assert va.split() == ["VA", "277.0", "280.0", "+3.0", "V"]
        await pilot.press("f3")
        assert "Previous reading" not in seen(sheet, "#results")


async def test_key_strip_lists_the_screen_keys_and_follows_the_screen(tmp_path):
    from fieldpad.ui.key_strip import KeyStrip, key_cap, strip_text

    bid = seeded(tmp_path / "k.db")
    app = FieldpadApp(tmp_path / "k.db", technician="T")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        board_keys = [e[1] for e in app.screen.query_one(KeyStrip).entries()]
        assert "New board" in board_keys and "Save" not in board_keys
        assert "q  Quit" in app.screen.query_one(KeyStrip).render().plain  # kept at 80 columns
        app.push_screen(ReadingSheet(bid))
        await pilot.pause()
        strip = app.screen.query_one(KeyStrip)
        entries = strip.entries()
        assert ("f2", "Save", True) in entries
        shown = strip.render().plain
        assert shown.startswith(" F2  Save ") and len(shown) <= 80
    # Keys that do not fit are left off whole, never cut in the middle of a word; back, quit, save and
    # help stay whatever the width, the others fill the room left.
    text = strip_text([("f2", "Save", True), ("f3", "Previous reading", True), ("esc", "Back", True)], width=33)
    assert text.plain == " F2  Save  Esc  Back "
    text = strip_text(
        [("f2", "Save", True), ("f3", "Prev", True), ("f9", "Previous reading", True), ("esc", "Back", True)], width=33
    )
    assert text.plain == " F2  Save  F3  Prev  Esc  Back "
    assert key_cap("f12") == "F12" and key_cap("escape") == "Esc" and key_cap("n") == "n"


def _sheet_app(tmp_path, name):
    """A sheet with a reading typed in, phase C's CT reversed (270° instead of 90°) so a finding shows."""
    bid = seeded(tmp_path / name)
    app = FieldpadApp(tmp_path / name, technician="T")

    async def run_before(pilot):
        from datetime import date

        await pilot.pause()
        # A fixed "today": the label dated 2024-06-01 is current on it, whatever the computer's date.
        app.push_screen(ReadingSheet(bid, today=date(2026, 12, 2)))
        await pilot.pause()
        await pilot.press(
            *"277",
            "tab",
            *"100",
            "tab",
            *"-30",
            "tab",
            *"277",
            "tab",
            *"240",
            "tab",
            *"100",
            "tab",
            "-",
            *"150",
            "tab",
            *"277",
            "tab",
            *"120",
            "tab",
            *"100",
            "tab",
            *"270",
            "tab",
            *"12",
        )
        await pilot.pause()

    return app, run_before


def test_snapshot_sheet_80x24(snap_compare, tmp_path):
    app, run_before = _sheet_app(tmp_path, "snap1.db")
    assert snap_compare(app, terminal_size=(80, 24), run_before=run_before)


def test_snapshot_sheet_120x40(snap_compare, tmp_path):
    app, run_before = _sheet_app(tmp_path, "snap2.db")
    assert snap_compare(app, terminal_size=(120, 40), run_before=run_before)


class Terminal:
    """fieldpad in a real 80x24 terminal (tmux): send keys without pauses, read the screen."""

    def __init__(self, db):
        self.session = f"fp{os.getpid()}{int(time.time() * 1000) % 100000}"
        subprocess.run(
            [
                "tmux",
                "new-session",
                "-d",
                "-s",
                self.session,
                "-x",
                "80",
                "-y",
                "24",
                f"{sys.executable} -m fieldpad --db {db}",
            ],
            check=True,
        )

    def screen(self) -> str:
        return subprocess.run(["tmux", "capture-pane", "-p", "-t", self.session], capture_output=True, text=True).stdout

    def keys(self, *keys) -> None:
        subprocess.run(["tmux", "send-keys", "-t", self.session, *keys], check=True)  # one burst

    def wait(self, text: str, present: bool = True, seconds: float = 20) -> str:
        deadline = time.time() + seconds
        while (text in self.screen()) != present and time.time() < deadline:
            time.sleep(0.2)
        return self.screen()

    def close(self) -> None:
        subprocess.run(["tmux", "kill-session", "-t", self.session])


needs_tmux = pytest.mark.skipif(
    shutil.which("tmux") is None, reason="tmux is not installed (the .ci/run script installs it)"
)


@needs_tmux
def test_fast_burst_through_a_real_terminal(tmp_path):
    """Keys sent by tmux in one burst, no pauses: every value lands in its own field."""
    db = tmp_path / "burst.db"
    seeded(db)
    term = Terminal(db)
    try:
        term.wait("MDB-7")
        term.keys("Enter")
        term.wait("Label:")
        # V, Tab, I: the reference angle (VA°) is not a Tab stop; blank, it is 0°.
        term.keys(
            "2",
            "7",
            "7",
            "Tab",
            "1",
            "0",
            "0",
            "Tab",
            "-",
            "3",
            "0",
            "Tab",
            "2",
            "7",
            "6",
            "Tab",
            "2",
            "4",
            "0",
            "Tab",
            "9",
            "9",
            "Tab",
            "-",
            "1",
            "5",
            "0",
            "Enter",
            "2",
            "7",
            "8",
            "Enter",
            "1",
            "2",
            "0",
            "Enter",
            "9",
            "8",
            "Enter",
            "9",
            "0",
            "Tab",
            "7",
            "F2",
        )
        shown = term.wait("SAVED")
        assert "SAVED" in shown, shown
    finally:
        term.close()
    d = open_db(db)
    row = versions.board_history(d, sites.list_boards(d, sites.list_sites(d)[0]["id"])[0]["id"], 1)[0]
    got = {
        k: row[k]
        for k in ("va", "va_deg", "ia", "ia_deg", "vb", "vb_deg", "ib", "ib_deg", "vc", "vc_deg", "ic", "ic_deg", "i_n")
    }
    assert got == {
        "va": 277.0,
        "va_deg": None,
        "ia": 100.0,
        "ia_deg": -30.0,
        "vb": 276.0,
        "vb_deg": 240.0,
        "ib": 99.0,
        "ib_deg": -150.0,
        "vc": 278.0,
        "vc_deg": 120.0,
        "ic": 98.0,
        "ic_deg": 90.0,
        "i_n": 7.0,
    }


async def test_day_review_filters_compare_and_export(tmp_path, monkeypatch):
    from datetime import date

    from textual.widgets import DataTable

    from fieldpad.demo_site import build_demo
    from fieldpad.ui import review, review_dialogs

    build_demo(tmp_path / "demo.db", day=date(2026, 3, 10))
    monkeypatch.setattr(review_dialogs, "export_folder", lambda: tmp_path)
    app = FieldpadApp(tmp_path / "demo.db", technician="Sup")
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        await pilot.press("v")
        await pilot.pause()
        scr = app.screen
        assert isinstance(scr, review.DayReview) and scr.day == date(2026, 3, 10)
        table = scr.query_one(DataTable)
        assert table.row_count == 23
        await pilot.press("f")
        with_findings = table.row_count
        assert 0 < with_findings < 23
        await pilot.press("o", "o")  # sort by worst finding: alarms first
        first = table.get_row_at(0)
        assert str(first[2]).startswith("ALARM ") and "_" not in str(first[2])  # words, not a code
        await pilot.press("c")
        await pilot.pause()
        cmp_table = app.screen.query_one(DataTable)
        assert cmp_table.row_count == 12
        await pilot.press("escape", "x")
        await pilot.pause()
        await pilot.press("c")
        await app.workers.wait_for_complete()
        await pilot.pause()
        files = list(tmp_path.glob("fieldpad-*.csv"))
        assert len(files) == 1 and files[0].read_text(encoding="utf-8-sig").count("\n") == 24


async def test_command_palette_offers_the_screen_commands(tmp_path):
    from fieldpad.ui.review import DayReview

    seeded(tmp_path / "p.db")
    app = FieldpadApp(tmp_path / "p.db", technician="T")
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        await pilot.press("ctrl+p")
        await pilot.pause()
        await pilot.press(*"Day review")
        await pilot.pause(0.5)
        await pilot.press("enter")
        await pilot.pause(0.5)
        assert isinstance(app.screen, DayReview)


@needs_tmux
def test_fast_burst_in_the_board_form(tmp_path):
    """The board form's text fields, filled and saved in one burst through a real terminal."""
    db = tmp_path / "form.db"
    seeded(db)
    term = Terminal(db)
    try:
        term.wait("MDB-7")
        term.keys("n")
        term.wait("Name / tag")
        term.wait("Esc  Cancel")  # the form's key strip, whose going away below means "saved"
        time.sleep(0.5)  # the form has just opened; the burst below is what is under test
        term.keys(
            "LP-9",
            "Tab",
            "Roof plant",
            "Tab",
            "panelboard",
            "Tab",
            "208",
            "Tab",
            "60",
            "Tab",
            "1.5",
            "Tab",
            "455",
            "Tab",
            "600",
            "Tab",
            "1",
            "Tab",
            "2025-01-31",
            "F2",
        )
        last_screen = term.wait("Esc  Cancel", present=False)  # the form's key strip goes once it is saved
    finally:
        term.close()
    d = open_db(db)
    b = sites.find_board(d, sites.list_sites(d)[0]["id"], "LP-9")
    assert b is not None, last_screen
    assert (
        b["location"],
        b["kind"],
        b["nominal_v"],
        b["frequency_hz"],
        b["af_incident_energy_cal_cm2"],
        b["af_working_distance_mm"],
        b["af_boundary_mm"],
        b["af_ppe"],
        b["af_label_date"],
    ) == ("Roof plant", "panelboard", 208.0, 60.0, 1.5, 455.0, 600.0, "1", "2025-01-31")


async def test_site_settings_change_thresholds_and_findings_follow(tmp_path):
    from fieldpad.storage.sites import site_thresholds

    seeded(tmp_path / "t.db")
    app = FieldpadApp(tmp_path / "t.db", technician="Sup")
    async with app.run_test(size=(100, 40)) as pilot:
        await pilot.pause()
        await pilot.press("s")
        await pilot.pause()
        await pilot.press("e")
        await pilot.pause()
        form = app.screen
        form.query_one("#th-lvur_pct").value = "0.5"
        form.query_one("#label_review_years").value = "3"
        await pilot.press("f2")
        await pilot.pause()
        site = sites.get_site(app.db, app.site_id)
        assert site_thresholds(site).lvur_pct == 0.5 and site["label_review_years"] == 3.0
        form_again = None
        await pilot.press("s", "e")
        await pilot.pause()
        form_again = app.screen
        form_again.query_one("#th-vuf_pct").value = "abc"
        await pilot.press("f2")
        await pilot.pause()
        error = str(form_again.query_one("#form-error").render())
        assert "VUF warning above (%)" in error and "vuf_pct" not in error  # its label, not an internal name


async def test_text_panel_redraws_on_new_content_and_on_a_style_change(tmp_path):
    from rich.text import Text

    from fieldpad.ui.text_panel import TextPanel

    async with sheet_open(tmp_path, "p.db") as (app, pilot):
        status = app.screen.query_one("#status", TextPanel)
        app.screen.set_status("all good", ok=True)
        await pilot.pause()
        first = status.render_line(0)
        assert first.text.startswith(" all good") or first.text.startswith("all good")
        app.screen.set_status("all good", error=True)  # same words, the error colours
        await pilot.pause()
        again = status.render_line(0)
        assert again.text == first.text and list(again) != list(first)
        status.update(Text("other words"))
        assert "other words" in status.render_line(0).text
        # A line that does not wrap and is too long is cut with an ellipsis, at the panel's width.
        results = app.screen.query_one("#results", TextPanel)
        results.update(Text("V1 " + "9" * 200 + "\nsecond", no_wrap=True, overflow="ellipsis"))
        first_line, second_line = results.render_line(0), results.render_line(1)
        assert first_line.cell_length == second_line.cell_length == results.size.width
        assert first_line.text.rstrip().endswith("…") and second_line.text.strip() == "second"


def test_text_panel_sees_a_change_of_colour_alone():
    from rich.text import Text

    from fieldpad.ui.text_panel import _same

    assert _same(Text("12 A", "#9ecbff"), Text("12 A", "#9ecbff"))
    assert not _same(Text("12 A", "#9ecbff"), Text("12 A", "bold #ff5050"))  # same words, now an error
    assert not _same(Text("12 A"), Text("12 B"))


# ---- the sheet as a technician uses it (issue 14) ------------------------------------------------


async def test_typing_into_a_filled_field_replaces_it_after_tab_wraps_and_shift_tab(tmp_path):
    async with sheet_open(tmp_path, "rep.db") as (app, pilot):
        sheet = app.screen
        await pilot.press(*"277.2", "tab", *"10")
        # Shift+Tab back to VA passes the reference angle by; typing replaces 277.2, Backspace edits.
        await pilot.press("shift+tab", *"280")
        assert grid_row(sheet, 1)[2] == "280" and grid_row(sheet, 1)[5] == "10"
        await pilot.press("tab", "shift+tab", "backspace", "9")  # back on VA: Backspace edits
        assert grid_row(sheet, 1)[2] == "289"
        for _ in range(12):  # Tab round the whole sheet (wraps past IN) back to VA
            await pilot.press("tab")
        await pilot.press(*"402")
        assert grid_row(sheet, 1)[2] == "402"
        assert "VA = 402 V" in seen(sheet, "#understood")


async def test_reference_angle_is_shown_as_0_and_reachable_with_the_arrows(tmp_path):
    async with sheet_open(tmp_path, "ref.db") as (app, pilot):
        sheet = app.screen
        assert "0 ref" in seen(sheet, "#grid").splitlines()[1]
        await pilot.press("right")  # the arrows still reach it
        assert "VA angle: blank = 0°, the reference" in seen(sheet, "#understood")
        await pilot.press(*"30", "tab", *"100")
        assert grid_row(sheet, 1)[3:5] == ["30", "100"]  # VA° = 30 typed, then Tab to IA


async def test_an_impossible_set_says_why_at_once(tmp_path):
    async with sheet_open(tmp_path, "tri.db") as (app, pilot):
        sheet = app.screen
        await pilot.press("f5", "f5")  # line-to-line magnitudes only
        await pilot.press(*"4815", "down", *"478", "down", *"484")
        results, findings = seen(sheet, "#results"), seen(sheet, "#findings")
        assert "NO RESULTS" in results and "cannot form a triangle" in results
        assert "cannot form a triangle" in findings and "No findings" not in findings
        await pilot.press("up", "up", *"481")  # typing replaces 4815: the results come back
        assert "NO RESULTS" not in seen(sheet, "#results") and "LVUR" in seen(sheet, "#results")


async def test_results_are_labelled_and_split_phase_shows_what_applies(tmp_path):
    db = open_db(tmp_path / "sp.db")
    sid = sites.create_site(db, "Split Yard")
    bid = sites.create_board(db, sid, "OFC-9", system="split-phase", nominal_v=240)
    db.close()
    app = FieldpadApp(tmp_path / "sp.db", technician="T")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        app.push_screen(ReadingSheet(bid))
        await pilot.pause()
        sheet = app.screen
        await pilot.press(*"120", "tab", *"30", "tab", "tab", *"121", "tab", *"180", "tab", *"20")
        shown = seen(sheet, "#results")
        assert "VAB 241.0 V calc" in shown
        assert "Rotation" not in shown and "V1 " not in shown and "VUF" not in shown
        assert "IN typed — A  calc" in shown  # measured (typed), computed and estimated told apart


async def test_the_triplen_hint_only_when_the_measured_neutral_is_higher(tmp_path):
    async with sheet_open(tmp_path, "nm.db", size=(120, 40)) as (app, pilot):
        sheet = app.screen
        # Phase C at 60 A: the phasor sum is 40 A (invented values).
        await pilot.press(
            *"277",
            "tab",
            *"100",
            "tab",
            *"-30",
            "tab",
            *"277",
            "tab",
            *"-120",
            "tab",
            *"100",
            "tab",
            *"-150",
            "tab",
            *"277",
            "tab",
            *"120",
            "tab",
            *"60",
            "tab",
            *"90",
            "tab",
            *"10",
        )
        assert "triplen" not in seen(sheet, "#findings")
        assert "Measured neutral is below the phasor sum of the phases by -30.0 A" in seen(sheet, "#findings")
        await pilot.press(*"60")
        assert "triplen harmonics" in seen(sheet, "#findings")


async def test_an_expired_label_is_said_in_words_and_is_a_finding(tmp_path):
    from datetime import date

    bid = seeded(tmp_path / "old.db")
    app = FieldpadApp(tmp_path / "old.db", technician="T")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        app.push_screen(ReadingSheet(bid, today=date(2030, 1, 1)))  # label dated 2024-06-01, 5-year review
        await pilot.pause()
        sheet = app.screen
        banner = seen(sheet, "#caution").splitlines()[1]
        assert banner.startswith("⚠ LABEL EXPIRED: dated 2024-06-01")
        assert "WARN" in seen(sheet, "#findings") and "arc-flash label is dated 2024-06-01" in seen(sheet, "#findings")


def _demo_app(tmp_path, size_name="demo.db"):
    from datetime import date

    from fieldpad.demo_site import build_demo

    build_demo(tmp_path / size_name, day=date(2026, 3, 10))
    return FieldpadApp(tmp_path / size_name, technician="Sup")


def _row_under_cursor(screen) -> str:
    from textual.widgets import DataTable

    t = screen.query_one(DataTable)
    return str(t.get_row_at(t.cursor_row)[0])


async def test_board_list_keeps_its_place_jumps_by_name_and_marks_findings(tmp_path):
    from textual.widgets import DataTable

    app = _demo_app(tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        home = app.screen
        await pilot.press(*"MSB2")  # typing a name jumps to it (capitals: the letters are the screen's keys)
        assert _row_under_cursor(home) == "MSB-2"
        await pilot.press("enter")
        await pilot.pause()
        await pilot.press("escape")
        await pilot.pause()
        assert app.screen is home and _row_under_cursor(home) == "MSB-2"  # not back at the top
        await pilot.press("end")
        assert _row_under_cursor(home) == "SKD-1"
        await pilot.press("home")
        assert _row_under_cursor(home) == "CH-1"
        await app.workers.wait_for_complete()
        await pilot.pause()
        t = home.query_one(DataTable)
        marks = {str(t.get_row_at(k)[0]): str(t.get_row_at(k)[1]) for k in range(t.row_count)}
        assert any(m == "▲ ALARM" for m in marks.values()) and any(m == "△ WARN" for m in marks.values())
        assert "q  Quit" in seen(home, "KeyStrip")


async def test_finishing_a_round_with_unread_boards_shows_them_and_asks(tmp_path):
    bid = seeded(tmp_path / "r.db")
    db = open_db(tmp_path / "r.db")
    sites.create_board(db, sites.get_board(db, bid)["site_id"], "LP-4", system="wye", nominal_v=208)
    db.close()
    app = FieldpadApp(tmp_path / "r.db", technician="T")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("r")  # start: asks for its name; Enter takes the suggested one
        await pilot.pause()
        await pilot.press("enter")
        await pilot.pause()
        await pilot.press("r")  # finish: asks first
        await pilot.pause()
        question = seen(app.screen, ".question")
        assert "2 board(s) NOT read in this round: LP-4, MDB-7" in question
        await pilot.press("n")
        await pilot.pause()
        assert ": 0/2 boards read" in seen(app.screen, "#home-title")  # still open
        await pilot.press("r", "y")
        await pilot.pause()
        assert "no round" in seen(app.screen, "#home-title")


async def test_history_keeps_the_cursor_and_the_void_dialog_names_the_reading(tmp_path):
    from fieldpad.ui.history import BoardHistory

    bid = seeded(tmp_path / "h.db")
    db = open_db(tmp_path / "h.db")
    for minute in ("01", "02"):  # saved in the same hour: their short ids must still differ
        versions.save_reading(db, bid, BAL, technician="Tech " + minute, taken_at=f"2026-12-01T10:{minute}:00.000000Z")
    db.close()
    app = FieldpadApp(tmp_path / "h.db", technician="T")
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        app.push_screen(BoardHistory(bid))
        await pilot.pause()
        scr = app.screen
        from textual.widgets import DataTable

        t = scr.query_one(DataTable)
        ids = [str(t.get_row_at(k)[1]) for k in range(t.row_count)]
        assert len(set(ids)) == 3
        await pilot.press("down")
        assert str(t.get_row_at(t.cursor_row)[-1]) == "Tech 01"
        await pilot.press("enter")  # the versions popup
        await pilot.pause()
        await pilot.press("escape")
        await pilot.pause()
        assert str(t.get_row_at(t.cursor_row)[-1]) == "Tech 01"
        await pilot.press("x")
        await pilot.pause()
        assert f"reading {ids[1]}, version 1" in seen(app.screen, ".question") and "by Tech 01" in seen(
            app.screen, ".question"
        )
        await pilot.press(*"wrong board", "enter")
        await pilot.pause()
        assert str(t.get_row_at(t.cursor_row)[-1]) == "Tech 01"  # the next void does not hit another reading
        assert "VOID" in str(t.get_row_at(t.cursor_row)[3])


async def test_board_form_opens_at_the_top_and_speaks_in_labels_and_takes_inches(tmp_path):
    from fieldpad.ui.forms import BoardForm, FormScroll

    seeded(tmp_path / "f.db")
    app = FieldpadApp(tmp_path / "f.db", technician="T")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("n")
        await pilot.pause()
        await pilot.pause()
        form = app.screen
        assert isinstance(form, BoardForm)
        scroll = form.query_one(FormScroll)
        assert scroll.scroll_y == 0  # title, System and Name in view
        assert scroll not in form.focus_chain
        assert form.focused.id == "name"
        await pilot.press(*"LP-8")
        for _ in range(6):
            await pilot.press("tab")
        await pilot.press(*"18 in", "tab", *"3 ft", "f2")
        await pilot.pause()
        error = seen(form, "#form-error")
        assert "Label: arc-flash boundary" in error and "af_boundary_mm" not in error
        await pilot.press("ctrl+u", *"36 in", "f2")
        await pilot.pause()
        b = sites.find_board(app.db, app.site_id, "LP-8")
        assert b["af_working_distance_mm"] == 457.2 and b["af_boundary_mm"] == 914.4  # 25.4 mm per inch, exact


async def test_board_overrides_the_sites_voltage_standard(tmp_path):
    bid = seeded(tmp_path / "o.db")  # an ANSI site
    db = open_db(tmp_path / "o.db")
    iec = sites.create_board(
        db,
        sites.get_board(db, bid)["site_id"],
        "SKD-4",
        system="wye",
        nominal_v=400,
        voltage_standard="iec",
        colour_set="iec60445",
    )
    saved = versions.save_reading(db, iec, {"va": "253", "vb": "230", "vc": "230", "vb_deg": "-120", "vc_deg": "120"})
    assert versions.current_version(db, saved.reading_id)["standard"] == "iec"
    db.close()
    app = FieldpadApp(tmp_path / "o.db", technician="T")
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.pause()
        app.push_screen(ReadingSheet(iec))
        await pilot.pause()
        await pilot.press(
            *"254", "tab", "tab", "tab", *"230", "tab", *"-120", "tab", "tab", "tab", *"230", "tab", *"120"
        )
        assert "IEC 60038" in seen(app.screen, "#findings")  # 254 V on 230 V: +10.4 %, outside IEC ±10 %


@needs_tmux
def test_real_terminal_typing_replaces_and_the_draft_offer_does_not_swallow_keys(tmp_path):
    """Through a real terminal, keys in one burst: a filled field entered by Tab or Shift+Tab is replaced
    by what is typed; keys typed right after Enter on a board with a draft land in the grid."""
    db = tmp_path / "rt.db"
    bid = seeded(db)
    d = open_db(db)
    drafts.save_draft(d, bid, {"mode": "ln", "values": {"va": "277.9"}, "typed_at": "2026-12-01T10:00:00.000000Z"})
    d.close()
    term = Terminal(db)
    try:
        term.wait("MDB-7")
        term.keys("Enter", "4", "0", "2")  # one burst: Enter opens the sheet, 402 follows at once
        shown = term.wait("402")
        assert "DRAFT kept for this board" in shown, shown
        row_a = next(line for line in shown.splitlines() if "■ A" in line)
        assert "402" in row_a and "277.9" not in row_a, shown
        term.keys("Tab", "1", "0", "BTab", "2", "8", "0", "Tab", "9", "9", "F2")
        # Only phase A typed: the sheet asks before saving a reading with phases left out.
        shown = term.wait("not entered. Save this reading anyway?")
        assert "VB, VC, IB, IC not entered" in shown, shown
        term.keys("y")
        shown = term.wait("SAVED")
        assert "SAVED" in shown, shown
    finally:
        term.close()
    d = open_db(db)
    row = versions.board_history(d, bid, 1)[0]
    assert (row["va"], row["ia"]) == (280.0, 99.0)
    assert drafts.get_draft(d, bid) is None  # saved: the offered draft is done with


@needs_tmux
def test_real_terminal_form_editing_keys_keep_their_order(tmp_path):
    """X1 Tab loc Shift+Tab Backspace ZZ in one burst gives "XZZ" and "loc", not "X1Z"."""
    db = tmp_path / "fo.db"
    seeded(db)
    term = Terminal(db)
    try:
        term.wait("MDB-7")
        term.keys("n")
        term.wait("Esc  Cancel")
        time.sleep(0.5)
        term.keys("X", "1", "Tab", "l", "o", "c", "BTab", "BSpace", "Z", "Z", "F2")
        last_screen = term.wait("Esc  Cancel", present=False)
    finally:
        term.close()
    d = open_db(db)
    b = sites.find_board(d, sites.list_sites(d)[0]["id"], "XZZ")
    assert b is not None and b["location"] == "loc", last_screen


async def test_voltage_triangle_panel_follows_the_sheet(tmp_path):
    async with sheet_open(tmp_path, "tri2.db") as (app, pilot):
        sheet = app.screen
        await pilot.press("f5", "f5", *"481", "down", *"450", "down", *"484", "f6")
        panel = seen(sheet, "#panel")
        assert "outer √3·V1 471.4 V" in panel and "V2/V1 4.56 %" in panel
        assert "VUF V2/V1 4.56 %" in seen(sheet, "#results")  # the same unbalance, two ways
        assert any(ch in panel for ch in "⠁⠂⠄⡀")  # drawn in braille
        await pilot.press("up", *"482")  # live: the panel follows the typing
        assert "V2/V1 4.56 %" not in seen(sheet, "#panel")


async def test_the_day_review_keeps_compare_and_export_on_its_key_line_at_80_columns(tmp_path):
    app = _demo_app(tmp_path, "rv.db")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("v")
        await pilot.pause()
        strip = seen(app.screen, "KeyStrip")
        assert "Compare rounds" in strip and "Export" in strip and "Esc  Back" in strip and len(strip) <= 80


async def test_clearing_the_sheet_asks_first_and_leaves_saved_readings(tmp_path):
    async with sheet_open(tmp_path, "cl.db") as (app, pilot):
        sheet = app.screen
        await pilot.press(*"277", "tab", *"12", "ctrl+l")
        await pilot.pause()
        assert "Clear every value typed" in seen(app.screen, ".question")
        await pilot.press("y")
        await pilot.pause()
        assert "277" not in seen(sheet, "#grid") and "Sheet cleared" in seen(sheet, "#status")
        assert versions.counts(app.db)["reading"] == 1


async def test_a_note_and_the_instrument_go_with_the_reading(tmp_path):
    async with sheet_open(tmp_path, "nt.db") as (app, pilot):
        sheet = app.screen
        await pilot.press("f8")
        await pilot.pause()
        await pilot.press(*"door 3 open", "enter")
        await pilot.pause()
        await pilot.press("f9")
        await pilot.pause()
        await pilot.press(*"meter 7", "enter")
        await pilot.pause()
        assert "Instrument: meter 7" in seen(sheet, "#status")
        await pilot.press(*"277", "f2", "y")  # only VA: "not entered... save anyway?" y
        await pilot.pause()
        saved = [r for r in versions.current_readings(app.db) if r["note"] == "door 3 open"]
        assert len(saved) == 1 and saved[0]["instrument"] == "meter 7" and saved[0]["va"] == 277.0


def test_every_finding_has_words_for_the_tables():
    # The day review and the history show a finding in a few words, never its code (issue 14, item 20):
    # every finding the registry defines, and the label finding the sheet adds, has them.
    from fieldpad.core.registry import REGISTRY
    from fieldpad.ui.results_view import FINDING_WORDS, finding_words

    assert set(REGISTRY) | {"ARC_FLASH_LABEL"} <= set(FINDING_WORDS)
    for code in REGISTRY:
        words = finding_words({"code": code, "severity": "warning", "phase": None})
        assert "_" not in words and len(words) <= 30


async def test_saving_with_a_phase_left_out_asks_and_no_keeps_the_sheet(tmp_path):
    # Found in a field trial: F2 saved a reading with phase C's values never typed (a hurried Tab).
    async with sheet_open(tmp_path, "inc.db") as (app, pilot):
        sheet = app.screen
        before = versions.counts(app.db)["reading"]
        await pilot.press(*"277", "tab", *"100", "tab", *"-30", "tab", *"276", "f2")
        await pilot.pause()
        assert "VC, IB, IC not entered. Save this reading anyway?" in seen(app.screen, ".question")
        await pilot.press("n")
        await pilot.pause()
        assert app.screen is sheet and "Not saved: type the missing values" in seen(sheet, "#status")
        assert versions.counts(app.db)["reading"] == before and "276" in seen(sheet, "#grid")
