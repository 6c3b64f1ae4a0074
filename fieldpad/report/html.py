"""The printable HTML report: one self-contained file (inline CSS and SVG, no
network fetches) for the supervisor to file and send.  Every name and note a
user typed is escaped by Jinja2's autoescaping.
"""
from __future__ import annotations

from collections import defaultdict
from datetime import date

from jinja2 import Environment, PackageLoader, select_autoescape
from markupsafe import Markup

from .. import __version__
from ..core import phase_colours
from ..core.arc_flash import label_summary
from ..core.thresholds import SOURCES
from ..formats.text import printable
from ..storage import sites, versions
from ..storage.ids import local_text, utc_now
from .svg import phasor_svg


def _no_controls(value):
    """Every value printed into the page: control characters (never meaningful in a report) become U+FFFD."""
    if isinstance(value, Markup):  # our own SVG, built from escaped parts
        return value
    return printable(value, keep_tab_newline=True) if isinstance(value, str) else value


_ENV = Environment(loader=PackageLoader("fieldpad.report", "templates"), finalize=_no_controls,
                   autoescape=select_autoescape(default=True, default_for_string=True))

SOURCE_NAMES = [
    ("Voltage unbalance factor (VUF)", "vuf_pct"), ("Motor derating (NEMA line-voltage unbalance)", "lvur_pct"),
    ("Motor operation limit", "lvur_max_pct"), ("Current unbalance", "iur_pct"),
    ("Neutral current", "neutral_overload_ratio"), ("Voltage against nominal (ANSI)", "voltage_ansi"),
    ("Voltage against nominal (IEC)", "voltage_iec"), ("Phase rotation", "rotation"),
    ("High-leg position", "high_leg"), ("Reversed CT", "ct_reversed"),
]


#: Arc-flash label fields: where a board joined into this one recorded other values, the report says so.
AF_FIELDS = {"af_incident_energy_cal_cm2": "{:g} cal/cm²", "af_working_distance_mm": "working distance {:g} mm",
             "af_boundary_mm": "arc-flash boundary {:g} mm", "af_ppe": "PPE {}", "af_label_date": "dated {}"}


def _n(x, fmt="{:.2f}"):
    return "" if x is None else fmt.format(x)


def _entered(inputs: dict, keys) -> str:
    parts = []
    for k in keys:
        if inputs.get(k) is not None:
            ang = inputs.get(k + "_deg")
            parts.append(f"{k[1:].upper()} {inputs[k]:g}" + (f"∠{ang:g}°" if ang is not None else ""))
    return ", ".join(parts)


def _label(board: dict, review_years: float, on: date) -> str:
    label = label_summary(board, review_years, on)
    if label.status == "missing":
        return "⚠ NONE RECORDED — hazard unknown, check the board"
    tail = {"undated": "⚠ label date not recorded",
            "unreadable date": f"⚠ label date {label.dated!r} unreadable",
            "older than review interval": f"dated {label.dated}, ⚠ OLDER THAN {review_years:g} YEARS: have it reviewed",
            "current": f"dated {label.dated}"}[label.status]
    return ", ".join((*label.parts, tail))


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


