"""One crew, one record across laptops: identity by id, a merge that only reads the other file and checks
every row it brings in, conflicts kept and flagged, settings merged field by field, joins that travel.

Real database files on disk; the command line as a user runs it (``run_cli``).  The site, boards and labels
are an invented scenario ("Fernwick", "MDB-1")."""

import json
import os
import shutil
import sqlite3
from pathlib import Path

import pytest
from cli_runner import run_cli
from conftest import BAL

from fieldpad.report.export import export_records
from fieldpad.report.html import to_html
from fieldpad.storage import settings_history, sites, versions
from fieldpad.storage.db import StorageError, check, open_db
from fieldpad.storage.merge import merge_file
from fieldpad.storage.merge_checks import MergeRefused

DAY = "2026-12-01"


def laptop(path, energy, ppe, *, va="277", site_id=None, board_id=None):
    """A laptop's first run: its own site Fernwick and board MDB-1 (own ids unless given), one reading."""
    db = open_db(path)
    sid = sites.create_site(db, "Fernwick", site_id=site_id)
    bid = sites.create_board(
        db, sid, "MDB-1", board_id=board_id, af_incident_energy_cal_cm2=energy, af_ppe=ppe, af_label_date="2026-01-10"
    )
    saved = versions.save_reading(db, bid, {**BAL, "va": va}, taken_at=f"{DAY}T10:00:00.000000Z")
    return db, sid, bid, saved


def files_beside(path: Path) -> dict:
    """Size, change time and bytes of the file and whatever SQLite keeps beside it."""
    out = {}
    for p in sorted(path.parent.iterdir()):
        if p.name.startswith(path.name):
            st = p.stat()
            out[p.name] = (st.st_size, st.st_mtime_ns, p.read_bytes() if not p.name.endswith("-shm") else None)
    return out


# ---- identity: the same name under two ids is never mixed -----------------------------------


@pytest.fixture
def fernwick(tmp_path):
    """Two laptops each created Fernwick / MDB-1 (different ids, labels 1.2 cal/cm² PPE 1 and 38 PPE 4),
    merged into the first."""
    a, sa, ba, ra = laptop(tmp_path / "a.db", 1.2, "1", va="270")
    b, sb, bb, rb = laptop(tmp_path / "b.db", 38, "4", va="280")
    b.close()
    rep = merge_file(a, tmp_path / "b.db")
    yield {
        "db": a,
        "path": tmp_path / "a.db",
        "sites": (sa, sb),
        "boards": (ba, bb),
        "readings": (ra, rb),
        "report": rep,
        "tmp": tmp_path,
    }
    a.close()


def test_merge_reports_same_named_sites_with_their_ids(fernwick):
    rep = fernwick["report"]
    assert [sorted(s["id"] for s in g) for g in rep.same_name_sites] == [sorted(fernwick["sites"])]
    assert all("1 board(s), 1 reading(s)" in s["summary"] for s in rep.same_name_sites[0])
    r = run_cli("merge", fernwick["tmp"] / "b.db", "--db", fernwick["path"])  # again, through the command
    assert r.returncode == 0
    assert "site Fernwick exists under 2 ids" in r.stderr and "fieldpad join-sites KEEP_ID OTHER_ID" in r.stderr
    for sid in fernwick["sites"]:
        assert sid in r.stderr


def test_import_by_name_refuses_two_sites_of_that_name_and_imports_once_joined(fernwick):
    csv_text = f"site,board,taken_at,va,vb,vc\nFernwick,MDB-1,{DAY}T11:00:00Z,277,277,277\n"
    before = fernwick["db"].conn.execute("SELECT COUNT(*) FROM reading").fetchone()[0]
    fernwick["db"].close()
    path = fernwick["tmp"] / "in.csv"
    path.write_text(csv_text)
    r = run_cli("import", path, "--db", fernwick["path"])
    assert r.returncode == 2 and "line 2: site: 2 sites are named 'Fernwick'" in r.stderr
    assert all(sid in r.stderr for sid in fernwick["sites"]) and "join-sites" in r.stderr
    assert "nothing was imported" in r.stderr
    db = open_db(fernwick["path"])
    assert db.conn.execute("SELECT COUNT(*) FROM reading").fetchone()[0] == before
    db.close()
    keep, other = fernwick["sites"]
    assert run_cli("join-sites", keep, other, "--db", fernwick["path"]).returncode == 0
    r = run_cli("import", path, "--db", fernwick["path"])
    # The two boards MDB-1 are still two (one per laptop): the board is refused in the same words.
    assert r.returncode == 2 and "board: 2 boards of site 'Fernwick' are named 'MDB-1'" in r.stderr
    ba, bb = fernwick["boards"]
    assert run_cli("join-boards", ba, bb, "--db", fernwick["path"]).returncode == 0
    r = run_cli("import", path, "--db", fernwick["path"])
    assert r.returncode == 0 and "imported 1 reading(s)" in r.stdout, r.stderr
    fernwick["db"] = open_db(fernwick["path"])


