"""The supervisor's spreadsheet (``fieldpad export --format xlsx -o FILE``), written with XlsxWriter.

Sheets: **Readings** (one row per current reading: units in the headers, numbers as numbers with number
formats, the local date and time as real date and time cells, findings in words, a frozen header row and
filters), **Findings** (one row per finding), **Corrections** (each correction or void as ``field: old →
new`` with reason, who, when, and whether it came after a sign-off), **Sign-offs** and **About** (site, day,
time zone, how values are marked, the caution).

Text typed by people is always written as a string cell, never as a formula (a name starting with ``=``,
``+``, ``-`` or ``@`` stays that text); the workbook's own conversions of strings to formulas, numbers or
links are switched off too.  The file appears whole or not at all (a part file beside it, fsync, rename).
Only this module imports XlsxWriter, so the app and the other exports start without it.
"""

from __future__ import annotations

from datetime import datetime
from pathlib import Path

from ..formats.text import printable
from ..storage import rounds as rounds_store
from ..storage import signoffs as signoff_store
from ..storage.files import atomic_write_with
from ..storage.ids import local_text, utc_now
from .html import record_context, short_finding, version_trail, zone_text

#: Readings sheet: (header with unit, where the value comes from, number format or kind).
#: Sources: ("meta", key) export record field; ("in", key) typed input; ("res", key) computed result.
V, A, DEG, PCT = "0.0", "0.0", "0.0", "0.00"
READING_COLUMNS = [
    ("Site", ("meta", "site"), "text", 18),
    ("Board", ("meta", "board"), "text", 14),
    ("Date (local)", ("date",), "date", 11),
    ("Time (local)", ("time",), "time", 9),
    ("UTC offset", ("offset",), "text", 7),
    ("Technician", ("meta", "technician"), "text", 14),
    ("Round", ("meta", "round"), "text", 22),
    ("Instrument", ("meta", "instrument"), "text", 12),
    ("System", ("in", "system"), "text", 9),
    ("Standard", ("in", "standard"), "text", 8),
    ("Nominal (V, line-to-line)", ("in", "nominal_v"), "0", 9),
    *[(f"V{p} measured (V)", ("in", f"v{p.lower()}"), V, 9) for p in "ABC"],
    *[(f"V{p} angle measured (°)", ("in", f"v{p.lower()}_deg"), DEG, 9) for p in "ABC"],
    *[(f"V{p} measured (V)", ("in", f"v{p.lower()}"), V, 9) for p in ("AB", "BC", "CA")],
    *[(f"V{p} angle measured (°)", ("in", f"v{p.lower()}_deg"), DEG, 9) for p in ("AB", "BC", "CA")],
    *[(f"I{p} measured (A)", ("in", f"i{p.lower()}"), A, 9) for p in "ABC"],
    *[(f"I{p} angle measured (°)", ("in", f"i{p.lower()}_deg"), DEG, 9) for p in "ABC"],
    ("IN measured (A)", ("in", "i_n"), A, 9),
    ("IN computed, phasor sum (A)", ("res", "i_n_calc"), A, 10),
    ("IN estimated, magnitudes only (A)", ("res", "i_n_est"), A, 10),
    ("VUF computed (%)", ("res", "vuf_pct"), PCT, 9),
    ("NEMA line-voltage unbalance computed (%)", ("res", "lvur_pct"), PCT, 11),
    ("Current unbalance computed (%)", ("res", "iur_pct"), PCT, 10),
    ("Rotation computed", ("res", "rotation"), "text", 9),
    ("P computed (kW)", ("res", "p_w", 1e-3), "0.00", 10),
    ("Q computed (kvar)", ("res", "q_var", 1e-3), "0.00", 10),
    ("S computed (kVA)", ("res", "s_va", 1e-3), "0.00", 10),
    ("PF computed", ("res", "pf"), "0.000", 10),
    ("Motor derating factor computed", ("res", "derating"), "0.00", 11),
    ("Worst finding", ("worst",), "text", 10),
    ("Findings", ("findings",), "wrap", 60),
    ("Version", ("meta", "version"), "0", 7),
    ("After sign-off", ("late",), "text", 14),
    ("Note", ("meta", "note"), "text", 24),
    ("Reading id", ("meta", "reading_id"), "text", 38),
]


def _local(utc_text: str) -> datetime:
    """Stored UTC text as a naive local date-time (a spreadsheet cell has no time zone; the sheet says which)."""
    return datetime.fromisoformat(utc_text.replace("Z", "+00:00")).astimezone().replace(tzinfo=None)


def _offset(utc_text: str) -> str:
    off = datetime.fromisoformat(utc_text.replace("Z", "+00:00")).astimezone().strftime("%z")
    return f"{off[:3]}:{off[3:]}"


def _text(value) -> str | None:
    """A cell's text: never a control character (U+FFFD instead), None stays empty."""
    return None if value is None else printable(str(value), keep_tab_newline=True)


