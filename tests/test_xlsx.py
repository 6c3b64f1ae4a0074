"""The supervisor's workbook: read back with openpyxl, converted headless by LibreOffice where present."""

import datetime as dt
import os
import shutil
import subprocess
import sys

import pytest
from conftest import BAL
from test_report import DAY, SITE, supervisor_day

from fieldpad.report.export import export_records, to_csv
from fieldpad.report.xlsx import write_xlsx
from fieldpad.storage import sites, versions

openpyxl = pytest.importorskip("openpyxl")
HOSTILE = ["=cmd|' /C calc'!A0", "+1+1", "-2+3", "@SUM(1)", '=HYPERLINK("http://x")']


@pytest.fixture
def book(db, tmp_path, monkeypatch):
    import time

    monkeypatch.setenv("TZ", "America/Chicago")
    time.tzset()
    supervisor_day(db)
    sid = sites.find_site(db, SITE)["id"]
    b = sites.create_board(db, sid, HOSTILE[0], nominal_v=480)
    versions.save_reading(
        db,
        b,
        BAL,
        technician=HOSTILE[3],
        note=HOSTILE[1],
        instrument=HOSTILE[2],
        taken_at="2026-12-01T21:00:00.000000Z",
    )
    versions.correct_reading(
        db, versions.board_history(db, b)[0]["reading_id"], {**BAL, "vc": "262"}, reason=HOSTILE[4], by=HOSTILE[3]
    )
    path = tmp_path / "day.xlsx"
    records = export_records(db, day=DAY, site=SITE)
    write_xlsx(db, records, path, day=DAY, site=SITE)
    yield path, records
    monkeypatch.undo()
    time.tzset()


def test_readings_sheet_has_units_numbers_dates_words_frozen_header_and_filters(book):
    path, records = book
    wb = openpyxl.load_workbook(path)
    assert wb.sheetnames == ["Readings", "Findings", "Corrections", "Sign-offs", "About"]
    ws = wb["Readings"]
    head = [c.value for c in ws[1]]
    for name in (
        "VA measured (V)",
        "IA measured (A)",
        "IA angle measured (°)",
        "IN measured (A)",
        "IN computed, phasor sum (A)",
        "VUF computed (%)",
        "P computed (kW)",
        "PF computed",
        "Date (local)",
        "Time (local)",
        "UTC offset",
        "Round",
        "Findings",
    ):
        assert name in head, name
    assert ws.freeze_panes == "A2"
    assert ws.auto_filter.ref == f"A1:{openpyxl.utils.get_column_letter(len(head))}{len(records) + 1}"
    rows = [dict(zip(head, (c for c in r))) for r in ws.iter_rows(min_row=2)]
    assert len(rows) == len(records)
    first = next(r for r in rows if r["Board"].value == "DB-1")  # its first reading: 14:10Z = 08:10 in Chicago
    rec = next(r for r in records if r["board"] == "DB-1")
    assert first["Date (local)"].is_date and first["Date (local)"].value.date() == dt.date(2026, 12, 1)
    assert first["Time (local)"].is_date and first["Time (local)"].value == dt.time(8, 10)
    assert first["UTC offset"].value == "-06:00" and first["Round"].value == "Morning walk"
    assert first["VA measured (V)"].data_type == "n" and first["VA measured (V)"].value == 277.0
    assert first["VA measured (V)"].number_format == "0.0"
    assert first["IN measured (A)"].value == 420.0 and first["IN computed, phasor sum (A)"].value == 0.0
    p_kw = first["P computed (kW)"]
    assert p_kw.data_type == "n" and p_kw.number_format == "0.00"
    assert p_kw.value == pytest.approx(rec["results"]["p_w"] / 1000)
    assert first["PF computed"].number_format == "0.000"
    assert first["Findings"].value.startswith("WARNING: Neutral current 420.0 A exceeds 100.0 A")
    assert "NEUTRAL_OVERLOAD" not in first["Findings"].value  # words, not codes
    db4 = [r for r in rows if r["Board"].value == "DB-4"][0]
    assert db4["After sign-off"].value == "corrected after sign-off"
    # The CSV of the same records keeps its machine contract.
    assert "NEUTRAL_OVERLOAD" in to_csv(records)


def test_text_typed_by_people_is_never_a_formula(book):
    path, _ = book
    wb = openpyxl.load_workbook(path)
    seen = []
    for ws in wb:
        for row in ws.iter_rows():
            for c in row:
                assert c.data_type != "f", (ws.title, c.coordinate, c.value)
                if c.value in HOSTILE:
                    assert c.data_type == "s"
                    seen.append(c.value)
    assert set(seen) == set(HOSTILE)