def test_export_by_name_refuses_two_sites_and_lists_them(fernwick):
    r = run_cli("export", "--db", fernwick["path"], "--site", "Fernwick", "--format", "csv")
    assert r.returncode == 2 and r.stdout == ""
    assert "2 sites are named 'Fernwick'" in r.stderr and "--site ID" in r.stderr and "join-sites" in r.stderr
    for sid in fernwick["sites"]:
        assert sid in r.stderr
    for sid, va in zip(fernwick["sites"], ("270.0", "280.0")):
        r = run_cli("export", "--db", fernwick["path"], "--site", sid, "--format", "json")
        assert r.returncode == 0, r.stderr
        (rec,) = json.loads(r.stdout)["readings"]
        assert rec["site_id"] == sid and str(rec["inputs"]["va"]) == va


def test_report_keeps_both_boards_and_both_labels(fernwick):
    html = to_html(fernwick["db"], export_records(fernwick["db"], day=DAY), day=DAY)
    assert html.count("<h2>Fernwick (id ") == 2  # two sections, told apart by id
    assert "1.2 cal/cm²" in html and "38 cal/cm²" in html


def test_review_records_of_one_site_are_that_sites_only(fernwick):
    for sid, (rid) in zip(fernwick["sites"], fernwick["readings"]):
        recs = export_records(fernwick["db"], day=DAY, site_id=sid)
        assert [r["reading_id"] for r in recs] == [rid.reading_id]
    with pytest.raises(StorageError, match="2 sites are named"):
        export_records(fernwick["db"], site="Fernwick")


def test_join_sites_then_boards_travels_to_every_laptop(fernwick):
    db, (sa, sb), (ba, bb) = fernwick["db"], fernwick["sites"], fernwick["boards"]
    r = run_cli("join-sites", sa, sb, "--db", fernwick["path"], "--technician", "Supervisor")
    assert r.returncode == 0, r.stderr
    assert "board MDB-1 now exists under 2 ids" in r.stderr
    r = run_cli("join-boards", ba, bb, "--db", fernwick["path"], "--reason", "same board, two first runs")
    assert r.returncode == 0, r.stderr
    assert "af_incident_energy_cal_cm2 is 1.2 here (kept); the joined board had 38" in r.stderr
    assert [s["id"] for s in sites.list_sites(db)] == [sa]
    assert [b["id"] for b in sites.list_boards(db, sa)] == [ba]
    recs = export_records(db, site="Fernwick")
    assert len(recs) == 2 and {r["board_id"] for r in recs} == {ba}
    assert len(versions.board_history(db, ba)) == 2
    html = to_html(db, export_records(db, day=DAY), day=DAY)
    assert "has a different arc-flash label" in html and "38 cal/cm², PPE 4" in html
    # A third laptop that merges the first sees the same joins; the second, merged again, too.
    c, *_ = laptop(fernwick["tmp"] / "c.db", 5, "2")
    merge_file(c, fernwick["path"])
    assert [s["id"] for s in sites.list_sites(c) if s["id"] in (sa, sb)] == [sa]
    assert {r["board_id"] for r in export_records(c, site_id=sa)} == {ba}
    b = open_db(fernwick["tmp"] / "b.db")
    merge_file(b, fernwick["path"])
    assert sites.get_site(b, sb)["joined_into"] == sa and sites.get_board(b, bb)["joined_into"] == ba
    # Both kept the joined board's history: the 38 cal/cm² label is there, for the supervisor to check.
    hist = settings_history.setting_history(b, "board", bb)
    assert any(h["field"] == "af_incident_energy_cal_cm2" and h["value"] == 38 for h in hist)