def to_html(db, records: list[dict], *, day=None, site=None, today: date | None = None) -> str:
    # Labels are judged on the day reported (or today for an undated report): the same report, the same words.
    on = date.fromisoformat(day) if day else (today or date.today())
    # Sites and boards by id: two of one name (one from each laptop) are two sections, each with its own label.
    site_by_id = {}
    by_board: dict = defaultdict(list)
    for rec in records:
        if rec["site_id"] not in site_by_id:
            site_by_id[rec["site_id"]] = sites.get_site(db, rec["site_id"])
        by_board[(rec["site_id"], rec["board_id"])].append(rec)
    site_by_name = {s_["name"]: s_ for s_ in site_by_id.values()}
    names = defaultdict(set)
    for site_id, board_id in by_board:
        names[site_by_id[site_id]["name"]].add(site_id)
        names[(site_id, sites.get_board(db, board_id)["name"])].add(board_id)

    def _tell_apart(name, key, ident):
        return f"{name} (id {ident[:13]}…)" if len(names[key]) > 1 else name

    summary = {sev: {"readings": 0, "boards": []} for sev in ("alarm", "warning", "info")}
    boards = []
    for (site_id, board_id), recs in sorted(by_board.items(), key=lambda kv: (kv[1][0]["site"], kv[0][0],
                                                                              kv[1][0]["board"], kv[0][1])):
        s = site_by_id[site_id]
        b = sites.get_board(db, board_id)
        site_name = _tell_apart(s["name"], s["name"], site_id)
        board_name = _tell_apart(b["name"], (site_id, b["name"]), board_id)
        conflicted = sum(r.get("conflict", False) for r in recs)
        labels = sites.site_labels(s)
        colours = phase_colours.colours(s["colour_set"], "print")
        for sev in summary:
            hits = [r for r in recs if any(f["severity"] == sev for f in r["findings"])]
            summary[sev]["readings"] += len(hits)
            if hits:
                summary[sev]["boards"].append(board_name if len(site_by_id) == 1 else f"{site_name} / {board_name}")
        latest = max(recs, key=lambda r: r["taken_at"])
        rows = []
        corrections = []
        for r in sorted(recs, key=lambda r: r["taken_at"]):
            res, inp = r["results"], r["inputs"]
            rows.append({
                "taken": local_text(r["taken_at"]), "technician": r["technician"], "round": r["round"],
                "v_text": _entered(inp, ("va", "vb", "vc")) or _entered(inp, ("vab", "vbc", "vca")),
                "i_text": _entered(inp, ("ia", "ib", "ic")) + (f", N {inp['i_n']:g}" if inp.get("i_n") else ""),
                "vuf": _n(res["vuf_pct"]), "lvur": _n(res["lvur_pct"]), "rotation": res["rotation"] or "",
                "neutral": _n(res["i_n_calc"] if res["i_n_calc"] is not None else inp.get("i_n"), "{:.1f}"),
                "p_kw": _n(None if res["p_w"] is None else res["p_w"] / 1000.0), "pf": _n(res["pf"]),
                "version": r["version"], "note": r["note"], "conflict": r.get("conflict", False),
            })
            if r["version"] > 1 or r.get("conflict"):
                for v in versions.history(db, r["reading_id"]):
                    corrections.append({
                        "competing": v["is_head"] and r.get("conflict"),
                        "taken": local_text(r["taken_at"]), "version": v["version"],
                        "recorded": local_text(v["recorded_at"]), "by": v["recorded_by"], "reason": v["reason"],
                        "void": bool(v["void"]),
                        "values": ", ".join(f"{k}={val}" for k, val in versions.inputs_of(v).items()
                                            if k not in ("system", "standard", "nominal_v")),
                    })
        title = board_name if len(site_by_id) == 1 else f"{site_name} / {board_name}"
        boards.append({
            "name": title, "location": b["location"] if b else None, "system": b["system"] if b else "",
            "nominal_v": f"{b['nominal_v']:g}" if b and b["nominal_v"] else None,
            "label": _label(b, s["label_review_years"], on) if b else "—",
            "label_joined": [AF_FIELDS[f].format(v) for f, v, _ in
                             sites.joined_differences(db, "board", board_id, AF_FIELDS)],
            "findings": latest["findings"], "readings": rows,
            "corrections": corrections, "conflicts": conflicted,
            "svg": phasor_svg(_arrows(latest["inputs"], labels, colours), 220, latest["results"]["rotation"],
                              f"phasor diagram of {title}"),
        })
    crew = sorted({r["technician"] for r in records if r["technician"]})
    rounds = sorted({r["round"] for r in records if r["round"]})
    site_title = site or (", ".join(site_by_name) if site_by_name else "no readings")
    return _ENV.get_template("report.html.j2").render(
        site_title=site_title, day=day, generated=local_text(utc_now(), "%Y-%m-%d %H:%M"), version=__version__,
        crew=", ".join(crew), rounds=", ".join(rounds), summary=summary, boards=boards,
        sources=[(name, SOURCES[key]) for name, key in SOURCE_NAMES])
