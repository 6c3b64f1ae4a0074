"""The terminal phasor drawing and the sheet's text helpers."""

from datetime import date

from fieldpad.ui.phasor_art import Arrow, draw
from fieldpad.ui.sheet_model import LL_MAG, LN, caution_lines, cells, understood


def test_letters_at_the_tips_and_size():
    arrows = [
        Arrow("A", 277, 0, "#ffffff", "V"),
        Arrow("B", 277, -120, "#ffffff", "V"),
        Arrow("C", 277, 120, "#ffffff", "V"),
        Arrow("Ia", 100, -30, "#ffffff", "I"),
    ]
    text = draw(arrows, 38, 12, "ABC")
    lines = text.plain.split("\n")
    assert len(lines) == 12 and all(len(line) <= 38 for line in lines)
    body = "\n".join(lines[:-1])
    for label in ("A", "B", "C", "Ia"):
        assert label in body
    assert "rotation ABC" in lines[-1]
    # A points right (0°): its letter is in the right half, on the middle line
    mid = [line for line in lines if "A" in line and "Ia" not in line][0]
    assert mid.index("A") > 19


def test_grows_with_the_terminal():
    arrows = [Arrow("A", 1, 90, "#fff", "V")]
    small, big = draw(arrows, 30, 10), draw(arrows, 80, 30)
    assert len(big.plain.split("\n")) == 30 and len(small.plain.split("\n")) == 10


def test_reading_order_of_cells():
    assert [c.field for c in cells(LN, "wye")][:5] == ["va", "va_deg", "ia", "ia_deg", "vb"]
    assert [c.field for c in cells(LL_MAG, "delta")] == [
        "vab",
        "ia",
        "ia_deg",
        "vbc",
        "ib",
        "ib_deg",
        "vca",
        "ic",
        "ic_deg",
    ]
    assert cells(LN, "split-phase")[-1].field == "i_n" and len(cells(LN, "split-phase")) == 9


def test_understood_says_how_a_value_was_read():
    assert understood("vb_deg", "240") == ("VB angle = 240° (same as -120°, lagging)", True)
    assert understood("va", "277,5 V")[0] == "VA = 277.5 V"
    assert understood("vab", "480", ("L1", "L2", "L3"))[0] == "VL1-L2 = 480 V"  # the site's labels, in words
    msg, ok = understood("ia", "12 V")
    assert not ok and "not a unit for a current" in msg


def test_caution_banner_label_states():
    board = {"af_incident_energy_cal_cm2": None, "af_ppe": None}
    assert caution_lines(board, 5)[2] is True and "NO ARC-FLASH LABEL" in caution_lines(board, 5)[1]
    old = {"af_incident_energy_cal_cm2": 8.0, "af_ppe": "2", "af_label_date": "2018-01-01"}
    first, second, problem = caution_lines(old, 5, today=date(2026, 12, 1))
    assert problem and second.startswith("⚠ LABEL EXPIRED: dated 2018-01-01, older than 5 years")
    assert "Qualified persons" in first and "Local codes govern" in first
    fresh = {**old, "af_label_date": "2025-01-01"}
    assert caution_lines(fresh, 5, today=date(2026, 12, 1))[2] is False