def test_join_refuses_nonsense(fernwick):
    db, (sa, sb), (ba, bb) = fernwick["db"], fernwick["sites"], fernwick["boards"]
    with pytest.raises(StorageError, match="different sites"):
        settings_history.join(db, "board", ba, bb)
    with pytest.raises(StorageError, match="no site with id"):
        settings_history.join(db, "site", sa, "nope")
    settings_history.join(db, "site", sa, sb)
    with pytest.raises(StorageError, match="already shown"):
        settings_history.join(db, "site", sa, sb)
    r = run_cli("join-sites", sb, sa, "--db", fernwick["path"])
    assert r.returncode == 1 and "already shown" in r.stderr


def test_joins_made_both_ways_on_two_laptops_agree(tmp_path):
    """Laptop A joins X into Y, laptop B joins Y into X: the join recorded first stands, everywhere."""
    x, sx, *_ = laptop(tmp_path / "x.db", 1, "1")
    y, sy, *_ = laptop(tmp_path / "y.db", 2, "2")
    x.close()
    y.close()
    shutil.copy(tmp_path / "x.db", tmp_path / "a.db")
    shutil.copy(tmp_path / "x.db", tmp_path / "b.db")
    a, b = open_db(tmp_path / "a.db"), open_db(tmp_path / "b.db")
    for d in (a, b):
        merge_file(d, tmp_path / "y.db")
    settings_history.join(a, "site", sy, sx)
    settings_history.join(b, "site", sx, sy)
    a.close()
    merge_file(b, tmp_path / "a.db")
    b.close()
    a = open_db(tmp_path / "a.db")
    merge_file(a, tmp_path / "b.db")
    b = open_db(tmp_path / "b.db")
    assert [s["id"] for s in sites.list_sites(a)] == [s["id"] for s in sites.list_sites(b)] == [sy]


# ---- conflicts -------------------------------------------------------------------------------------


def two_laptops_share(tmp_path):
    """A base with one reading, copied to laptops A and B (both hold the same reading and board)."""
    base, sid, bid, saved = laptop(tmp_path / "base.db", 1.2, "1")
    base.close()
    for name in ("a.db", "b.db"):
        shutil.copy(tmp_path / "base.db", tmp_path / name)
    return open_db(tmp_path / "a.db"), open_db(tmp_path / "b.db"), bid, saved.reading_id


def test_the_later_void_wins_over_two_earlier_corrections_and_is_flagged(tmp_path):
    a, b, bid, rid = two_laptops_share(tmp_path)
    versions.correct_reading(a, rid, {**BAL, "va": "275"}, reason="re-read", by="Ana")
    versions.correct_reading(a, rid, {**BAL, "va": "276"}, reason="re-read again", by="Ana")
    void = versions.void_reading(b, rid, reason="wrong board", by="Sam")
    b.close()
    merge_file(a, tmp_path / "b.db")
    cur = versions.current_version(a, rid)
    assert cur["id"] == void.id and cur["void"] == 1  # the latest recorded, not the highest version number
    assert len(versions.history(a, rid)) == 4  # every version kept
    assert versions.conflicts(a) == {rid: [void.id, versions.heads(a, rid)[1]["id"]]}
    hist = versions.history(a, rid)
    assert sum(v["competing"] for v in hist) == 2 and sum(v["is_head"] for v in hist) == 2
    a_cli = run_cli("settle", "--db", tmp_path / "a.db")
    assert rid in a_cli.stdout and void.id in a_cli.stdout


