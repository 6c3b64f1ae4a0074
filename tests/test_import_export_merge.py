"""fieldpad import, export and merge: all-or-nothing import, export round trip, merge properties."""

import csv
import io
import json

import pytest
from cli_runner import run_cli
from conftest import BAL
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fieldpad.report.export import export_records, to_csv, to_json
from fieldpad.storage import rounds, sites, versions
from fieldpad.storage.db import open_db
from fieldpad.storage.importer import import_bytes
from fieldpad.storage.merge import merge_file

GOOD = (
    "site,board,taken_at,technician,round,system,vab,vbc,vca,note\n"
    "Plant 7,MCC-2,2026-12-01T09:00:00Z,Sam,AM,delta,460,467,450,\n"
    "Plant 7,MCC-2,2026-12-01T13:00:00Z,Sam,PM,delta,480,479,481,fan noisy\n"
    "Plant 7,LP-1,2026-12-01T09:10:00Z,Ana,AM,wye,,,,\n"
)


class TestImport:
    def test_creates_sites_boards_rounds(self, db):
        rep = import_bytes(db, GOOD.encode())
        assert rep.problems == [] and rep.readings == 3
        assert rep.sites_created == ["Plant 7"]
        assert sorted(rep.boards_created) == ["Plant 7 / LP-1", "Plant 7 / MCC-2"]
        site = sites.find_site(db, "Plant 7")
        assert sorted(r["label"] for r in rounds.list_rounds(db, site["id"])) == ["AM", "PM"]

    def test_all_or_nothing_and_every_bad_record_named(self, db):
        bad = GOOD + (
            "Plant 7,MCC-2,not a time,Sam,AM,delta,460,467,450,\n"
            ",MCC-2,2026-12-01T09:00:00Z,Sam,AM,delta,abc,467,450,\n"
            "Plant 7,MCC-2,2026-12-01T09:00:00Z,Sam,AM,star,460,467,4500,\n"
        )
        rep = import_bytes(db, bad.encode())
        assert db["reading"].count == 0 and db["site"].count == 0
        text = "\n".join(rep.problems)
        assert "line 5: taken_at:" in text
        assert "line 6: site: is required" in text and "line 6: vab:" in text
        assert "line 7: system:" in text

    def test_existing_board_system_must_agree(self, db):
        import_bytes(db, GOOD.encode())
        rep = import_bytes(db, b"site,board,taken_at,system,va,vb,vc\nPlant 7,MCC-2,2026-12-02T09:00:00Z,wye,1,1,1\n")
        assert rep.problems and "MCC-2" in rep.problems[0]

    def test_cli_exit_status_and_messages(self, tmp_path):
        f = tmp_path / "bad.csv"
        f.write_text("site,board,taken_at,va\nS,B,2026-12-01T09:00:00Z,NaN\n")
        p = run_cli("import", str(f), "--db", str(tmp_path / "x.db"))
        assert p.returncode == 2
        assert "line 2: va: 'NaN' is not a finite number" in p.stderr
        assert "nothing was imported" in p.stderr and "Traceback" not in p.stderr


