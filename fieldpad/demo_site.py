"""The demo site: INVENTED data for trying fieldpad, in a scenario of our own.

"Fernwick Cold Store" does not exist.  Its boards, readings, people and
problems are made up: a refrigerated warehouse with a dozen boards of mixed
systems, walked twice in one day (rounds AM and PM), with the problems a crew
really meets: a reversed CT, swapped supply leads, an unbalanced feeder that
derates its motors, an overloaded shared neutral, a lost phase, a high leg in
the wrong place, a board with no arc-flash label and one whose label is old.

The readings are generated (seeded, so always the same) with meter-like noise.
``python -m fieldpad.demo_site demo/`` writes them as plain files under
``demo/`` (boards.json and readings.csv, for a fixed demo day).
"""

from __future__ import annotations

import csv
import io
import json
import random
import sys
from datetime import date, datetime, time, timedelta
from pathlib import Path

SITE = {
    "name": "Fernwick Cold Store (DEMO, invented)",
    "description": "Invented refrigerated warehouse for trying fieldpad. Not a real place.",
    "voltage_standard": "ansi",
    "phase_labels": "ABC",
    "colour_set": "na-480y277",
}
CREW = ("R. Okafor (demo)", "J. Lindqvist (demo)")
FIXED_DAY = date(2026, 3, 10)

# name, location, kind, system, nominal, label (energy, distance, boundary, ppe, date) or None, problem
BOARDS = [
    ("MSB-1", "Main electrical room", "switchboard", "wye", 480, (8.2, 455, 1520, "2", "2023-05-02"), "normal"),
    ("MCC-1", "Compressor room", "MCC", "delta", 480, (12.5, 455, 2100, "3", "2022-11-15"), "unbalance"),
    ("MCC-2", "Evaporator mezzanine", "MCC", "delta", 480, (6.1, 455, 1200, "2", "2023-05-02"), "swapped"),
    (
        "DP-2",
        "Loading dock corridor",
        "distribution board",
        "wye",
        480,
        (4.4, 455, 980, "1", "2023-05-02"),
        "ct_reversed",
    ),
    ("LP-1", "Office block riser", "panelboard", "wye", 208, (1.2, 455, 430, "1", "2024-02-20"), "neutral"),
    ("LP-2", "Freezer hall east", "panelboard", "wye", 208, (1.6, 455, 520, "1", "2024-02-20"), "normal"),
    ("PP-3", "Dock door 6", "panelboard", "wye", 208, None, "lost_phase"),
    ("HL-1", "Maintenance shop", "panelboard", "high-leg-delta", 240, (2.0, 455, 610, "1", "2024-02-20"), "high_leg"),
    ("OFC-1", "Front office", "panelboard", "split-phase", 240, (0.9, 455, 300, "1", "2024-02-20"), "normal"),
    (
        "SKD-1",
        "Blast-freezer skid (IEC)",
        "distribution board",
        "wye",
        400,
        (3.3, 455, 800, "1", "2024-06-11"),
        "normal_iec",
    ),
    ("CH-1", "Forklift charging", "panelboard", "wye", 480, (5.0, 455, 1100, "2", "2023-05-02"), "no_angles"),
    ("MSB-2", "Old wing", "switchboard", "wye", 480, (9.8, 610, 1800, "2", "2017-04-03"), "old_label"),
]


def _noise(rng, x, rel):
    return x * (1.0 + rel * rng.gauss(0, 1))


def _fmt(x, nd=1):
    return f"{x:.{nd}f}"