def test_conflict_flagged_in_report_and_review_records_until_settled(tmp_path):
    a, b, bid, rid = two_laptops_share(tmp_path)
    versions.correct_reading(a, rid, {**BAL, "va": "275"}, reason="re-read", by="Ana")
    mine = versions.correct_reading(b, rid, {**BAL, "va": "279"}, reason="other meter", by="Sam")
    b.close()
    merge_file(a, tmp_path / "b.db")
    (rec,) = export_records(a, day=DAY)
    assert rec["conflict"] is True and rec["inputs"]["va"] == 279.0  # B's is recorded later
    html = to_html(a, [rec], day=DAY)
    assert "CONFLICT" in html and html.count("⚠ competing") >= 3  # the reading row and both competing versions
    # An ordinary correction does not settle it: the other laptop's version is still competing.
    versions.correct_reading(a, rid, {**BAL, "va": "278"}, reason="typo", by="Ana")
    assert rid in versions.conflicts(a)
    r = run_cli(
        "settle",
        rid,
        mine.id,
        "--reason",
        "checked on site: Sam's meter is calibrated",
        "--db",
        tmp_path / "a.db",
        "--technician",
        "Lee",
    )
    assert r.returncode == 0, r.stderr
    assert versions.conflicts(a) == {}
    (rec,) = export_records(a, day=DAY)
    assert rec["conflict"] is False and rec["inputs"]["va"] == 279.0 and rec["reason"].startswith("checked")
    assert len(versions.history(a, rid)) == 5
    # The settlement travels: B, merging A, agrees.
    b = open_db(tmp_path / "b.db")
    a.close()
    merge_file(b, tmp_path / "a.db")
    assert versions.conflicts(b) == {} and versions.current_version(b, rid)["reason"].startswith("checked")
    r = run_cli("settle", rid, mine.id, "--reason", "again", "--db", tmp_path / "b.db")
    assert r.returncode == 1 and "nothing to settle" in r.stderr


def test_rename_on_one_laptop_and_ppe_on_another_both_survive(tmp_path):
    a, b, bid, _ = two_laptops_share(tmp_path)
    sites.update_board(a, bid, name="MDB-1 (main)")
    sites.update_board(b, bid, af_ppe="4", af_incident_energy_cal_cm2=38)
    a.close()
    b.close()
    for me, them in (("a.db", "b.db"), ("b.db", "a.db")):
        d = open_db(tmp_path / me)
        merge_file(d, tmp_path / them)
        board = sites.get_board(d, bid)
        assert (board["name"], board["af_ppe"], board["af_incident_energy_cal_cm2"]) == ("MDB-1 (main)", "4", 38)
        d.close()


# ---- the other file: only read, checked first, every row checked ------------------------------------


def test_merge_leaves_a_closed_file_exactly_as_it_was_and_creates_nothing_beside_it(tmp_path):
    main, *_ = laptop(tmp_path / "main.db", 1, "1")
    other, *_ = laptop(tmp_path / "laptop #2.db", 2, "2")
    other.close()
    before = files_beside(tmp_path / "laptop #2.db")
    assert list(before) == ["laptop #2.db"]  # closed: no -wal, no -shm
    merge_file(main, tmp_path / "laptop #2.db")
    assert files_beside(tmp_path / "laptop #2.db") == before  # size, mtime, bytes; no -wal or -shm made
    main.close()
    assert files_beside(tmp_path / "laptop #2.db") == before


def test_merge_of_a_file_open_elsewhere_writes_neither_the_file_nor_its_wal(tmp_path):
    main, *_ = laptop(tmp_path / "main.db", 1, "1")
    other, _, bid, _ = laptop(tmp_path / "100%25.db", 2, "2")
    versions.save_reading(other, bid, BAL)  # the other laptop's app is open: its -wal holds this
    before = {k: v[:3] for k, v in files_beside(tmp_path / "100%25.db").items() if not k.endswith("-shm")}
    assert "100%25.db-wal" in before
    rep = merge_file(main, tmp_path / "100%25.db")
    assert rep.added["reading"] == 2  # the reading in its -wal came too
    after = {k: v[:3] for k, v in files_beside(tmp_path / "100%25.db").items() if not k.endswith("-shm")}
    assert after == before  # not checkpointed: the file and its -wal have the same size, time and bytes
    other.close()


def test_merge_refuses_the_database_itself_through_a_symlink_or_a_hard_link(tmp_path):
    main, *_ = laptop(tmp_path / "main.db", 1, "1")
    os.symlink(tmp_path / "main.db", tmp_path / "link.db")
    os.link(tmp_path / "main.db", tmp_path / "hard.db")
    for name in ("link.db", "hard.db"):
        with pytest.raises(StorageError, match="is the database being merged into .*through a link"):
            merge_file(main, tmp_path / name)
    r = run_cli("merge", tmp_path / "hard.db", "--db", tmp_path / "main.db")
    assert r.returncode == 1 and "the database being merged into" in r.stderr


