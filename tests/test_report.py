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
from fieldpad.storage import rounds, signoffs, sites, versions
from fieldpad.storage.db import open_db
from fieldpad.storage.importer import import_bytes

HOSTILE = '<script>alert("x")</script> & "quotes" \'apos\''
VOID = {
    "area",
    "base",
    "br",
    "col",
    "embed",
    "hr",
    "img",
    "input",
    "link",
    "meta",
    "source",
    "track",
    "wbr",
    "circle",
    "line",
    "path",
}


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
    b1 = sites.create_board(
        db,
        sid,
        "MDB <b>1</b>",
        system="wye",
        nominal_v=480,
        af_incident_energy_cal_cm2=8,
        af_ppe="2",
        af_label_date="2024-01-01",
    )
    b2 = sites.create_board(db, sid, "=cmd|' /C calc'!A0", system="delta", nominal_v=480)
    s = versions.save_reading(
        db, b1, BAL, technician=HOSTILE, note="+1 & <i>note</i>", taken_at="2026-12-01T10:00:00.000000Z"
    )
    versions.correct_reading(db, s.reading_id, {**BAL, "ib_deg": "30"}, reason="<b>CT</b> check", by="Ana")
    versions.save_reading(
        db, b2, {"vab": "460", "vbc": "467", "vca": "450"}, technician="@SUM(1)", taken_at="2026-12-01T11:00:00.000000Z"
    )
    return db


def test_html_is_well_formed_escaped_and_self_contained(report_db):
    html = to_html(report_db, export_records(report_db))
    p = Checker()
    p.feed(html)
    p.close()
    assert p.errors == [] and p.stack == []
    assert "<script>" not in html and "&lt;script&gt;" in html
    assert "<b>1</b>" not in html and "<i>note</i>" not in html
    assert p.tags.count("svg") == 1  # a phasor drawing for the board with angles; none for magnitudes only
    urls = [v for k, v in p.attrs if k in ("href", "src") and v and not re.fullmatch(r"#board-\d+", v)]
    assert urls == []  # only links within the page (board table -> board section)
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
    subprocess.run(
        [
            CHROMIUM,
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            f"--user-data-dir={tmp_path / 'profile'}",
            "--window-size=900,1400",
            f"--screenshot={png}",
            page.as_uri(),
        ],
        capture_output=True,
        timeout=120,
    )
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
    assert "built-in method" not in html and "IA: 100 → 101" in html
    db.close()


# ---- the supervisor's day: two named rounds, a correction, a void, a sign-off, a correction after it ------

SITE = "North Cold Store"
DAY = "2026-12-01"


def supervisor_day(db):
    """An invented day: 4 boards, round "Morning walk" (Ana) and an unnamed round 2 (Ben); DB-1's neutral
    measured at 420 A; DB-2 corrected (IA 100 -> 101); DB-3's morning reading voided; the morning round signed
    off; then DB-4 corrected (IA 160 -> 106): after the sign-off."""
    sid = sites.create_site(db, SITE, label_review_years=5)
    boards = [
        sites.create_board(
            db,
            sid,
            f"DB-{k + 1}",
            location=f"Plant room {k + 1}",
            nominal_v=480,
            **(
                {}
                if k == 2
                else {
                    "af_incident_energy_cal_cm2": 8,
                    "af_ppe": "2",
                    "af_label_date": "2019-03-01" if k == 1 else "2024-05-01",
                }
            ),
        )
        for k in range(4)
    ]
    r1 = rounds.start_round(db, sid, "Ana Ruiz", label="Morning walk", started_at="2026-12-01T14:00:00.000000Z")
    r2 = rounds.start_round(db, sid, "Ben Ode", started_at="2026-12-01T19:00:00.000000Z")
    first = []
    for k, b in enumerate(boards):
        inp = {**BAL, "i_n": "420"} if k == 0 else {**BAL, "ia": "160"} if k == 3 else BAL
        first.append(
            versions.save_reading(
                db, b, inp, technician="Ana Ruiz", round_id=r1, taken_at=f"2026-12-01T14:{10 + k:02d}:00.000000Z"
            )
        )
        versions.save_reading(
            db, b, BAL, technician="Ben Ode", round_id=r2, taken_at=f"2026-12-01T19:{10 + k:02d}:00.000000Z"
        )
    versions.correct_reading(db, first[1].reading_id, {**BAL, "ia": "101"}, reason="misread clamp", by="Ana Ruiz")
    versions.void_reading(db, first[2].reading_id, reason="meter on the wrong board", by="Ana Ruiz")
    signoffs.sign_off(db, sid, by="Carla Lind", round_id=r1, note="morning round checked")
    versions.correct_reading(db, first[3].reading_id, {**BAL, "ia": "106"}, reason="typed 160 for 106", by="Ben Ode")
    return sid, r1, r2


