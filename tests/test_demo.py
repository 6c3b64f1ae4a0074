"""The demo site: invented data that imports cleanly and shows the problems it is built to show."""

from datetime import date
from pathlib import Path

from fieldpad.demo_site import FIXED_DAY, boards_json, build_demo, generate, records_csv
from fieldpad.report.export import export_records

DEMO = Path(__file__).resolve().parents[1] / "demo"


def test_plain_files_match_the_generator():
    assert (DEMO / "readings.csv").read_text(encoding="utf-8") == records_csv(generate(FIXED_DAY))
    assert (DEMO / "boards.json").read_text(encoding="utf-8") == boards_json()
    assert "INVENTED" in (DEMO / "README.md").read_text(encoding="utf-8")


def test_demo_shows_each_deliberate_problem(tmp_path):
    build_demo(tmp_path / "demo.db", day=date(2026, 3, 10))
    from fieldpad.storage.db import open_db

    recs = export_records(open_db(tmp_path / "demo.db"))
    codes = {}
    for r in recs:
        codes.setdefault(r["board"], set()).update(f["code"] for f in r["findings"])
    assert "CT_REVERSED" in codes["DP-2"]
    assert "ROTATION_REVERSED" in codes["MCC-2"]
    assert "LVUR_DERATE" in codes["MCC-1"]
    assert "NEUTRAL_OVERLOAD" in codes["LP-1"]
    assert "PHASE_LOST" in codes["PP-3"]
    assert "HIGH_LEG_POSITION" in codes["HL-1"]
    assert not {c for c in codes["MSB-1"] if not c.startswith("NEUTRAL_MISMATCH")}
    assert len(recs) == 23