def damaged_copy(tmp_path, sql, name="bad.db"):
    """A copy of a healthy laptop's file with rows altered behind fieldpad's back."""
    src, _, bid, saved = laptop(tmp_path / "src.db", 2, "2")
    versions.correct_reading(src, saved.reading_id, {**BAL, "va": "279"}, reason="re-read")
    src.close()
    shutil.copy(tmp_path / "src.db", tmp_path / name)
    conn = sqlite3.connect(tmp_path / name)
    conn.execute("PRAGMA ignore_check_constraints = ON")
    conn.execute(sql)
    conn.commit()
    conn.execute("PRAGMA journal_mode=DELETE")
    conn.close()
    return tmp_path / name


@pytest.mark.parametrize(
    "sql, table, fld, reason",
    [
        (
            "UPDATE reading SET note = CAST(X'4d44c3282d31' AS TEXT) WHERE version = 2",
            "reading",
            "note",
            "is not valid UTF-8",
        ),
        ("UPDATE reading SET va = 'abc' WHERE version = 1", "reading", "va", "text in a numeric column"),
        ("UPDATE reading SET vb = 1e300 WHERE version = 2", "reading", "vb", "too large"),
        ("UPDATE reading SET technician = 'Sam' || char(0) WHERE version = 1", "reading", "technician", "NUL"),
        ("UPDATE reading SET version = 0 WHERE version = 2", "reading", "version", "not a version number"),
        ("UPDATE reading SET recorded_at = 'yesterday' WHERE version = 2", "reading", "recorded_at", "not a stored"),
        ("UPDATE reading SET system = 'star' WHERE version = 1", "reading", "system", "unknown system"),
        ("UPDATE reading SET inputs_json = '[1' WHERE version = 1", "reading", "inputs_json", "not a JSON object"),
        (
            "UPDATE setting_version SET value_json = '\"x\"' WHERE field = 'nominal_v'",
            "setting_version",
            "value of nominal_v",
            "not a number",
        ),
        (
            "UPDATE setting_version SET value_json = '\"7\"' WHERE field = 'af_label_date'",
            "setting_version",
            "value of af_label_date",
            "not a date",
        ),
        (
            "UPDATE setting_version SET field = 'colour' WHERE field = 'af_ppe'",
            "setting_version",
            "field",
            "not a board setting",
        ),
    ],
)
def test_merge_refuses_a_bad_row_naming_file_table_row_field_and_reason(tmp_path, sql, table, fld, reason):
    main, *_ = laptop(tmp_path / "main.db", 1, "1")
    before = {t: main[t].count for t in ("site", "board", "reading", "setting_version")}
    bad = damaged_copy(tmp_path, sql)
    with pytest.raises(MergeRefused) as e:
        merge_file(main, bad)
    text = "\n".join(e.value.problems)
    assert f"{bad}: table {table}, row " in text and f": {fld}: " in text and reason in text, text
    assert text.endswith("nothing was merged")
    assert {t: main[t].count for t in before} == before and check(main) == []
    r = run_cli("merge", bad, "--db", tmp_path / "main.db")
    assert r.returncode == 2 and "Traceback" not in r.stderr and f"table {table}" in r.stderr


def test_merge_refuses_a_row_changed_under_the_same_id(tmp_path):
    main, *_ = laptop(tmp_path / "main.db", 1, "1")
    bad = damaged_copy(tmp_path, "UPDATE reading SET va = 271 WHERE version = 1")
    shutil.copy(tmp_path / "src.db", tmp_path / "good.db")
    merge_file(main, tmp_path / "good.db")
    with pytest.raises(MergeRefused, match="differs from the row of the same id"):
        merge_file(main, bad)


def test_merge_refuses_a_file_that_fails_its_integrity_check(tmp_path):
    main, *_ = laptop(tmp_path / "main.db", 1, "1")
    bad = damaged_copy(tmp_path, "SELECT 1")
    conn = sqlite3.connect(bad)
    conn.execute("PRAGMA writable_schema = ON")
    conn.execute(
        "UPDATE sqlite_master SET sql = replace(sql, 'reading(board_id, taken_at)', "
        "'reading(taken_at, board_id)') WHERE name = 'reading_board'"
    )
    conn.commit()
    conn.close()
    with pytest.raises(MergeRefused, match="fails its integrity check"):
        merge_file(main, bad)