@pytest.fixture
def chicago(monkeypatch):
    """The laptop's zone: US Central (UTC-06:00 in December), so local and UTC times differ."""
    import time

    monkeypatch.setenv("TZ", "America/Chicago")
    time.tzset()
    yield
    monkeypatch.undo()
    time.tzset()


@pytest.fixture
def day_db(db, chicago):
    supervisor_day(db)
    return db


def _sections(html: str) -> dict:
    """Board name -> the text of its section."""
    parts = re.split(r'<section class="board" id="board-\d+">', html)
    out = {}
    for part in parts[1:]:
        name = re.search(r"<h2>([^<]+?)(?: — [^<]*)?</h2>", part).group(1)
        out[name] = part.split("</section>")[0]
    return out


def test_report_names_rounds_states_the_zone_and_tells_measured_from_computed(day_db):
    html = to_html(day_db, export_records(day_db, day=DAY, site=SITE), day=DAY, site=SITE)
    head = html.split("<h2>Boards</h2>")[0]
    assert "Times are local time: <b>CST (UTC-06:00)</b>" in head
    # Rounds by name in the header (the unnamed one got its default), with their local start.
    assert "Rounds: <b>Morning walk</b> (08:00–not finished, Ana Ruiz); <b>Round 2 — 2026-12-01 13:00</b>" in head
    assert "round “Morning walk”" in head and "Carla Lind" in head and "morning round checked" in head
    sec = _sections(html)
    assert list(sec) == ["DB-1", "DB-2", "DB-3", "DB-4"]
    # Times in the stated zone: 14:10Z is 08:10 in Chicago.
    assert "<td>08:10" in sec["DB-1"] and "<td>13:10" in sec["DB-1"] and "14:10" not in sec["DB-1"]
    assert "<td>Morning walk</td>" in sec["DB-1"] and "<td>Round 2 — 2026-12-01 13:00</td>" in sec["DB-1"]
    # IN A: the measured 420 A as measured, the phasor sum as computed: never one for the other.
    assert '420.0<span class="kind kind-m">m</span><br>0.0<span class="kind kind-c">c</span>' in sec["DB-1"]
    assert '420.0<span class="kind kind-c">' not in html
    # Every reading with its findings: the morning reading's neutral finding stays beside it.
    assert sec["DB-1"].count("Neutral current 420.0 A exceeds") == 1


def test_report_board_table_comes_first_with_last_reading_worst_finding_and_label(day_db):
    html = to_html(day_db, export_records(day_db, day=DAY, site=SITE), day=DAY, site=SITE)
    table = html.split("<h2>Boards</h2>")[1].split("</table>")[0]
    assert html.index("<h2>Boards</h2>") < html.index('<section class="board"')
    rows = table.split("<tr>")[2:]
    assert [re.search(r'href="#board-\d+">([^<]+)<', r).group(1) for r in rows] == ["DB-1", "DB-2", "DB-3", "DB-4"]
    assert "13:10, Ben Ode" in rows[0] and "WARNING</span> Neutral current 420.0 A exceeds" in rows[0]
    assert "(08:10)" in rows[0]  # the worst finding was not in the last reading: when it was
    assert "⚠ older than 5 years (dated 2019-03-01)" in rows[1]
    assert "⚠ none recorded" in rows[2] and "1 void" in rows[2]
    assert "current (dated 2024-05-01)" in rows[3] and ">none<" not in rows[0]


def test_report_lists_voids_and_corrections_field_by_field_and_marks_after_signoff(day_db):
    html = to_html(day_db, export_records(day_db, day=DAY, site=SITE), day=DAY, site=SITE)
    sec = _sections(html)
    assert "Voided readings (1)" in sec["DB-3"]
    void_row = sec["DB-3"].split("Voided readings (1)")[1]
    assert "meter on the wrong board" in void_row and "Ana Ruiz" in void_row and "A 277∠0°" in void_row
    assert "after sign-off" not in void_row  # voided before the round was signed off
    assert "<td>IA: 100 → 101</td><td>misread clamp</td><td>Ana Ruiz</td>" in sec["DB-2"]
    assert "after sign-off" not in sec["DB-2"]
    assert "<td>IA: 160 → 106</td><td>typed 160 for 106" in sec["DB-4"]
    assert sec["DB-4"].count("corrected after sign-off") == 2  # on the reading and on its correction
    assert "round “Morning walk” signed off by Carla Lind" in sec["DB-4"]
    assert "after sign-off" not in sec["DB-1"]


