"""The supervisor's report: HTML (parsed, escaped, self-contained, rendered in Chromium), CSV hostile text."""
import csv
import io
import re
import shutil
import subprocess
from html.parser import HTMLParser

import pytest
from conftest import BAL

from fieldpad.report.export import export_records, to_csv
from fieldpad.report.html import to_html
from fieldpad.storage import sites, versions
from fieldpad.storage.db import open_db
from fieldpad.storage.importer import import_bytes

HOSTILE = '<script>alert("x")</script> & "quotes" \'apos\''
VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr",
        "circle", "line", "path"}


class Checker(HTMLParser):
    """Well-formedness check: every non-void element closed in order; collects tags and URLs."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack, self.errors, self.tags, self.attrs, self.text = [], [], [], [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.attrs.extend(attrs)
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.tags.append(tag)
        self.attrs.extend(attrs)

    def handle_endtag(self, tag):
        if tag in VOID:
            return
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"unexpected </{tag}> with open {self.stack[-3:]}")
        else:
            self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


@pytest.fixture
def report_db(db):
    sid = sites.create_site(db, HOSTILE, colour_set="iec60445")
    b1 = sites.create_board(db, sid, "MDB <b>1</b>", system="wye", nominal_v=480, af_incident_energy_cal_cm2=8,
                           af_ppe="2", af_label_date="2024-01-01")
    b2 = sites.create_board(db, sid, "=cmd|' /C calc'!A0", system="delta", nominal_v=480)
    s = versions.save_reading(db, b1, BAL, technician=HOSTILE, note="+1 & <i>note</i>",
                          taken_at="2026-12-01T10:00:00.000000Z")
    versions.correct_reading(db, s.reading_id, {**BAL, "ib_deg": "30"}, reason="<b>CT</b> check", by="Ana")
    versions.save_reading(db, b2, {"vab": "460", "vbc": "467", "vca": "450"}, technician="@SUM(1)",
                      taken_at="2026-12-01T11:00:00.000000Z")
    return db


def test_html_is_well_formed_escaped_and_self_contained(report_db):
    html = to_html(report_db, export_records(report_db))
    p = Checker()
    p.feed(html)
    p.close()
    assert p.errors == [] and p.stack == []
    assert "<script>" not in html and "&lt;script&gt;" in html
    assert "<b>1</b>" not in html and "<i>note</i>" not in html
    assert p.tags.count("svg") == 2  # one phasor drawing per board
    urls = [v for k, v in p.attrs if k in ("href", "src") and v]
    assert urls == []
    assert not re.search(r"https?://(?!www\.w3\.org/2000/svg)", html)  # only the SVG namespace name
    assert "url(" not in html and "@import" not in html
    text = " ".join(p.text)
    assert "does not show that any equipment is safe" in text
    assert "NEMA MG 1" in text and "IEC 60038" in text
    assert "Correction history" in text and "<b>CT</b> check" in text  # shown as text


def test_csv_neutralises_hostile_text(report_db):
    rows = list(csv.DictReader(io.StringIO(to_csv(export_records(report_db)).lstrip("\ufeff"))))
    by_board = {r["board"]: r for r in rows}
    assert "'=cmd|' /C calc'!A0" in by_board
    assert by_board["'=cmd|' /C calc'!A0"]["technician"] == "'@SUM(1)"
    assert by_board["MDB <b>1</b>"]["note"] == "'+1 & <i>note</i>"
    assert by_board["MDB <b>1</b>"]["va"] == "277.0"


def test_csv_round_trip_with_hostile_text(report_db, tmp_path):
    text = to_csv(export_records(report_db))
    fresh = open_db(tmp_path / "fresh.db")
    rep = import_bytes(fresh, text.encode())
    assert rep.problems == []
    got = {(r["board"], r["technician"], r["note"]) for r in export_records(fresh)}
    want = {(r["board"], r["technician"], r["note"]) for r in export_records(report_db)}
    assert got == want


CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.mark.skipif(CHROMIUM is None, reason="Chromium is not installed (Debian package chromium; .ci/run installs it)")
def test_html_renders_in_headless_chromium(report_db, tmp_path):
    page = tmp_path / "report.html"
    page.write_text(to_html(report_db, export_records(report_db)), encoding="utf-8")
    png = tmp_path / "report.png"
    subprocess.run([CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                    "--disable-background-networking", "--disable-component-update", "--disable-sync",
                    f"--user-data-dir={tmp_path / 'profile'}", "--window-size=900,1400",
                    f"--screenshot={png}", page.as_uri()], capture_output=True, timeout=120)
    data = png.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and len(data) > 20_000


def test_report_states_a_missing_or_out_of_date_arc_flash_label_and_lists_correction_values(tmp_path):
    # NFPA 70E 130.5(G): the study reviewed at least every five years (from memory); the site's interval here 5.
    from conftest import BAL

    from fieldpad.report.export import export_records
    from fieldpad.report.html import to_html
    from fieldpad.storage import sites, versions
    from fieldpad.storage.db import open_db

    db = open_db(tmp_path / "r.db")
    sid = sites.create_site(db, "Label Yard", label_review_years=5)
    old = sites.create_board(db, sid, "OLD-1", af_incident_energy_cal_cm2=8, af_ppe="2", af_label_date="2019-03-01")
    none = sites.create_board(db, sid, "NONE-1")
    for b in (old, none):
        s = versions.save_reading(db, b, BAL, taken_at="2026-12-01T10:00:00.000000Z")
    versions.correct_reading(db, s.reading_id, {**BAL, "ia": "101"}, reason="misread clamp")
    html = to_html(db, export_records(db, day="2026-12-01"), day="2026-12-01")
    assert "8 cal/cm², PPE 2, dated 2019-03-01, ⚠ OLDER THAN 5 YEARS: have it reviewed" in html
    assert "⚠ NONE RECORDED — hazard unknown, check the board" in html
    assert "built-in method" not in html and "ia=101" in html
    db.close()