def reading_for(board, rng, round_no: int) -> dict:
    """Invented meter values for one board in one round (text, as typed)."""
    name, _loc, _kind, system, nominal, _label, problem = board
    load = 0.75 if round_no == 0 else 0.9
    rec = {}
    if system == "split-phase":
        leg = nominal / 2
        rec.update(
            va=_fmt(_noise(rng, leg * 1.01, 0.003)),
            vb=_fmt(_noise(rng, leg * 0.995, 0.003)),
            va_deg="0",
            vb_deg=_fmt(180 + rng.gauss(0, 0.3)),
            ia=_fmt(_noise(rng, 62 * load, 0.02)),
            ib=_fmt(_noise(rng, 41 * load, 0.02)),
            ia_deg=_fmt(-12 + rng.gauss(0, 1)),
            ib_deg=_fmt(168 + rng.gauss(0, 1)),
        )
        return rec
    if system == "delta":
        vll = nominal * 1.0
        mags = [vll, vll, vll]
        if problem == "unbalance":
            mags = [vll * 1.012, vll * 1.004, vll * 0.975]
        angles = [30.0, -90.0, 150.0]
        if problem == "swapped":
            angles = [-30.0, 90.0, -150.0]  # two supply leads swapped: A-C-B (Vab = √3·Va∠-30° for ACB)
        rec.update(
            vab=_fmt(_noise(rng, mags[0], 0.002)),
            vbc=_fmt(_noise(rng, mags[1], 0.002)),
            vca=_fmt(_noise(rng, mags[2], 0.002)),
        )
        if problem != "unbalance":
            rec.update(
                vab_deg=_fmt(angles[0] + rng.gauss(0, 0.3)),
                vbc_deg=_fmt(angles[1] + rng.gauss(0, 0.3)),
                vca_deg=_fmt(angles[2] + rng.gauss(0, 0.3)),
            )
        i = 180 * load
        rec.update(
            ia=_fmt(_noise(rng, i * (1.08 if problem == "unbalance" else 1), 0.02)),
            ib=_fmt(_noise(rng, i, 0.02)),
            ic=_fmt(_noise(rng, i * (0.86 if problem == "unbalance" else 1), 0.02)),
        )
        if problem != "unbalance":
            cur = [-25.0, -145.0, 95.0] if problem != "swapped" else [-25.0, 95.0, -145.0]
            rec.update(
                ia_deg=_fmt(cur[0] + rng.gauss(0, 1)),
                ib_deg=_fmt(cur[1] + rng.gauss(0, 1)),
                ic_deg=_fmt(cur[2] + rng.gauss(0, 1)),
            )
        return rec
    if system == "high-leg-delta":
        vll = nominal
        ln = [vll / 2, vll * 0.866, vll / 2]
        if problem == "high_leg":
            ln = [vll / 2, vll / 2, vll * 0.866]  # the high leg landed on C
        rec.update(
            va=_fmt(_noise(rng, ln[0], 0.003)),
            vb=_fmt(_noise(rng, ln[1], 0.003)),
            vc=_fmt(_noise(rng, ln[2], 0.003)),
            vab=_fmt(_noise(rng, vll, 0.002)),
            vbc=_fmt(_noise(rng, vll, 0.002)),
            vca=_fmt(_noise(rng, vll, 0.002)),
            ia=_fmt(_noise(rng, 48 * load, 0.03)),
            ib=_fmt(_noise(rng, 30 * load, 0.03)),
            ic=_fmt(_noise(rng, 45 * load, 0.03)),
        )
        return rec
    # wye
    vln = nominal / 3**0.5
    v = [vln, vln, vln]
    if problem == "lost_phase":
        v = [vln, vln, vln * 0.08]
    pf_ang = -18.0 if nominal >= 400 else -12.0
    i_base = {208: 85.0, 400: 140.0, 480: 320.0}[nominal] * load
    i = [i_base, i_base * 0.93, i_base * 1.04]
    if problem == "neutral":
        i = [i_base * 1.1, i_base * 0.55, i_base * 0.95]
    if problem == "lost_phase":
        i = [i_base * 0.8, i_base * 0.85, 0.0]
    rec.update(va=_fmt(_noise(rng, v[0], 0.003)), vb=_fmt(_noise(rng, v[1], 0.003)), vc=_fmt(_noise(rng, v[2], 0.003)))
    rec.update(ia=_fmt(_noise(rng, i[0], 0.02)), ib=_fmt(_noise(rng, i[1], 0.02)), ic=_fmt(_noise(rng, i[2], 0.02)))
    if problem != "no_angles":
        rec.update(va_deg="0", vb_deg=_fmt(-120 + rng.gauss(0, 0.3)), vc_deg=_fmt(120 + rng.gauss(0, 0.3)))
        ib_deg = -120 + pf_ang + rng.gauss(0, 1)
        if problem == "ct_reversed":
            ib_deg += 180.0
        rec.update(
            ia_deg=_fmt(pf_ang + rng.gauss(0, 1)),
            ib_deg=_fmt(((ib_deg + 180) % 360) - 180),
            ic_deg=_fmt(120 + pf_ang + rng.gauss(0, 1)),
        )
    if problem == "neutral":
        rec["i_n"] = _fmt(_noise(rng, i_base * 1.15, 0.02))  # triplen harmonics in the shared neutral
    elif system == "wye" and problem in ("normal", "normal_iec"):
        rec["i_n"] = _fmt(_noise(rng, i_base * 0.09, 0.05))
    return rec


