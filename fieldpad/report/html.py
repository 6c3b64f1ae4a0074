"""The printable HTML report: one self-contained file (inline CSS and SVG, no
network fetches) for the supervisor to file and send.  Every name and note a
user typed is escaped by Jinja2's autoescaping.

Order: header (site, day, time zone, crew, rounds, sign-offs), the caution, a
table of every board (last reading, worst finding, arc-flash label status),
then one section per board: every current reading with its findings, the
voided readings (reason, who, when) and each correction as ``field: old →
new`` with its reason, who and when.  A value is marked **m** when it was
measured (typed from the instrument), **c** when fieldpad computed it from
measured values and **e** when it is an estimate (the neutral from current
magnitudes only): the "IN A" column shows a measured neutral as measured and
a phasor-sum neutral as computed, both when both exist.  Times are in the
local time zone of the laptop making the report, stated in the header.
"""

from __future__ import annotations

from collections import defaultdict
from datetime import date, datetime

from jinja2 import Environment, PackageLoader, select_autoescape
from markupsafe import Markup

from .. import __version__
from ..core import phase_colours
from ..core.arc_flash import label_summary
from ..core.fields import NUMERIC_FIELDS
from ..core.findings import SEVERITY_ORDER
from ..core.thresholds import SOURCES
from ..formats.text import printable
from ..storage import rounds as rounds_store
from ..storage import settings_history, sites, versions
from ..storage import signoffs as signoff_store
from ..storage.ids import local_text, utc_now
from .svg import phasor_svg


def _no_controls(value):
    """Every value printed into the page: control characters (never meaningful in a report) become U+FFFD."""
    if isinstance(value, Markup):  # our own SVG, built from escaped parts
        return value
    return printable(value, keep_tab_newline=True) if isinstance(value, str) else value


_ENV = Environment(
    loader=PackageLoader("fieldpad.report", "templates"),
    finalize=_no_controls,
    autoescape=select_autoescape(default=True, default_for_string=True),
)

SOURCE_NAMES = [
    ("Voltage unbalance factor (VUF)", "vuf_pct"),
    ("Motor derating (NEMA line-voltage unbalance)", "lvur_pct"),
    ("Motor operation limit", "lvur_max_pct"),
    ("Current unbalance", "iur_pct"),
    ("Neutral current", "neutral_overload_ratio"),
    ("Voltage against nominal (ANSI)", "voltage_ansi"),
    ("Voltage against nominal (IEC)", "voltage_iec"),
    ("Phase rotation", "rotation"),
    ("High-leg position", "high_leg"),
    ("Reversed CT", "ct_reversed"),
]

#: How a typed field is called in a correction line (as on the sheet).
FIELD_NAMES = {
    **{f"v{p}": f"V{p.upper()}" for p in "abc"},
    **{f"v{p}_deg": f"V{p.upper()} angle" for p in "abc"},
    **{f"v{a}{b}": f"V{a.upper()}{b.upper()}" for a, b in ("ab", "bc", "ca")},
    **{f"v{a}{b}_deg": f"V{a.upper()}{b.upper()} angle" for a, b in ("ab", "bc", "ca")},
    **{f"i{p}": f"I{p.upper()}" for p in "abc"},
    **{f"i{p}_deg": f"I{p.upper()} angle" for p in "abc"},
    "i_n": "IN",
    "nominal_v": "nominal V",
    "system": "system",
    "standard": "standard",
}
LABEL_SHORT = {"missing": "⚠ none recorded", "undated": "⚠ undated", "unreadable date": "⚠ date unreadable"}


#: Arc-flash label fields: where a board joined into this one recorded other values, the report says so.
AF_FIELDS = {
    "af_incident_energy_cal_cm2": "{:g} cal/cm²",
    "af_working_distance_mm": "working distance {:g} mm",
    "af_boundary_mm": "arc-flash boundary {:g} mm",
    "af_ppe": "PPE {}",
    "af_label_date": "dated {}",
}


def _n(x, fmt="{:.2f}"):
    return "" if x is None else fmt.format(x)


def _entered(inputs: dict, keys, sep: str = ", ") -> str:
    parts = []
    for k in keys:
        if inputs.get(k) is not None:
            ang = inputs.get(k + "_deg")
            parts.append(f"{k[1:].upper()} {inputs[k]:g}" + (f"∠{ang:g}°" if ang is not None else ""))
    return sep.join(parts)


