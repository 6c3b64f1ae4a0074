"""The supervisor's record in the app: a round named when it starts, a sign-off from the day review."""

from datetime import date

from textual.widgets import DataTable, Static

from fieldpad.demo_site import build_demo
from fieldpad.storage import rounds, signoffs, sites, versions
from fieldpad.storage.db import open_db
from fieldpad.ui.app import FieldpadApp
from fieldpad.ui.review import DayReview


async def test_a_round_starts_with_the_name_typed_or_the_suggested_one(tmp_path):
    path = tmp_path / "demo.db"
    build_demo(path, day=date(2026, 3, 10))
    app = FieldpadApp(path, technician="Sam")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("r")
        await pilot.pause()
        await pilot.press(*"Pump room check", "enter")
        await pilot.pause()
        assert app.round_id and rounds.get_round(app.db, app.round_id)["label"] == "Pump room check"
        assert "Pump room check: 0/12 boards read" in str(app.screen.query_one("#home-title", Static).render())
        await pilot.press("r")  # finish it: 12 boards unread, so it asks first
        await pilot.pause()
        assert "12 board(s) NOT read in this round" in str(app.screen.query_one(".question", Static).render())
        await pilot.press("y")
        await pilot.pause()
        assert app.round_id is None
        await pilot.press("r")
        await pilot.pause()
        await pilot.press("enter")  # Enter alone: the suggested name
        await pilot.pause()
        assert rounds.get_round(app.db, app.round_id)["label"].startswith("Round 4 — ")
        await pilot.press("r")  # finish (unread boards: asks), then start another
        await pilot.pause()
        await pilot.press("y")
        await pilot.pause()
        await pilot.press("r")
        await pilot.pause()
        await pilot.press("escape")  # Esc: no round started
        await pilot.pause()
        assert app.round_id is None and len(rounds.list_rounds(app.db, app.site_id)) == 4


async def test_day_review_signs_off_a_round_and_marks_a_later_correction(tmp_path):
    path = tmp_path / "demo.db"
    build_demo(path, day=date(2026, 3, 10))
    app = FieldpadApp(path, technician="Carla Lind")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("v")
        await pilot.pause()
        scr = app.screen
        assert isinstance(scr, DayReview)
        assert "Not signed off" in str(scr.query_one("#review-signoff", Static).render())
        await pilot.press("s")
        await pilot.pause()
        await pilot.press("1")  # the first round of the day (AM)
        await pilot.pause()
        await pilot.press("enter")  # the app's technician suggested as the name
        await pilot.pause()
        await pilot.press(*"all boards read", "enter")
        await pilot.pause()
        so = signoffs.signoffs_of_site(app.db, app.site_id)
        assert len(so) == 1 and so[0]["signed_by"] == "Carla Lind" and so[0]["note"] == "all boards read"
        assert so[0]["round_id"] and rounds.get_round(app.db, so[0]["round_id"])["label"] == "AM"
        line = str(scr.query_one("#review-signoff", Static).render())
        assert "Signed off: round “AM” by Carla Lind" in line and "changed after sign-off" not in line
        # A correction of an AM reading after the sign-off is marked on its row.
        rec = next(r for r in scr.records if r["round"] == "AM")
        typed = versions.inputs_of(versions.current_version(app.db, rec["reading_id"]))
        versions.correct_reading(app.db, rec["reading_id"], {**typed, "ia": "101"}, reason="re-read", by="Ben")
        scr.reload()
        await pilot.pause()
        assert "* 1 changed after sign-off" in str(scr.query_one("#review-signoff", Static).render())
        table = scr.query_one(DataTable)
        marked = [table.get_row_at(i)[0] for i in range(table.row_count)]
        assert sum(str(m).endswith("*") for m in marked) == 1
        await pilot.press("s", "escape")  # Esc on the choice: nothing signed
        await pilot.pause()
        assert len(signoffs.signoffs_of_site(app.db, app.site_id)) == 1
    db = open_db(path)
    assert sites.list_sites(db)
    db.close()


async def test_sign_off_name_typed_replaces_the_suggested_one(tmp_path):
    # Found in a field trial: the suggested name was the field's value, and typing added to it ("samPriya").
    path = tmp_path / "demo.db"
    build_demo(path, day=date(2026, 3, 10))
    app = FieldpadApp(path, technician="sam")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("v")
        await pilot.pause()
        await pilot.press("s")
        await pilot.pause()
        await pilot.press("1")
        await pilot.pause()
        assert "Enter alone signs as sam" in str(app.screen.query_one(".question", Static).render())
        await pilot.press(*"Priya Shah", "enter")
        await pilot.pause()
        await pilot.press("enter")  # no note
        await pilot.pause()
        so = signoffs.signoffs_of_site(app.db, app.site_id)
        assert [s["signed_by"] for s in so] == ["Priya Shah"]


async def test_a_correction_that_clears_an_alarm_stays_in_view(tmp_path):
    # Found in a field trial: a reversed CT (IB at 30°: power on B negative) corrected to -140° showed an
    # empty "worst finding" in the day review and the history, so a supervisor signing off could not see that
    # an alarm had been there. Invented values.
    from fieldpad.storage import sites
    from fieldpad.storage.db import open_db
    from fieldpad.ui.history import BoardHistory

    db = open_db(tmp_path / "c.db")
    sid = sites.create_site(db, "Wharf 3")
    bid = sites.create_board(db, sid, "LP-1", system="wye", nominal_v=208)
    bad = {
        "va": "120",
        "vb": "120",
        "vc": "120",
        "va_deg": "0",
        "vb_deg": "-120",
        "vc_deg": "120",
        "ia": "50",
        "ib": "50",
        "ic": "50",
        "ia_deg": "-20",
        "ib_deg": "30",
        "ic_deg": "100",
    }
    saved = versions.save_reading(db, bid, bad, technician="sam")
    versions.correct_reading(db, saved.reading_id, {**bad, "ib_deg": "-140"}, reason="typo IB angle", by="sam")
    db.close()
    app = FieldpadApp(tmp_path / "c.db", technician="sam")
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        await pilot.press("v")
        await pilot.pause()
        row = [str(c) for c in app.screen.query_one(DataTable).get_row_at(0)]
        assert any("✎ was ALARM CT reversed" in c for c in row), row
        await pilot.press("escape")
        await pilot.pause()
        app.push_screen(BoardHistory(bid))
        await pilot.pause()
        row = [str(c) for c in app.screen.query_one(DataTable).get_row_at(0)]
        assert any("✎ was ALARM CT reversed" in c for c in row), row