def generate(day: date) -> list[dict]:
    """Every invented reading of the demo day, as import records (local time of ``day``)."""
    rng = random.Random(20260310)
    out = []
    for round_no, (label, start) in enumerate((("AM", time(8, 0)), ("PM", time(13, 30)))):
        t = datetime.combine(day, start).astimezone()
        for k, board in enumerate(BOARDS):
            if board[0] == "CH-1" and round_no == 1:
                continue  # the charging area was closed in the afternoon
            t += timedelta(minutes=rng.randint(6, 14))
            rec = {
                "site": SITE["name"],
                "board": board[0],
                "taken_at": t.isoformat(timespec="seconds"),
                "technician": CREW[k % 2],
                "round": label,
                "system": board[3],
                "nominal_v": str(board[4]),
                "instrument": "demo meter",
                "note": "",
            }
            if board[6] == "normal_iec":
                rec["standard"] = "iec"
            rec.update(reading_for(board, rng, round_no))
            out.append(rec)
    return out


def build_demo(path, day: date | None = None) -> None:
    """Create a fresh demo database at ``path`` (must not exist), readings on ``day`` (default today)."""
    from .storage import rounds, sites
    from .storage.db import open_db
    from .storage.importer import import_bytes

    path = Path(path)
    if path.exists():
        raise FileExistsError(path)
    db = open_db(path)
    sid = sites.create_site(
        db,
        SITE["name"],
        description=SITE["description"],
        voltage_standard=SITE["voltage_standard"],
        phase_labels=SITE["phase_labels"],
        colour_set=SITE["colour_set"],
    )
    for name, loc, kind, system, nominal, label, _problem in BOARDS:
        af = {}
        if label:
            e, wd, ab, ppe, dated = label
            af = dict(
                af_incident_energy_cal_cm2=e,
                af_working_distance_mm=wd,
                af_boundary_mm=ab,
                af_ppe=ppe,
                af_label_date=dated,
            )
        sites.create_board(
            db,
            sid,
            name,
            system=system,
            nominal_v=nominal,
            location=loc,
            kind=kind,
            frequency_hz=50 if nominal == 400 else 60,
            # The IEC skid on an ANSI site: its own standard, the board's override (a site mixes them).
            **({"voltage_standard": "iec"} if nominal == 400 else {}),
            **af,
        )
    rep = import_bytes(db, records_csv(generate(day or date.today())).encode())
    if rep.problems:
        raise RuntimeError("demo data does not import: " + "; ".join(rep.problems[:5]))
    for r in rounds.list_rounds(db, sid):
        rounds.finish_round(db, r["id"], note="demo round")
    db.close()


FIELDS = (
    "site",
    "board",
    "taken_at",
    "technician",
    "round",
    "instrument",
    "note",
    "system",
    "nominal_v",
    "standard",
    "va",
    "vb",
    "vc",
    "va_deg",
    "vb_deg",
    "vc_deg",
    "vab",
    "vbc",
    "vca",
    "vab_deg",
    "vbc_deg",
    "vca_deg",
    "ia",
    "ib",
    "ic",
    "ia_deg",
    "ib_deg",
    "ic_deg",
    "i_n",
)


def records_csv(records: list[dict]) -> str:
    buf = io.StringIO()
    w = csv.DictWriter(buf, FIELDS, lineterminator="\n")
    w.writeheader()
    for r in records:
        w.writerow({f: r.get(f, "") for f in FIELDS})
    return buf.getvalue()


def boards_json() -> str:
    keys = ("name", "location", "kind", "system", "nominal_v", "arc_flash_label", "deliberate_problem")
    return (
        json.dumps(
            {
                "note": "INVENTED demo data; not a real site.",
                "site": SITE,
                "boards": [dict(zip(keys, b)) for b in BOARDS],
            },
            indent=2,
        )
        + "\n"
    )


def write_files(folder) -> None:
    folder = Path(folder)
    (folder / "boards.json").write_text(boards_json(), encoding="utf-8")
    (folder / "readings.csv").write_text(records_csv(generate(FIXED_DAY)), encoding="utf-8")


if __name__ == "__main__":  # pragma: no cover
    write_files(sys.argv[1] if len(sys.argv) > 1 else "demo")