class TestExport:
    def test_current_version_with_results(self, db, board):
        s = versions.save_reading(db, board, BAL, taken_at="2026-12-01T10:00:00.000000Z")
        versions.correct_reading(db, s.reading_id, {**BAL, "ib_deg": "30"}, reason="CT check")
        (rec,) = export_records(db)
        assert rec["version"] == 2 and rec["reason"] == "CT check"
        assert rec["results"]["rotation"] == "ABC"
        assert "CT_REVERSED" in {f["code"] for f in rec["findings"]}

    def test_json_has_format_version(self, db, board):
        versions.save_reading(db, board, BAL)
        doc = json.loads(to_json(export_records(db)))
        assert doc["format_version"] == 1 and len(doc["readings"]) == 1

    def test_csv_neutralises_formulas_numbers_stay_numbers(self, db, board):
        versions.save_reading(db, board, BAL, technician='=HYPERLINK("x")', note="+1 call me")
        text = to_csv(export_records(db))
        row = next(csv.DictReader(io.StringIO(text.lstrip("\ufeff"))))
        assert row["technician"].startswith("'=") and row["note"] == "'+1 call me"
        assert row["va"] == "277.0" and row["vb_deg"] == "-120.0"  # numbers are not quoted away

    def test_day_and_site_filters(self, db, board):
        versions.save_reading(db, board, BAL, taken_at="2026-12-01T12:00:00.000000Z")
        versions.save_reading(db, board, BAL, taken_at="2026-11-20T12:00:00.000000Z")
        assert len(export_records(db, day="2026-12-01")) == 1
        assert export_records(db, site="Nowhere") == []

    def test_csv_round_trip_through_import(self, tmp_path):
        a = open_db(tmp_path / "a.db")
        import_bytes(a, GOOD.encode())
        sid = sites.find_site(a, "Plant 7")["id"]
        b = sites.find_board(a, sid, "LP-1")["id"]
        versions.save_reading(a, b, BAL, note="=SUM(A1)", technician="Ana", taken_at="2026-12-01T11:00:00.000000Z")
        text = to_csv(export_records(a))
        fresh = open_db(tmp_path / "b.db")
        rep = import_bytes(fresh, text.encode())
        assert rep.problems == []

        def key(recs):
            return sorted(
                (
                    r["site"],
                    r["board"],
                    r["taken_at"],
                    r["technician"],
                    r["note"],
                    json.dumps(r["inputs"], sort_keys=True),
                )
                for r in recs
            )

        assert key(export_records(fresh)) == key(export_records(a))

    def test_cli_output_file_is_private(self, tmp_path):
        dbp = tmp_path / "c.db"
        (tmp_path / "in.csv").write_text(GOOD)
        assert run_cli("import", str(tmp_path / "in.csv"), "--db", str(dbp)).returncode == 0
        p = run_cli("export", "--db", str(dbp), "--format", "json", "-o", str(tmp_path / "out.json"))
        assert p.returncode == 0, p.stderr
        assert (tmp_path / "out.json").stat().st_mode & 0o777 == 0o600
        assert len(json.loads((tmp_path / "out.json").read_text())["readings"]) == 3


def dump(db):
    out = {}
    for t in ("site", "board", "round", "reading"):
        out[t] = sorted(json.dumps(r, sort_keys=True) for r in db[t].rows)
    return out


def make_db(path, ops, shared_site=None):
    db = open_db(path)
    sid = sites.create_site(db, "Shared", site_id=shared_site) if shared_site else sites.create_site(db, "Own")
    boards = [sites.create_board(db, sid, f"B{k}") for k in range(2)]
    readings = []
    for op, k in ops:
        if op == "save" or not readings:
            readings.append(versions.save_reading(db, boards[k % 2], {**BAL, "va": str(250 + k)}).reading_id)
        elif op == "correct":
            versions.correct_reading(db, readings[k % len(readings)], {**BAL, "vb": str(260 + k)}, reason="fix")
        else:
            versions.void_reading(db, readings[k % len(readings)], reason="void")
    return db


ops = st.lists(st.tuples(st.sampled_from(["save", "correct", "void"]), st.integers(0, 9)), max_size=6)


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(ops, ops, ops)
def test_merge_idempotent_order_independent_no_duplicates(tmp_path_factory, ops_a, ops_b, ops_base):
    d = tmp_path_factory.mktemp("merge")
    shared = "01900000-0000-7000-8000-000000000001"
    a = make_db(d / "a.db", ops_a, shared_site=shared)
    b = make_db(d / "b.db", ops_b)
    a.close()
    b.close()
    base = make_db(d / "x.db", ops_base)
    expected = base["reading"].count + sum(open_db(d / f)["reading"].count for f in ("a.db", "b.db"))
    base.close()
    import shutil

    shutil.copy(d / "x.db", d / "y.db")
    x, y = open_db(d / "x.db"), open_db(d / "y.db")
    merge_file(x, d / "a.db")
    merge_file(x, d / "b.db")
    merge_file(y, d / "b.db")
    merge_file(y, d / "a.db")
    assert dump(x) == dump(y)  # A then B = B then A
    before = dump(x)
    merge_file(x, d / "a.db")
    merge_file(x, d / "b.db")
    assert dump(x) == before  # merging twice changes nothing
    assert x["reading"].count == expected  # every version of every database, once