def test_merge_of_a_file_from_before_the_settings_history(tmp_path):
    """An older laptop's file (schema 0002) is read through an upgraded copy; the file itself is untouched."""
    import sqlite_utils

    from fieldpad.storage.db import _migrations, connect

    old = sqlite_utils.Database(connect(tmp_path / "old.db"))
    _migrations().apply(old, stop_before="0004_crew_identity")
    now = "2026-01-01T00:00:00.000000Z"
    old["site"].insert({"id": "s-old", "name": "Depot", "created_at": now, "updated_at": now})
    old["board"].insert(
        {
            "id": "b-old",
            "site_id": "s-old",
            "name": "DB-2",
            "system": "wye",
            "af_ppe": "2",
            "created_at": now,
            "updated_at": now,
        }
    )
    old["reading"].insert(
        {
            "id": "r1",
            "reading_id": "r1",
            "version": 1,
            "board_id": "b-old",
            "taken_at": now,
            "recorded_at": now,
            "inputs_json": "{}",
            "system": "wye",
            "standard": "ansi",
            "va": 277.0,
        }
    )
    old.conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    old.close()
    before = files_beside(tmp_path / "old.db")
    main, *_ = laptop(tmp_path / "main.db", 1, "1")
    merge_file(main, tmp_path / "old.db")
    merge_file(main, tmp_path / "old.db")  # twice: the same content-made history rows, not doubled
    assert files_beside(tmp_path / "old.db") == before
    assert sites.get_board(main, "b-old")["af_ppe"] == "2"
    assert main["setting_version"].count == len(set(r["id"] for r in main["setting_version"].rows))
    assert versions.current_version(main, "r1")["va"] == 277.0


# ---- the app: the day review and a board's history flag the conflict ------------------------------


async def test_app_day_review_and_history_flag_competing_versions(tmp_path):
    from textual.widgets import DataTable

    from fieldpad.ui import history, review
    from fieldpad.ui.app import FieldpadApp

    a, b, bid, rid = two_laptops_share(tmp_path)
    versions.correct_reading(a, rid, {**BAL, "va": "275"}, reason="re-read", by="Ana")
    versions.correct_reading(b, rid, {**BAL, "va": "279"}, reason="other meter", by="Sam")
    b.close()
    merge_file(a, tmp_path / "b.db")
    a.close()
    app = FieldpadApp(tmp_path / "a.db", technician="Sup")
    async with app.run_test(size=(110, 30)) as pilot:
        await pilot.pause()
        await pilot.press("v")
        await pilot.pause()
        assert isinstance(app.screen, review.DayReview)
        (row,) = [app.screen.query_one(DataTable).get_row_at(0)]
        assert any("CONFLICT" in str(cell) for cell in row)
        await pilot.press("escape")
        await pilot.pause()
        await pilot.press("h")
        await pilot.pause()
        assert isinstance(app.screen, history.BoardHistory)
        assert any("CONFLICT" in str(cell) for cell in app.screen.query_one(DataTable).get_row_at(0))
        shown = versions.heads(app.db, rid)
        await pilot.press("s")
        await pilot.pause()
        await pilot.press("2", "enter")  # the second listed (not the one shown) stands
        await pilot.pause()
        await pilot.press(*"checked both meters", "enter")
        await pilot.pause()
        assert isinstance(app.screen, history.BoardHistory)
        assert versions.conflicts(app.db) == {}
        cur = versions.current_version(app.db, rid)
        assert cur["va"] == shown[1]["va"] and cur["reason"] == "checked both meters" and cur["recorded_by"] == "Sup"
        assert "CONFLICT" not in str(app.screen.query_one(DataTable).get_row_at(0)[-1])


async def test_app_day_review_of_each_same_named_site_shows_its_own_readings(fernwick):
    from textual.widgets import DataTable

    from fieldpad.ui import review
    from fieldpad.ui.app import FieldpadApp

    fernwick["db"].close()
    for sid, reading in zip(fernwick["sites"], fernwick["readings"]):
        app = FieldpadApp(fernwick["path"], technician="Sup")
        async with app.run_test(size=(110, 30)) as pilot:
            await pilot.pause()
            app.site_id = sid
            app.push_screen(review.DayReview())
            await pilot.pause()
            table = app.screen.query_one(DataTable)
            assert table.row_count == 1
            assert [r["reading_id"] for r in app.screen.records] == [reading.reading_id]