def _label(board: dict, review_years: float, on: date) -> str:
    label = label_summary(board, review_years, on)
    if label.status == "missing":
        return "⚠ NONE RECORDED — hazard unknown, check the board"
    tail = {
        "undated": "⚠ label date not recorded",
        "unreadable date": f"⚠ label date {label.dated!r} unreadable",
        "older than review interval": f"dated {label.dated}, ⚠ OLDER THAN {review_years:g} YEARS: have it reviewed",
        "current": f"dated {label.dated}",
    }[label.status]
    return ", ".join((*label.parts, tail))


def _label_short(board: dict | None, review_years: float, on: date) -> tuple[str, bool]:
    """(status in a few words, whether it needs attention) for the board table."""
    if board is None:
        return "—", False
    label = label_summary(board, review_years, on)
    if label.status == "current":
        return f"current (dated {label.dated})", False
    if label.status == "older than review interval":
        return f"⚠ older than {review_years:g} years (dated {label.dated})", True
    return LABEL_SHORT[label.status], True


def _arrows(inputs: dict, labels, colours):
    arrows = []
    ll = inputs.get("va") is None and inputs.get("vab") is not None
    for k, p in enumerate("abc"):
        if ll:
            key = {"a": "vab", "b": "vbc", "c": "vca"}[p]
            name = f"{labels[k]}-{labels[(k + 1) % 3]}"
        else:
            key, name = f"v{p}", labels[k]
        ang = inputs.get(key + "_deg")
        if ang is None and key == "va" and inputs.get("va") is not None and inputs.get("vb_deg") is not None:
            ang = 0.0
        arrows.append((name, inputs.get(key), ang, colours[k], "V"))
        arrows.append(("I" + labels[k].lower(), inputs.get(f"i{p}"), inputs.get(f"i{p}_deg"), colours[k], "I"))
    return arrows


def _svg(latest, labels, colours, title):
    """The phasor drawing of the board's latest reading; none where no angle was entered (nothing to draw)."""
    if latest is None:
        return None
    arrows = _arrows(latest["inputs"], labels, colours)
    if not any(a[1] is not None and a[2] is not None for a in arrows):
        return None
    return phasor_svg(arrows, 200, latest["results"]["rotation"], f"phasor diagram of {title}, latest reading")


def neutral_parts(inputs: dict, results: dict) -> list[tuple[str, str]]:
    """The neutral current of a reading as ``(value text, kind)`` pairs, kind ``m`` measured, ``c`` computed
    (phasor sum of the phase currents), ``e`` estimated (from magnitudes only): a measured neutral is never
    shown as computed or the other way round."""
    out = []
    if inputs.get("i_n") is not None:
        out.append((f"{inputs['i_n']:.1f}", "m"))
    if results.get("i_n_calc") is not None:
        out.append((f"{results['i_n_calc']:.1f}", "c"))
    elif results.get("i_n_est") is not None:
        out.append((f"{results['i_n_est']:.1f}", "e"))
    return out


def short_finding(message: str) -> str:
    """The first statement of a finding's message (before what to check)."""
    head = message.split(": ", 1)[0]
    return head if len(head) < len(message) else message


def _worst(findings):
    return min(findings, key=lambda f: SEVERITY_ORDER[f["severity"]]) if findings else None


def _value_text(v) -> str:
    if v is None:
        return "(empty)"
    if isinstance(v, float):
        return f"{v:g}"
    return str(v)


def changes(old: dict | None, new: dict) -> list[str]:
    """What a version changed against the one before: ``field: old → new`` lines (typed values, note, time)."""
    if old is None:
        return []
    out = []
    a, b = versions.inputs_of(old), versions.inputs_of(new)
    for k in sorted(set(a) | set(b), key=lambda k: (list(FIELD_NAMES).index(k) if k in FIELD_NAMES else 99, k)):
        if a.get(k) != b.get(k):
            out.append(f"{FIELD_NAMES.get(k, k)}: {_value_text(a.get(k))} → {_value_text(b.get(k))}")
    if (old["note"] or None) != (new["note"] or None):
        out.append(f"note: {old['note'] or '(empty)'} → {new['note'] or '(empty)'}")
    if old["taken_at"] != new["taken_at"]:
        out.append(f"taken: {local_text(old['taken_at'])} → {local_text(new['taken_at'])}")
    if new["void"] and not old["void"]:
        out.append("voided")
    return out