def test_merge_reports_same_named_board(tmp_path):
    a = open_db(tmp_path / "a.db")
    b = open_db(tmp_path / "b.db")
    sa = sites.create_site(a, "Depot", site_id="01900000-0000-7000-8000-00000000000a")
    sites.create_site(b, "Depot", site_id="01900000-0000-7000-8000-00000000000a")
    sites.create_board(a, sa, "MDB")
    sites.create_board(b, sa, "MDB")
    b.close()
    rep = merge_file(a, tmp_path / "b.db")
    assert [[(b["site_name"], b["name"]) for b in g] for g in rep.same_name_boards] == [[("Depot", "MDB")] * 2]
    assert a["board"].count == 2  # kept, reported, not silently joined


def test_merge_refuses_non_database(tmp_path, db):
    (tmp_path / "junk.db").write_text("junk")
    from fieldpad.storage.db import StorageError

    with pytest.raises(StorageError, match="not a fieldpad database"):
        merge_file(db, tmp_path / "junk.db")


class TestStreamingExport:
    """The streamed exports (report/export.py write_csv, write_json: a block at a time, from columns) give
    the bytes of the whole-list ones (to_csv, to_json of export_records)."""

    def _db(self, tmp_path):
        a = open_db(tmp_path / "s.db")
        import_bytes(a, GOOD.encode())
        sid = sites.find_site(a, "Plant 7")["id"]
        sites.update_site(a, sid, phase_labels="L123", thresholds={"vuf_pct": 1.0})
        b = sites.find_board(a, sid, "LP-1")["id"]
        other = sites.create_board(a, sites.create_site(a, 'Annex, "old"'), "=DB 2", system="split-phase")
        s = versions.save_reading(
            a, b, BAL, note='=SUM(A1), "quoted"\nsecond line', technician="Ana", taken_at="2026-12-01T11:00:00.000000Z"
        )
        versions.correct_reading(a, s.reading_id, {**BAL, "ib_deg": "30", "va": "277.123456789"}, reason="CT")
        versions.save_reading(
            a,
            other,
            {"va": "120", "vb": "121", "va_deg": "0", "vb_deg": "180", "ia": "10", "ib": "0", "ia_deg": "-10"},
            taken_at="2026-03-29T01:30:00.000000Z",
        )
        return a

    def test_csv_same_bytes(self, tmp_path):
        from fieldpad.report.export import write_csv

        a = self._db(tmp_path)
        out = io.BytesIO()
        assert write_csv(a, out) == 5
        assert out.getvalue() == to_csv(export_records(a)).encode("utf-8")
        for day, site in (("2026-12-01", None), (None, "Plant 7"), ("2020-01-01", None)):
            out = io.BytesIO()
            write_csv(a, out, day=day, site=site)
            assert out.getvalue() == to_csv(export_records(a, day=day, site=site)).encode(), (day, site)

    def test_json_same_document(self, tmp_path):
        from fieldpad.report.export import write_json

        a = self._db(tmp_path)
        out = io.BytesIO()
        write_json(a, out)
        got = out.getvalue().decode()
        want = to_json(export_records(a))
        strip = lambda t: "\n".join(x for x in t.splitlines() if '"generated_at"' not in x)  # noqa: E731
        assert strip(got) == strip(want)
        out = io.BytesIO()
        write_json(a, out, day="2020-01-01")
        assert json.loads(out.getvalue())["readings"] == []

    def test_csv_keeps_its_columns_and_adds_local_time_and_version_id(self, tmp_path):
        from fieldpad.report.export import CSV_FIELDS
        from fieldpad.storage.ids import local_text

        a = self._db(tmp_path)
        rows = list(csv.DictReader(io.StringIO(to_csv(export_records(a)).lstrip("\ufeff"))))
        assert CSV_FIELDS[-2:] == ("version_id", "taken_at_local")
        assert CSV_FIELDS.index("findings") == len(CSV_FIELDS) - 3  # the contract's columns keep their places
        for r in rows:
            assert r["taken_at_local"] == local_text(r["taken_at"], "%Y-%m-%d %H:%M:%S %z")
            assert r["version_id"] and r["reading_id"]