def test_settings_from_before_the_history_merge_field_by_field_after_the_upgrade(tmp_path):
    """Two laptops upgraded from schema 0002 with the same board: a rename on one and a PPE change on the
    other both survive (the settings stored before get history rows made from their content)."""
    import sqlite_utils

    from fieldpad.storage.db import _migrations, connect

    old = sqlite_utils.Database(connect(tmp_path / "a.db"))
    _migrations().apply(old, stop_before="0004_crew_identity")
    now = "2026-01-01T00:00:00.000000Z"
    old["site"].insert({"id": "s-old", "name": "Depot", "created_at": now, "updated_at": now})
    old["board"].insert(
        {
            "id": "b-old",
            "site_id": "s-old",
            "name": "DB-2",
            "system": "wye",
            "af_ppe": "2",
            "created_at": now,
            "updated_at": now,
        }
    )
    old.conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    old.close()
    shutil.copy(tmp_path / "a.db", tmp_path / "b.db")
    a, b = open_db(tmp_path / "a.db"), open_db(tmp_path / "b.db")  # both upgraded
    sites.update_board(a, "b-old", name="DB-2 east")
    sites.update_board(b, "b-old", af_ppe="3")
    b.close()
    merge_file(a, tmp_path / "b.db")
    a.close()
    b = open_db(tmp_path / "b.db")
    merge_file(b, tmp_path / "a.db")
    a = open_db(tmp_path / "a.db")
    for d in (a, b):
        board = sites.get_board(d, "b-old")
        assert (board["name"], board["af_ppe"]) == ("DB-2 east", "3")
    assert sorted(r["id"] for r in a["setting_version"].rows) == sorted(r["id"] for r in b["setting_version"].rows)


def test_settings_that_differed_before_the_history_agree_in_either_order(tmp_path):
    """The same board id with different settings on two laptops from before the history (schema 0002),
    never changed since: merged either way, both laptops show the same value and keep both in history."""
    import sqlite_utils

    from fieldpad.storage.db import _migrations, connect

    for name, ppe in (("x.db", "1"), ("y.db", "4")):
        old = sqlite_utils.Database(connect(tmp_path / name))
        _migrations().apply(old, stop_before="0004_crew_identity")
        now = "2026-01-01T00:00:00.000000Z"
        old["site"].insert({"id": "s-old", "name": "Depot", "created_at": now, "updated_at": now})
        old["board"].insert(
            {
                "id": "b-old",
                "site_id": "s-old",
                "name": "DB-2",
                "system": "wye",
                "af_ppe": ppe,
                "created_at": now,
                "updated_at": now,
            }
        )
        old.conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")
        old.close()
    for name in ("x.db", "y.db"):
        shutil.copy(tmp_path / name, tmp_path / f"pristine-{name}")
    x = open_db(tmp_path / "x.db")
    merge_file(x, tmp_path / "pristine-y.db")
    y = open_db(tmp_path / "y.db")
    merge_file(y, tmp_path / "pristine-x.db")
    assert sites.get_board(x, "b-old")["af_ppe"] == sites.get_board(y, "b-old")["af_ppe"]
    assert {h["value"] for h in settings_history.setting_history(x, "board", "b-old") if h["field"] == "af_ppe"} == {
        "1",
        "4",
    }
    assert sorted(r["id"] for r in x["setting_version"].rows) == sorted(r["id"] for r in y["setting_version"].rows)


def test_a_healthy_file_is_never_refused_for_texts_its_writer_keeps_as_given(tmp_path):
    """A round started with a technician name as the login gave it (white space and all) still merges."""
    from fieldpad.storage import rounds

    main, *_ = laptop(tmp_path / "main.db", 1, "1")
    other, sid, bid, _ = laptop(tmp_path / "other.db", 2, "2")
    rnd = rounds.start_round(other, sid, " Sam ", label="AM")
    versions.save_reading(other, bid, BAL, round_id=rnd)
    sites.update_board(other, bid, af_ppe="3", by=" Sam ")
    other.close()
    rep = merge_file(main, tmp_path / "other.db")
    assert rep.added["round"] == 1 and rep.added["reading"] == 2