def zone_text(times: list[str]) -> str:
    """The local time zone the report's times are in, with its UTC offset(s) on those times."""
    seen = []
    for t in times or [utc_now()]:
        dt = datetime.fromisoformat(t.replace("Z", "+00:00")).astimezone()
        off = dt.strftime("%z")
        utc = f"UTC{off[:3]}:{off[3:]}"
        text = f"{dt.tzname()} ({utc})" if dt.tzname() not in (None, off) else utc
        if text not in seen:
            seen.append(text)
    return " and ".join(seen)


def record_context(db, records: list[dict], *, day=None, site=None) -> dict:
    """What the report and the spreadsheet add to the export records: the sites, the stored current versions
    (void ones too, for round ids and voids), the sign-offs and the rounds of the same day / site."""
    from .export import day_range_utc

    start, end = day_range_utc(day) if day else (None, None)
    # Sites and boards by id: two of one name (one from each laptop) are never mixed.
    site_by_id: dict = {}
    if site:
        for s in sites.sites_matching(db, site)[:1]:
            site_by_id[s["id"]] = s
    for rec in records:
        if rec["site_id"] not in site_by_id:
            site_by_id[rec["site_id"]] = sites.get_site(db, rec["site_id"])
    site_by_name = {s_["name"]: s_ for s_ in site_by_id.values()}
    stored = {}
    voids: dict = defaultdict(list)
    for s in site_by_id.values():
        for row in versions.current_readings(
            db, day_start_utc=start, day_end_utc=end, site_id=s["id"], include_void=True
        ):
            stored[row["reading_id"]] = row
            if row["void"]:
                voids[(row["site_id"], row["shown_board_id"])].append(row)
    signoffs, round_rows = [], {}
    for s in site_by_id.values():
        if day:
            signoffs += signoff_store.signoffs_for_range(db, s["id"], start, end)
            for r in rounds_store.rounds_of_day(db, s["id"], start, end):
                round_rows[r["id"]] = r
        else:
            signoffs += signoff_store.signoffs_of_site(db, s["id"])
    for row in stored.values():
        if row["round_id"] and row["round_id"] not in round_rows:
            round_rows[row["round_id"]] = rounds_store.get_round(db, row["round_id"])
    signoffs.sort(key=lambda so: so["signed_at"])
    return {
        "site_by_id": site_by_id,
        "site_by_name": site_by_name,
        "stored": stored,
        "voids": voids,
        "signoffs": signoffs,
        "round_rows": round_rows,
    }


def after_signoff(ctx: dict, row: dict, version: dict) -> dict | None:
    """The sign-off covering ``row``'s reading that was signed before ``version`` was recorded, or None."""
    return signoff_store.signed_before(
        ctx["signoffs"],
        site_id=row["site_id"],
        round_id=row["round_id"],
        taken_at=version["taken_at"],
        recorded_at=version["recorded_at"],
    )


def version_trail(db, ctx: dict, tfmt: str = "%Y-%m-%d %H:%M") -> tuple[dict, dict]:
    """Every correction and void of the stored readings, by (site id, board id), oldest reading first; and which
    readings were added, corrected or voided after a sign-off (reading_id -> words).  Where two versions
    supersede the same one (changed on two laptops), the competing ones are marked."""
    by_board: dict = defaultdict(list)
    late: dict = {}
    for row in sorted(ctx["stored"].values(), key=lambda x: x["taken_at"]):
        if row["version"] == 1:
            if after_signoff(ctx, row, row):
                late[row["reading_id"]] = "added after sign-off"
            continue
        prev = None
        hist = versions.history(db, row["reading_id"])
        conflict = sum(bool(v["is_head"]) for v in hist) > 1
        for v in hist:
            if prev is None and after_signoff(ctx, row, v):
                late[row["reading_id"]] = "added after sign-off"
            if prev is not None:
                so = after_signoff(ctx, row, v)
                if so and row["reading_id"] not in late:
                    late[row["reading_id"]] = "voided after sign-off" if v["void"] else "corrected after sign-off"
                by_board[(row["site_id"], row["shown_board_id"])].append(
                    {
                        "site": row["site_name"],
                        "board": row["board_name"],
                        "taken_at": row["taken_at"],
                        "taken": local_text(row["taken_at"], tfmt),
                        "version": v["version"],
                        "changes": changes(prev, v) or ["no value changed"],
                        "reason": v["reason"],
                        "by": v["recorded_by"],
                        "recorded_at": v["recorded_at"],
                        "recorded": local_text(v["recorded_at"]),
                        "void": bool(v["void"]),
                        "after_signoff": signoff_store.describe(so) if so else None,
                        "competing": conflict and bool(v["is_head"]),
                    }
                )
            prev = v
    return by_board, late