def findings_words(findings) -> str:
    """Findings of a reading in words, one per line: ``WARNING: Voltage on C is -5.4 % from nominal``."""
    return "\n".join(f"{f['severity'].upper()}: {short_finding(f['message'])}" for f in findings)


def write_xlsx(db, records: list[dict], path, *, day=None, site=None, protect=()) -> Path:
    """Write the workbook for ``records`` (from ``export_records``) to ``path``, whole or not at all."""
    import xlsxwriter  # only here: the app and the other exports never load it

    def fill(f) -> None:
        wb = xlsxwriter.Workbook(
            f,
            {
                "constant_memory": True,
                "strings_to_formulas": False,
                "strings_to_numbers": False,
                "strings_to_urls": False,
            },
        )
        _fill(wb, db, records, day=day, site=site)
        wb.close()

    atomic_write_with(path, fill, protect=protect)
    return Path(path)


def _fill(wb, db, records, *, day, site) -> None:
    head = wb.add_format({"bold": True, "bg_color": "#E8EDF3", "text_wrap": True, "valign": "top", "border": 1})
    fmt = {k: wb.add_format({"num_format": k, "valign": "top"}) for k in ("0", "0.0", "0.00", "0.000")}
    fmt["date"] = wb.add_format({"num_format": "yyyy-mm-dd", "valign": "top"})
    fmt["time"] = wb.add_format({"num_format": "hh:mm:ss", "valign": "top"})
    fmt["datetime"] = wb.add_format({"num_format": "yyyy-mm-dd hh:mm", "valign": "top"})
    fmt["text"] = wb.add_format({"valign": "top"})
    fmt["wrap"] = wb.add_format({"valign": "top", "text_wrap": True})
    bold = wb.add_format({"bold": True})

    ctx = record_context(db, records, day=day, site=site)
    trail, late = version_trail(db, ctx)

    def put(ws, r, c, value, kind) -> None:
        if value is None or value == "":
            return
        if kind in ("text", "wrap"):
            ws.write_string(r, c, _text(value), fmt[kind])  # always a string: never a formula
        elif kind in ("date", "time", "datetime"):
            ws.write_datetime(r, c, value, fmt[kind])
        else:
            ws.write_number(r, c, float(value), fmt[kind])

    def fit_row(ws, r, wrapped) -> None:
        """Height for the wrapped texts ``(text, column width)`` of row ``r`` (set before its cells are
        written: a streamed sheet cannot go back, and a spreadsheet does not grow a row by itself)."""
        lines = 1
        for text, width in wrapped:
            if text:
                lines = max(
                    lines, sum(-(-max(len(part), 1) // max(int(width * 1.1), 1)) for part in str(text).split("\n"))
                )
        if lines > 1:
            ws.set_row(r, 15 * min(lines, 20))

    def header(ws, names_widths) -> None:
        for c, (name, width) in enumerate(names_widths):
            ws.write_string(0, c, name, head)
            ws.set_column(c, c, width)
        ws.set_row(0, 60)
        ws.freeze_panes(1, 0)
        ws.set_landscape()
        ws.set_paper(9)  # A4; a printer set to Letter scales it
        ws.repeat_rows(0)
        ws.fit_to_pages(1 if sum(w for _, w in names_widths) < 300 else 3, 0)

    # Readings
    ws = wb.add_worksheet("Readings")
    header(ws, [(c[0], c[3]) for c in READING_COLUMNS])
    findings_width = next(c[3] for c in READING_COLUMNS if c[1] == ("findings",))
    for i, rec in enumerate(records, start=1):
        local = _local(rec["taken_at"])
        words = findings_words(rec["findings"])
        fit_row(ws, i, [(words, findings_width)])
        for c, (_, src, kind, _w) in enumerate(READING_COLUMNS):
            where = src[0]
            if where == "meta":
                value = rec[src[1]]
            elif where == "in":
                value = rec["inputs"][src[1]]
            elif where == "res":
                value = rec["results"][src[1]]
                if value is not None and len(src) > 2:
                    value = value * src[2]
            elif where == "date":
                value = local
            elif where == "time":
                value = local.time()
            elif where == "offset":
                value = _offset(rec["taken_at"])
            elif where == "worst":
                value = rec["findings"][0]["severity"].upper() if rec["findings"] else "none"
            elif where == "findings":
                value = words
            else:  # late
                value = late.get(rec["reading_id"])
            put(ws, i, c, value, kind)
    ws.autofilter(0, 0, max(len(records), 1), len(READING_COLUMNS) - 1)

    # Findings
    cols = [
        ("Site", 18),
        ("Board", 14),
        ("Date (local)", 11),
        ("Time (local)", 9),
        ("Severity", 9),
        ("Finding", 80),
        ("Phase", 6),
        ("Value", 9),
        ("Unit", 8),
        ("Threshold", 9),
        ("Source", 40),
        ("Code", 18),
    ]
    ws = wb.add_worksheet("Findings")
    header(ws, cols)
    r = 0
    for rec in records:
        local = _local(rec["taken_at"])
        for f in rec["findings"]:
            r += 1
            fit_row(ws, r, [(f["message"], 80), (f.get("source"), 40)])
            for c, (value, kind) in enumerate(
                [
                    (rec["site"], "text"),
                    (rec["board"], "text"),
                    (local, "date"),
                    (local.time(), "time"),
                    (f["severity"].upper(), "text"),
                    (f["message"], "wrap"),
                    (f.get("phase"), "text"),
                    (f.get("value"), "0.00"),
                    (f.get("unit"), "text"),
                    (f.get("threshold"), "0.00"),
                    (f.get("source"), "wrap"),
                    (f["code"], "text"),
                ]
            ):
                put(ws, r, c, value, kind)
    ws.autofilter(0, 0, max(r, 1), len(cols) - 1)

    # Corrections
    cols = [
        ("Site", 18),
        ("Board", 14),
        ("Reading taken (local)", 16),
        ("Version", 7),
        ("Field: old → new", 36),
        ("Reason", 30),
        ("Who", 14),
        ("When (local)", 16),
        ("After sign-off", 50),
    ]
    ws = wb.add_worksheet("Corrections")
    header(ws, cols)
    r = 0
    for key in sorted(trail, key=lambda k: (trail[k][0]["site"], trail[k][0]["board"], k)):
        for corr in trail[key]:
            r += 1
            fit_row(ws, r, [("\n".join(corr["changes"]), 36), (corr["reason"], 30), (corr["after_signoff"], 40)])
            for c, (value, kind) in enumerate(
                [
                    (corr["site"], "text"),
                    (corr["board"], "text"),
                    (_local(corr["taken_at"]), "datetime"),
                    (corr["version"], "0"),
                    ("\n".join(corr["changes"]), "wrap"),
                    (corr["reason"], "wrap"),
                    (corr["by"], "text"),
                    (_local(corr["recorded_at"]), "datetime"),
                    (
                        ("voided" if corr["void"] else "corrected") + " after sign-off: " + corr["after_signoff"]
                        if corr["after_signoff"]
                        else None,
                        "wrap",
                    ),
                ]
            ):
                put(ws, r, c, value, kind)
    ws.autofilter(0, 0, max(r, 1), len(cols) - 1)

    # Sign-offs
    cols = [("Site", 18), ("What", 40), ("Signed by", 18), ("When (local)", 16), ("Note", 50)]
    ws = wb.add_worksheet("Sign-offs")
    header(ws, cols)
    names = {s["id"]: s["name"] for s in ctx["site_by_name"].values()}
    for r, so in enumerate(ctx["signoffs"], start=1):
        fit_row(ws, r, [(so["note"], 50)])
        for c, (value, kind) in enumerate(
            [
                (names.get(so["site_id"]), "text"),
                (signoff_store.scope_text(so), "text"),
                (so["signed_by"], "text"),
                (_local(so["signed_at"]), "datetime"),
                (so["note"], "wrap"),
            ]
        ):
            put(ws, r, c, value, kind)

    # About
    ws = wb.add_worksheet("About")
    ws.set_column(0, 0, 22)
    ws.set_column(1, 1, 100)
    round_names = [
        rounds_store.round_name(rr)
        for rr in sorted((rr for rr in ctx["round_rows"].values() if rr), key=lambda rr: rr["started_at"])
    ]
    site_title = site or ", ".join(ctx["site_by_name"]) or "no readings"
    about = [
        ("Site", site_title),
        ("Day", day or "all days"),
        (
            "Time zone",
            "Dates and times are local time: "
            + zone_text([rec["taken_at"] for rec in records])
            + " (the UTC offset of each reading is in its own column).",
        ),
        ("Rounds", "; ".join(round_names) or "—"),
        ("Signed off", "; ".join(signoff_store.describe(so) for so in ctx["signoffs"]) or "not signed off"),
        (
            "Readings",
            f"{len(records)} current reading(s); voided readings are not in the Readings sheet, their "
            "voids are in Corrections.",
        ),
        (
            "Values",
            "'measured' = typed from the instrument; 'computed' = computed by fieldpad from the measured "
            "values; 'estimated' = the neutral from current magnitudes only (no angles).",
        ),
        ("Generated", f"{local_text(utc_now())} by fieldpad"),
        (
            "Caution",
            "These readings were taken on energised equipment. This workbook records measurements and "
            "computed checks; it does not show that any equipment is safe. Work on or near energised "
            "equipment only as a qualified person, under the site's energised-work permit, with the PPE "
            "the board's arc-flash label calls for. Local codes and licensed practice govern.",
        ),
    ]
    for r, (k, v) in enumerate(about):
        fit_row(ws, r, [(v, 100)])
        ws.write_string(r, 0, k, bold)
        ws.write_string(r, 1, _text(v), fmt["wrap"])