def test_findings_and_corrections_sheets(book):
    path, records = book
    wb = openpyxl.load_workbook(path)
    ws = wb["Findings"]
    head = [c.value for c in ws[1]]
    rows = [dict(zip(head, (c.value for c in r))) for r in ws.iter_rows(min_row=2)]
    assert len(rows) == sum(len(r["findings"]) for r in records)
    neutral = next(r for r in rows if r["Code"] == "NEUTRAL_OVERLOAD")
    assert neutral["Board"] == "DB-1" and neutral["Severity"] == "WARNING" and neutral["Value"] == 420.0
    assert neutral["Unit"] == "A" and neutral["Source"]
    ws = wb["Corrections"]
    head = [c.value for c in ws[1]]
    rows = [dict(zip(head, (c.value for c in r))) for r in ws.iter_rows(min_row=2)]
    by_change = {r["Field: old → new"]: r for r in rows}
    assert by_change["IA: 100 → 101"]["Reason"] == "misread clamp" and by_change["IA: 100 → 101"]["Who"] == "Ana Ruiz"
    assert by_change["IA: 100 → 101"]["After sign-off"] is None
    assert isinstance(by_change["IA: 100 → 101"]["When (local)"], dt.datetime)
    assert by_change["voided"]["Reason"] == "meter on the wrong board"
    assert by_change["IA: 160 → 106"]["After sign-off"].startswith("corrected after sign-off: round “Morning walk”")
    assert by_change["VC: 277 → 262"]["Reason"] == HOSTILE[4]
    ws = wb["Sign-offs"]
    assert [c.value for c in ws[2]][1:3] == ["round “Morning walk”", "Carla Lind"]
    about = {r[0].value: r[1].value for r in wb["About"].iter_rows()}
    assert "CST (UTC-06:00)" in about["Time zone"] and "does not show that any equipment is safe" in about["Caution"]


def test_export_command_needs_a_file_for_xlsx(db_path, db, tmp_path):
    supervisor_day(db)
    db.close()
    env = {**os.environ}
    p = subprocess.run(
        [sys.executable, "-m", "fieldpad.cli", "export", "--db", str(db_path), "--format", "xlsx"],
        capture_output=True,
        timeout=60,
        env=env,
    )
    assert p.returncode == 2 and b"-o FILE.xlsx" in p.stderr and p.stdout == b""
    out = tmp_path / "out.xlsx"
    p = subprocess.run(
        [sys.executable, "-m", "fieldpad.cli", "export", "--db", str(db_path), "--format", "xlsx", "-o", str(out)],
        capture_output=True,
        timeout=60,
        env=env,
    )
    assert p.returncode == 0, p.stderr
    assert openpyxl.load_workbook(out)["Readings"].max_row == 8  # header + 7 current (one of 8 voided)
    assert not [f for f in os.listdir(tmp_path) if f.startswith(".")]  # no part file left behind


SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")


@pytest.mark.skipif(SOFFICE is None, reason="LibreOffice is not installed (Debian package libreoffice-calc-nogui)")
def test_libreoffice_opens_the_workbook_and_prints_it(book, tmp_path):
    path, _ = book
    out = tmp_path / "lo"
    p = subprocess.run(
        [
            SOFFICE,
            f"-env:UserInstallation={(tmp_path / 'lo-profile').as_uri()}",
            "--headless",
            "--convert-to",
            "pdf",
            "--outdir",
            str(out),
            str(path),
        ],
        capture_output=True,
        timeout=180,
    )
    assert p.returncode == 0, p.stderr
    assert (out / "day.pdf").read_bytes()[:5] == b"%PDF-", p.stdout
    if shutil.which("pdftoppm"):  # pages as pictures to look at (Calc's own PNG filter needs a display)
        subprocess.run(
            ["pdftoppm", "-r", "60", "-png", str(out / "day.pdf"), str(out / "page")], check=True, timeout=120
        )
        pngs = sorted(out.glob("page-*.png"))
        assert pngs and all(f.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" for f in pngs)
    if shutil.which("pdftotext"):
        text = subprocess.run(["pdftotext", str(out / "day.pdf"), "-"], capture_output=True, text=True).stdout
        # LibreOffice read the cells as a person sees them: dates, times, numbers with their formats, words.
        for shown in (
            "2026-12-01",
            "08:10:00",
            "277.0",
            "420.0",
            "Morning walk",
            "corrected after sign-off",
            "IA: 160 → 106",
            "=cmd|' /C calc'!A0",
        ):
            assert shown in text, shown