def to_html(db, records: list[dict], *, day=None, site=None, today: date | None = None) -> str:
    """The report for the current readings ``records`` (from ``export_records``) of ``day`` / ``site``."""
    # Labels are judged on the day reported (or today for an undated report): the same report, the same words.
    on = date.fromisoformat(day) if day else (today or date.today())
    ctx = record_context(db, records, day=day, site=site)
    site_by_id, site_by_name, voids, signoffs, round_rows = (
        ctx["site_by_id"],
        ctx["site_by_name"],
        ctx["voids"],
        ctx["signoffs"],
        ctx["round_rows"],
    )
    tfmt = "%H:%M" if day else "%Y-%m-%d %H:%M"
    trail, late = version_trail(db, ctx, tfmt)
    # Sites and boards by id: two of one name (one from each laptop) are two sections, each with its own label.
    by_board: dict = defaultdict(list)
    for rec in records:
        by_board[(rec["site_id"], rec["board_id"])].append(rec)
    for key in voids:
        by_board.setdefault(key, [])
    board_rows = {bid: sites.get_board(db, bid) for _, bid in by_board}
    names = defaultdict(set)
    for site_id, board_id in by_board:
        names[site_by_id[site_id]["name"]].add(site_id)
        names[(site_id, board_rows[board_id]["name"])].add(board_id)

    def _tell_apart(name, key, ident):
        return f"{name} (id {ident[:13]}…)" if len(names[key]) > 1 else name

    summary = {sev: {"readings": 0, "boards": []} for sev in ("alarm", "warning", "info")}
    boards, table = [], []
    times = []
    order = sorted(
        by_board.items(),
        key=lambda kv: (site_by_id[kv[0][0]]["name"], kv[0][0], board_rows[kv[0][1]]["name"], kv[0][1]),
    )
    for n, ((site_id, board_id), recs) in enumerate(order):
        s = site_by_id[site_id]
        b = board_rows[board_id]
        site_name = _tell_apart(s["name"], s["name"], site_id)
        board_name = _tell_apart(b["name"], (site_id, b["name"]), board_id)
        conflicted = sum(r.get("conflict", False) for r in recs)
        labels = sites.site_labels(s)
        colours = phase_colours.colours(s["colour_set"], "print")
        title = board_name if len(site_by_id) == 1 else f"{site_name} / {board_name}"
        for sev in summary:
            hits = [r for r in recs if any(f["severity"] == sev for f in r["findings"])]
            summary[sev]["readings"] += len(hits)
            if hits:
                summary[sev]["boards"].append(title)
        corrections = trail.get((site_id, board_id), [])
        rows = []
        for r in sorted(recs, key=lambda r: r["taken_at"]):
            res, inp = r["results"], r["inputs"]
            times.append(r["taken_at"])
            rows.append(
                {
                    "taken": local_text(r["taken_at"], tfmt),
                    "technician": r["technician"],
                    "round": r["round"],
                    "v_text": (
                        _entered(inp, ("va", "vb", "vc"), "\n") or _entered(inp, ("vab", "vbc", "vca"), "\n")
                    ).splitlines(),
                    "i_text": _entered(inp, ("ia", "ib", "ic"), "\n").splitlines(),
                    "neutral": neutral_parts(inp, res),
                    "vuf": _n(res["vuf_pct"]),
                    "lvur": _n(res["lvur_pct"]),
                    "rotation": res["rotation"] or "",
                    "p_kw": _n(None if res["p_w"] is None else res["p_w"] / 1000.0),
                    "pf": _n(res["pf"]),
                    "magnitude_only": bool(res["basis"]) and "magnitudes" in res["basis"],
                    "version": r["version"],
                    "note": r["note"],
                    "instrument": r["instrument"],
                    "findings": r["findings"],
                    "late": late.get(r["reading_id"]),
                    "conflict": r.get("conflict", False),
                }
            )
        void_rows = []
        for v in sorted(voids.get((site_id, board_id), []), key=lambda x: x["taken_at"]):
            vals = {k: v[k] for k in NUMERIC_FIELDS if v.get(k) is not None}
            so = after_signoff(ctx, v, v)
            void_rows.append(
                {
                    "taken": local_text(v["taken_at"], tfmt),
                    "technician": v["technician"],
                    "entered": (_entered(vals, ("va", "vb", "vc")) or _entered(vals, ("vab", "vbc", "vca")))
                    + ("; " if vals.get("ia") is not None else "")
                    + _entered(vals, ("ia", "ib", "ic")),
                    "reason": v["reason"],
                    "by": v["recorded_by"],
                    "when": local_text(v["recorded_at"]),
                    "after_signoff": signoff_store.describe(so) if so else None,
                }
            )
        latest = max(recs, key=lambda r: r["taken_at"]) if recs else None
        all_findings = [f for r in recs for f in r["findings"]]
        worst = _worst(all_findings)
        worst_rec = next((r for r in recs if worst in r["findings"]), None) if worst else None
        label_text, label_bad = _label_short(b, s["label_review_years"], on)
        anchor = f"board-{n}"
        table.append(
            {
                "name": title,
                "anchor": anchor,
                "location": b["location"] if b else None,
                "last": f"{local_text(latest['taken_at'], tfmt)}, {latest['technician'] or '—'}"
                if latest
                else "no current reading (voided only)",
                "worst": worst,
                "worst_short": short_finding(worst["message"]) if worst else "",
                "worst_when": local_text(worst_rec["taken_at"], tfmt) if worst_rec and len(recs) > 1 else "",
                "more": len(all_findings) - 1 if worst else 0,
                "label": label_text,
                "label_bad": label_bad,
                "readings": len(recs),
                "voids": len(void_rows),
                "corrections": len(corrections),
            }
        )
        boards.append(
            {
                "name": title,
                "anchor": anchor,
                "location": b["location"] if b else None,
                "system": b["system"] if b else "",
                "nominal_v": f"{b['nominal_v']:g}" if b and b["nominal_v"] else None,
                "label": _label(b, s["label_review_years"], on) if b else "—",
                "label_joined": [
                    AF_FIELDS[f].format(v)
                    for f, v, _ in settings_history.joined_differences(db, "board", board_id, AF_FIELDS)
                ],
                "readings": rows,
                "voids": void_rows,
                "corrections": corrections,
                "conflicts": conflicted,
                "svg": _svg(latest, labels, colours, title),
            }
        )
    crew = sorted({r["technician"] for r in records if r["technician"]})
    round_list = []
    for r in sorted((r for r in round_rows.values() if r), key=lambda r: r["started_at"]):

        def when(t):  # a round that began or ended on another day than the report's: with its date
            return local_text(t, tfmt if day and local_text(t, "%Y-%m-%d") == day else "%Y-%m-%d %H:%M")

        span = when(r["started_at"]) + "–" + (when(r["finished_at"]) if r["finished_at"] else "not finished")
        round_list.append(
            {
                "name": rounds_store.round_name(r),
                "span": span,
                "technician": r["technician"],
                "signed": [so for so in signoffs if so["round_id"] == r["id"]],
            }
        )
    site_title = site or (", ".join(site_by_name) if site_by_name else "no readings")
    return _ENV.get_template("report.html.j2").render(
        site_title=site_title,
        day=day,
        generated=local_text(utc_now(), "%Y-%m-%d %H:%M"),
        version=__version__,
        zone=zone_text(times),
        crew=", ".join(crew),
        rounds=round_list,
        signoffs=[
            {
                "scope": signoff_store.scope_text(so),
                "by": so["signed_by"],
                "at": local_text(so["signed_at"]),
                "note": so["note"],
            }
            for so in signoffs
        ],
        summary=summary,
        table=table,
        boards=boards,
        sources=[(name, SOURCES[key]) for name, key in SOURCE_NAMES],
    )