def test_unsigned_day_says_so_and_a_day_signoff_covers_round_2_too(db, chicago):
    sid, _r1, _r2 = supervisor_day(db)
    recs = export_records(db, day=DAY, site=SITE)
    assert "Not signed off." not in to_html(db, recs, day=DAY, site=SITE)
    other = sites.create_site(db, "Empty Yard")
    html = to_html(db, [], day=DAY, site="Empty Yard")
    assert "Not signed off." in html and "Rounds: — (readings not taken in a round)" in html
    signoffs.sign_off(db, sid, by="Carla Lind", day=DAY)
    b4 = sites.find_board(db, sid, "DB-4")["id"]
    late = versions.save_reading(db, b4, BAL, technician="Ben Ode", taken_at="2026-12-01T20:00:00.000000Z")
    html = to_html(db, export_records(db, day=DAY, site=SITE), day=DAY, site=SITE)
    assert "day 2026-12-01" in html and "added after sign-off" in _sections(html)["DB-4"]
    assert other  # the other site's report was empty, this one is not
    assert late.version == 1


def test_csv_round_column_is_the_rounds_name(day_db):
    rows = list(csv.DictReader(io.StringIO(to_csv(export_records(day_db, day=DAY)).lstrip("\ufeff"))))
    assert {r["round"] for r in rows} == {"Morning walk", "Round 2 — 2026-12-01 13:00"}


@pytest.mark.skipif(CHROMIUM is None, reason="Chromium is not installed (Debian package chromium; .ci/run installs it)")
@pytest.mark.parametrize("paper", ["A4", "Letter"])
def test_report_prints_to_pdf_with_no_board_split_across_pages(db, chicago, tmp_path, paper):
    """Printed on A4 and Letter: each board's section starts and ends on one page (CSS break-inside: avoid)
    where it fits on one; checked in the PDF's text, page by page (pdftotext, poppler-utils)."""
    supervisor_day(db)
    sid = sites.find_site(db, SITE)["id"]
    for k in range(5, 13):  # enough boards for several pages
        b = sites.create_board(db, sid, f"DB-{k}", location=f"Bay {k}", nominal_v=480)
        for h in (15, 16, 20):
            versions.save_reading(
                db,
                b,
                {**BAL, "vc": "262"} if k % 3 else BAL,
                technician="Ana Ruiz",
                taken_at=f"2026-12-01T{h}:{k:02d}:00.000000Z",
            )
    html = to_html(db, export_records(db, day=DAY, site=SITE), day=DAY, site=SITE)
    page = tmp_path / "report.html"
    page.write_text(
        html.replace("@page { margin: 12mm; }", f"@page {{ size: {paper}; margin: 12mm; }}"), encoding="utf-8"
    )
    pdf = tmp_path / "report.pdf"
    subprocess.run(
        [
            CHROMIUM,
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            f"--user-data-dir={tmp_path / 'profile'}",
            "--no-pdf-header-footer",
            f"--print-to-pdf={pdf}",
            page.as_uri(),
        ],
        capture_output=True,
        timeout=180,
    )
    data = pdf.read_bytes()
    assert data[:5] == b"%PDF-"
    if not shutil.which("pdftotext"):
        pytest.skip("pdftotext is not installed (Debian package poppler-utils): pages not checked")
    info = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True).stdout
    assert ("(A4)" if paper == "A4" else "(letter)") in info
    text = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True, text=True).stdout
    pages = text.split("\f")
    assert len(pages) >= 3
    heads = sorted((f"DB-{k} — " for k in range(1, 13)), key=text.index)  # in the report's order
    where = [next(i for i, p in enumerate(pages) if h in p) for h in heads]
    for k, h in enumerate(heads):
        start = text.index(h)
        end = text.index(heads[k + 1]) if k + 1 < len(heads) else text.index("Standards and thresholds used")
        body = text[start:end].rstrip()
        assert "\f" not in body, f"{h} is split across pages {where[k]} and {where[k] + body.count(chr(12))}"