def test_a_round_finished_on_two_laptops_and_open_on_a_third_comes_out_the_same_in_any_order(tmp_path):
    import itertools

    from fieldpad.storage import rounds

    base, sid, *_ = laptop(tmp_path / "base.db", 1, "1")
    rnd = rounds.start_round(base, sid, "Sam", label="AM")
    base.close()
    for name in "ABC":
        shutil.copy(tmp_path / "base.db", tmp_path / f"{name}.db")
    for name, note in (("B", "gate locked"), ("C", "all read")):  # A leaves it open
        d = open_db(tmp_path / f"{name}.db")
        rounds.finish_round(d, rnd, note=note)
        d.close()
    seen = set()
    for order in itertools.permutations("ABC"):
        out = tmp_path / f"m-{''.join(order)}.db"
        shutil.copy(tmp_path / f"{order[0]}.db", out)
        d = open_db(out)
        for name in order[1:]:
            merge_file(d, tmp_path / f"{name}.db")
        seen.add(tuple(d["round"].get(rnd).items()))
        d.close()
    (row,) = seen
    assert dict(row)["finished_at"] is not None and dict(row)["note"] == "gate locked"


def test_a_file_copied_with_its_wal_but_no_shm_is_read_whole_and_nothing_is_made_beside_it(tmp_path):
    """Copied off a laptop whose fieldpad was still open: the file and its -wal, no -shm."""
    import subprocess
    import sys

    other, _, bid, _ = laptop(tmp_path / "live.db", 2, "2")
    other.close()
    code = (
        "import os, sys\nfrom fieldpad.storage.db import open_db\nfrom fieldpad.storage import versions\n"
        f"db = open_db(sys.argv[1])\nversions.save_reading(db, {bid!r}, {BAL!r})\nos._exit(0)\n"
    )
    subprocess.run([sys.executable, "-c", code, str(tmp_path / "live.db")], check=True)  # killed, -wal left
    (tmp_path / "stick").mkdir()
    for side in ("", "-wal"):
        shutil.copyfile(f"{tmp_path / 'live.db'}{side}", f"{tmp_path / 'stick' / 'laptop 2.db'}{side}")
    before = files_beside(tmp_path / "stick" / "laptop 2.db")
    assert sorted(before) == ["laptop 2.db", "laptop 2.db-wal"]
    main, *_ = laptop(tmp_path / "main.db", 1, "1")
    rep = merge_file(main, tmp_path / "stick" / "laptop 2.db")
    assert rep.added["reading"] == 2  # the one in the -wal too
    assert files_beside(tmp_path / "stick" / "laptop 2.db") == before  # no -shm made, nothing written


def test_merge_takes_rows_stored_in_any_order(tmp_path):
    # A file whose correction is stored before the version it corrects (a server returns rows in no
    # particular order): merged whole, nothing refused. Found by the crew robustness run.
    a, _sid, _bid, saved = laptop(tmp_path / "a.db", 1.2, "1")
    versions.correct_reading(a, saved.reading_id, {**BAL, "ia": "101"}, reason="re-read")
    a.close()
    src = sqlite3.connect(tmp_path / "a.db")
    cols = [r[1] for r in src.execute("PRAGMA table_info(reading)")]
    rows = src.execute("SELECT * FROM reading ORDER BY rowid DESC").fetchall()
    src.close()
    shutil.copy(tmp_path / "a.db", tmp_path / "rev.db")
    rev = sqlite3.connect(tmp_path / "rev.db")
    rev.execute("PRAGMA foreign_keys=OFF")
    rev.execute("DELETE FROM reading")
    rev.executemany(f"INSERT INTO reading ({', '.join(cols)}) VALUES ({', '.join('?' * len(cols))})", rows)
    rev.commit()
    rev.close()
    c = open_db(tmp_path / "c.db")
    rep = merge_file(c, tmp_path / "rev.db")
    assert rep.added["reading"] == 2 and check(c) == []
    assert versions.current_version(c, saved.reading_id)["ia"] == 101.0
    c.close()