@pytest.fixture(params=["pyarrow", "csv module"])
def both_readers(request, monkeypatch):
    import fieldpad.formats.columns as columns

    monkeypatch.setattr(columns, "SMALL_BYTES", 0 if request.param == "pyarrow" else 1 << 40)


@pytest.mark.usefixtures("both_readers")
class TestIdempotentImport:
    def test_export_then_import_into_the_same_database_adds_nothing(self, tmp_path):
        a = open_db(tmp_path / "a.db")
        import_bytes(a, GOOD.encode())
        before = dump(a)
        for text in (to_csv(export_records(a)), to_json(export_records(a))):
            rep = import_bytes(a, text.encode())
            assert rep.problems == [] and rep.readings == 0 and rep.already == 3
            assert dump(a) == before

    def test_same_csv_twice_adds_nothing_the_second_time_and_says_so(self, tmp_path):
        f = tmp_path / "in.csv"
        f.write_text(GOOD)
        dbp = tmp_path / "x.db"
        p = run_cli("import", str(f), "--db", str(dbp))
        assert p.returncode == 0 and "imported 3 reading(s)" in p.stdout
        p = run_cli("import", str(f), "--db", str(dbp))
        assert p.returncode == 0, p.stderr
        assert "imported 0 reading(s)" in p.stdout and "3 repeating a stored reading" in p.stdout
        assert "line 2: already stored: board 'MCC-2' at 2026-12-01T09:00:00.000000Z" in p.stderr
        assert open_db(dbp)["reading"].count == 3

    def test_a_repeat_inside_one_file_is_skipped_and_told(self, db):
        lines = GOOD.splitlines()
        rep = import_bytes(db, ("\n".join(lines + [lines[1]]) + "\n").encode())
        assert rep.readings == 3 and rep.repeat_count == 1 and rep.repeats[0].startswith("line 5: already stored")

    def test_export_into_a_fresh_database_keeps_the_ids(self, tmp_path):
        a = open_db(tmp_path / "a.db")
        import_bytes(a, GOOD.encode())
        sid = sites.find_site(a, "Plant 7")["id"]
        bid = sites.find_board(a, sid, "LP-1")["id"]
        s = versions.save_reading(a, bid, BAL, taken_at="2026-12-01T11:00:00.000000Z")
        versions.correct_reading(a, s.reading_id, {**BAL, "vb": "270"}, reason="re-read")
        text = to_csv(export_records(a))
        b = open_db(tmp_path / "b.db")
        assert import_bytes(b, text.encode()).readings == 4

        def ids(d):
            return sorted(
                (r["reading_id"], r["id"], r["version"])
                for r in d.query("SELECT reading_id, id, version FROM reading_current")
            )

        assert ids(b) == ids(a)
        rep = import_bytes(b, text.encode())
        assert rep.readings == 0 and rep.already == 4

    def test_a_bad_id_is_named(self, db):
        rep = import_bytes(db, b"site,board,taken_at,reading_id,va\nS,B,2026-12-01T09:00:00Z,nope,277\n")
        assert rep.problems == ["line 2: reading_id: 'nope' is not an id (leave it empty for a new reading)"]


def test_import_reads_its_file_without_the_write_lock(tmp_path):
    # While import reads and checks its file, another writer (here a second connection that will not wait)
    # can still write: the lock is taken only to store the rows.
    import sqlite3

    path = tmp_path / "lock.db"
    db = open_db(path)
    other = sqlite3.connect(path, timeout=0, isolation_level=None)
    writes = []

    class Reading(io.BytesIO):
        def read(self, *a):
            other.execute("BEGIN IMMEDIATE")  # fails with "database is locked" if import held the lock
            other.execute("COMMIT")
            writes.append(1)
            return super().read(*a)

    body = "".join(
        f"Plant 7,MCC-2,2026-12-01T09:{k // 60:02d}:{k % 60:02d}Z,Sam,AM,delta,460,467,450,\n" for k in range(3000)
    )
    from fieldpad.storage.importer import import_stream

    rep = import_stream(db, Reading((GOOD.splitlines()[0] + "\n" + body).encode()))
    assert rep.problems == [] and rep.readings == 3000 and len(writes) >= 2
    other.close()
