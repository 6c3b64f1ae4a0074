"""Findings on the exact inputs of issue 12 ("Wrong results" and the worst false alarms).

Each test states the input a crew typed and what a commissioning engineer expects to read; the source of
each threshold is named beside it.
"""
import pytest
from test_analysis import BAL, codes, run


def finding(r, code):
    return next(f for f in r["findings"] if f["code"] == code)


# ---- 1. all three in phase; zero currents -------------------------------------------------------

def test_three_voltages_in_phase_is_unknown_rotation_and_an_alarm():
    # Issue 12 item 1: va=vb=vc=277, all angles 0. X1 = X2 = 0 (0 >= 2·0 was "ABC").
    # In-phase rule: |V1|, |V2| < 10 % of |V0| (fieldpad's own margin, rotation.py rule 4).
    (r,) = run({"va": 277, "vb": 277, "vc": 277, "va_deg": 0, "vb_deg": 0, "vc_deg": 0, "nominal_v": 480})
    assert r["rotation"] == "unknown"
    f = finding(r, "VOLTAGES_IN_PHASE")
    assert f["severity"] == "alarm" and "each voltage lead" in f["message"]
    assert "ROTATION_REVERSED" not in codes(r)


def test_line_to_line_set_in_phase_is_unknown_rotation_and_an_alarm():
    # The same on a delta typed line-to-line: 480 V at 0° on all three lines (X0 = 480, X1 = X2 = 0).
    (r,) = run({"system": "delta", "vab": 480, "vbc": 480, "vca": 480, "vab_deg": 0, "vbc_deg": 0, "vca_deg": 0})
    assert r["rotation"] == "unknown" and "VOLTAGES_IN_PHASE" in codes(r)


def test_zero_currents_rotate_neither_way():
    # Issue 12 item 1: with I1 = I2 = 0, "I1 >= 2·I2" was true; against ACB voltages that read as
    # "clamp on the wrong phase" at 0 A.
    acb = {**BAL, "vb_deg": 120, "vc_deg": -120, "ia": 0, "ib": 0, "ic": 0}
    (r,) = run(acb)
    assert r["rotation"] == "ACB"
    assert "CURRENT_SEQUENCE" not in codes(r)
    (r,) = run({**BAL, "ia": 0, "ib": 0, "ic": 0})
    assert "CURRENT_SEQUENCE" not in codes(r)
