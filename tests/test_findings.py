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


# ---- 2. neutral equal to the highest phase ------------------------------------------------------


def test_neutral_phasor_sum_equal_to_highest_phase_does_not_exceed():
    # Issue 12 item 2: one phase loaded, the others at 0 A: the neutral is that phase's current, and
    # |polar(12.7, θ)| may come out a hair above 12.7. Equal is not "exceeds" (common practice).
    for deg in (-30.0, -37.0, 12.3, 100.0, -171.0):
        (r,) = run({**BAL, "ia": 12.7, "ib": 0, "ic": 0, "ia_deg": deg, "ib_deg": -150, "ic_deg": 90})
        assert r["i_n_calc"] == pytest.approx(12.7, rel=1e-12)
        assert "NEUTRAL_OVERLOAD" not in codes(r), deg


# ---- 7. open phase at exactly one half ----------------------------------------------------------


def test_open_phase_on_three_wire_feed_at_exactly_half_is_lost():
    # Issue 12 item 7: 480/240/240 (C open: Vab whole, Vbc and Vca in series across it). Collapse
    # ratio 0.5 (common practice), "at or below".
    (r,) = run({"system": "delta", "vab": 480, "vbc": 240, "vca": 240, "nominal_v": 480})
    f = finding(r, "PHASE_LOST")
    assert f["severity"] == "alarm" and f["phase"] == "C"


# ---- 8. delta with the Vab angle left blank -----------------------------------------------------


def test_delta_with_blank_vab_angle_takes_it_as_zero_like_va():
    # Issue 12 item 8: a meter showing angles against Vab shows none for Vab itself.
    rec = {"system": "delta", "vab": 480, "vbc": 480, "vca": 480, "vbc_deg": -120, "vca_deg": 120, "nominal_v": 480}
    (r,) = run(rec)
    (full,) = run({**rec, "vab_deg": 0})
    assert r["basis"] == "line-to-line phasors (line-to-neutral equivalent)"
    assert r["rotation"] == "ABC" == full["rotation"]
    assert "MAGNITUDE_ONLY" not in codes(r)
    assert r["v1"] == pytest.approx(full["v1"]) and r["v1"] == pytest.approx(480 / 3**0.5)


# ---- 11. a dead phase shows no angle ------------------------------------------------------------


def test_dead_phase_without_angle_keeps_the_other_current_results():
    # Issue 12 item 11: Ic = 0 A and no angle (the meter shows none at 0 A): the zero phasor needs none.
    rec = {**BAL, "ic": 0}
    del rec["ic_deg"]
    (r,) = run(rec)
    (with_angle,) = run({**BAL, "ic": 0, "ic_deg": 0})
    for k in ("i1", "i2", "iuf_pct", "i_n_calc", "p_w", "q_var", "pf", "p_a_w", "p_b_w"):
        assert r[k] is not None, k
        assert r[k] == pytest.approx(with_angle[k]), k
    # Two phases of 100 A at 120° apart: the neutral carries 100 A (Kirchhoff's current law).
    assert r["i_n_calc"] == pytest.approx(100.0)
    assert r["p_c_w"] == pytest.approx(0.0, abs=1e-9)


# ---- 3. line-to-line quantities named by their pair ---------------------------------------------


def test_line_to_line_voltage_finding_names_the_pair():
    # Issue 12 item 3: on a delta the voltage compared with nominal is line-to-line: Vca 430 V on
    # 480 V nominal is -10.4 %, outside ANSI C84.1 Range B (-8.3 %); it is "C-A", not "C".
    (r,) = run({"system": "delta", "vab": 480, "vbc": 480, "vca": 430, "nominal_v": 480})
    f = finding(r, "VOLTAGE_OUT_OF_RANGE")
    assert f["phase"] == "C-A" and "on C-A is -10.4 %" in f["message"]


# ---- 10. arithmetic or vector apparent power ----------------------------------------------------


def test_s_va_says_whether_arithmetic_or_vector():
    # Issue 12 item 10. IEEE 1459-2010: arithmetic S = ΣV·I per phase; vector S = |P + jQ|.
    (wye,) = run(BAL)
    (delta,) = run(
        {
            "system": "delta",
            "vab": 480,
            "vbc": 480,
            "vca": 480,
            "vab_deg": 30,
            "vbc_deg": -90,
            "vca_deg": 150,
            "ia": 100,
            "ib": 100,
            "ic": 100,
            "ia_deg": -30,
            "ib_deg": -150,
            "ic_deg": 90,
        }
    )
    (none,) = run({"system": "delta", "vab": 480, "vbc": 480, "vca": 480})
    assert wye["s_va_method"] == "arithmetic" and wye["s_va"] == pytest.approx(3 * 277 * 100)
    assert delta["s_va_method"] == "vector" and delta["s_va"] == pytest.approx(delta["s_vector_va"])
    assert none["s_va"] is None and none["s_va_method"] is None


# ---- 5 and 9. sequence names that never contradict the unbalance -------------------------------


def test_acb_set_names_v1_the_sequence_turning_with_the_system():
    # Issue 12 item 9: an A-C-B set, slightly unbalanced. vuf_pct = |V2|/|V1| (IEC 61000-4-30 Ed.3 5.7.1)
    # with V1 the sequence that turns with the system (README "Conventions").
    (r,) = run({**BAL, "va": 277, "vb": 271, "vc": 280, "vb_deg": 120, "vc_deg": -120, "ib_deg": 90, "ic_deg": -150})
    assert r["rotation"] == "ACB"
    assert r["v1"] > 250 and r["v2"] < 5
    assert r["vuf_pct"] == pytest.approx(100 * r["v2"] / r["v1"], abs=1e-3)


def test_current_unbalance_against_the_system_rotation():
    # Issue 12 item 5: clamps in A-C-B order on an A-B-C supply. Against the system's rotation the
    # currents are all "negative sequence": i2 = 100 A, i1 = 0, so iuf_pct is no small number.
    (r,) = run({**BAL, "ib_deg": 90, "ic_deg": -150})
    assert r["rotation"] == "ABC"
    assert r["i2"] == pytest.approx(100.0) and r["i1"] == pytest.approx(0.0, abs=1e-9)
    assert r["iuf_pct"] is None  # |I2|/|I1| with I1 = 0 has no value
    (ok,) = run({**BAL, "ia": 100, "ib": 90, "ic": 110})
    assert ok["i1"] > ok["i2"] and ok["iuf_pct"] == pytest.approx(100 * ok["i2"] / ok["i1"], abs=1e-3)


# ---- 6. ANSI C84.1 on the table's own bases; no low-voltage table on medium voltage ------------


def test_ansi_range_a_on_the_tables_120_v_base():
    # Issue 12 item 6: 114.05 V on a 208Y/120 board. ANSI C84.1-2020 Table 1 (from memory): Range A
    # service voltage 114-126 V on the 120 V base, so 114.05 V is inside Range A (on 208/√3 = 120.09 V it
    # was -5.03 %, "Range B").
    (r,) = run({**BAL, "nominal_v": 208, "va": 114.05, "vb": 114.05, "vc": 114.05})
    assert not {"VOLTAGE_RANGE_B", "VOLTAGE_OUT_OF_RANGE"} & codes(r)
    assert r["v_dev_max_pct"] == pytest.approx(100 * (114.05 - 120) / 120, abs=1e-3)
    (low,) = run({**BAL, "nominal_v": 208, "va": 113.9, "vb": 114.05, "vc": 114.05})
    assert finding(low, "VOLTAGE_RANGE_B")["phase"] == "A"


def test_medium_voltage_gets_no_low_voltage_range():
    # Issue 12 item 6: 4160 V is medium voltage (ANSI C84.1 has another table for it, whose values
    # fieldpad does not carry): "no range known", never the low-voltage limits.
    (r,) = run({**BAL, "nominal_v": 4160, "va": 2200, "vb": 2400, "vc": 2400})
    assert not {"VOLTAGE_RANGE_B", "VOLTAGE_OUT_OF_RANGE"} & codes(r)
    f = finding(r, "VOLTAGE_NO_RANGE")
    assert f["severity"] == "info" and f["value"] == 4160 and "Check the nominal" in f["message"]
    assert r["v_dev_max_pct"] is None


def test_iec_on_its_table_base():
    # IEC 60038:2009 Table 1 (from memory): 230/400 V, ±10 % of 230 V: 207 V is the limit.
    (r,) = run({**BAL, "nominal_v": 400, "standard": "iec", "va": 207.5, "vb": 230, "vc": 230})
    assert "VOLTAGE_OUT_OF_RANGE" not in codes(r)
    (r,) = run({**BAL, "nominal_v": 400, "standard": "iec", "va": 206.5, "vb": 230, "vc": 230})
    assert finding(r, "VOLTAGE_OUT_OF_RANGE")["phase"] == "A"


# ---- 4. high-leg delta --------------------------------------------------------------------------


def test_plain_120_set_has_no_high_leg():
    # Issue 12 item 4: 120/120/120 on a "high-leg delta": no leg is √3/2 of line-to-line (208 of 240).
    (r,) = run(
        {
            "system": "high-leg-delta",
            "nominal_v": 240,
            "vab": 240,
            "vbc": 240,
            "vca": 240,
            "va": 120,
            "vb": 120,
            "vc": 120,
        }
    )
    assert r["high_leg"] is None and "HIGH_LEG_POSITION" not in codes(r)
    assert finding(r, "HIGH_LEG_NOT_FOUND")["severity"] == "info"


def test_high_leg_delta_has_no_120_degree_neutral_estimate():
    # Issue 12 item 4: the magnitude-only neutral estimate assumes 120° spacing; A and C are 180° apart
    # about the centre tap, so no estimate is given (NaN -> null), never a made-up number.
    (r,) = run(
        {
            "system": "high-leg-delta",
            "nominal_v": 240,
            "vab": 240,
            "vbc": 240,
            "vca": 240,
            "va": 120,
            "vb": 208,
            "vc": 120,
            "ia": 30,
            "ib": 10,
            "ic": 20,
        }
    )
    assert r["high_leg"] == "B"
    assert r["i_n_est"] is None


# ---- the worst false alarms ---------------------------------------------------------------------


def severity(r, code):
    return {f["severity"] for f in r["findings"] if f["code"] == code}


def test_healthy_208y120_panel_at_40_34_46_a_is_no_warning():
    # Issue 12: a healthy 208Y/120 distribution panel, 40/34/46 A (unbalance 15 % > 10 %, common practice):
    # uneven single-phase loads are normal on a 4-wire board, so an info at most.
    k = {"va": 120, "vb": 120, "vc": 120, "nominal_v": 208, "ia": 40, "ib": 34, "ic": 46}
    (r,) = run({**BAL, **k})
    assert severity(r, "CURRENT_UNBALANCE") == {"info"}
    assert not {f["severity"] for f in r["findings"]} & {"warning", "alarm"}


def test_split_phase_uneven_legs_is_info():
    (r,) = run(
        {
            "system": "split-phase",
            "nominal_v": 240,
            "va": 120,
            "vb": 120,
            "va_deg": 0,
            "vb_deg": 180,
            "ia": 50,
            "ib": 20,
            "ia_deg": 0,
            "ib_deg": 180,
        }
    )
    assert severity(r, "CURRENT_UNBALANCE") == {"info"}


def test_current_unbalance_on_loaded_delta_is_a_warning_and_light_delta_an_info():
    base = {"system": "delta", "vab": 480, "vbc": 480, "vca": 480, "nominal_v": 480}
    (r,) = run({**base, "ia": 100, "ib": 80, "ic": 100})  # 12.5 % > 10 % (common practice)
    assert severity(r, "CURRENT_UNBALANCE") == {"warning"}
    (r,) = run({**base, "ia": 5, "ib": 3, "ic": 5})  # light: below 10 A (fieldpad's own choice)
    assert severity(r, "CURRENT_UNBALANCE") == {"info"}


def test_neutral_above_highest_phase_is_never_an_alarm():
    # Compared with the phases, not the neutral's rating (none is entered): a warning, an info when light.
    (r,) = run({**BAL, "ia": 100, "ib": 10, "ic": 10, "i_n": 140})
    assert severity(r, "NEUTRAL_OVERLOAD") == {"warning"}
    (r,) = run({**BAL, "ia": 4, "ib": 0.5, "ic": 0.5, "i_n": 5})
    assert severity(r, "NEUTRAL_OVERLOAD") == {"info"}
    assert "compare it with the neutral conductor's rating" in finding(r, "NEUTRAL_OVERLOAD")["message"].lower()


def test_light_phase_at_pf_minus_0_02_is_not_a_reversed_ct():
    # Issue 12: PF -0.02 on a light phase is a near-quadrature load, not a reversed CT (margin PF <= -0.25,
    # fieldpad's own). Current on B at -120 - 91.15° gives PF cos(91.15°) = -0.02.
    (r,) = run({**BAL, "ib": 2, "ib_deg": -120 - 91.15})
    assert r["pf_b"] == pytest.approx(-0.02, abs=1e-3)
    assert "CT_REVERSED" not in codes(r)
    (r,) = run({**BAL, "ib_deg": 30})  # a reversed CT at PF -0.87 is still found
    assert severity(r, "CT_REVERSED") == {"alarm"}


# ---- silent wiring faults -----------------------------------------------------------------------


def test_clamps_moved_one_phase_on_are_named():
    # Issue 12: A's clamp on B, B's on C, C's on A. BAL's loads lag 30°; the clamp on A then reads B's
    # current (-150°): S_a = Va·Ib* at 150°, PF -0.87 on every phase. The other way round: -90°, PF 0.
    (r,) = run({**BAL, "ia_deg": -150, "ib_deg": 90, "ic_deg": -30})
    f = finding(r, "CLAMPS_ROTATED")
    assert f["severity"] == "warning" and "A's on B" in f["message"]
    (r,) = run({**BAL, "ia_deg": 90, "ib_deg": -30, "ic_deg": -150})
    assert "CLAMPS_ROTATED" in codes(r)
    (ok,) = run(BAL)
    assert "CLAMPS_ROTATED" not in codes(ok)


def test_open_neutral_from_balanced_line_to_line_and_shifted_line_to_neutral():
    # Issue 12: line-to-line balanced at 480 V, line-to-neutral 217/311/311 (the star point moved toward A).
    # Magnitudes only: PVUR 22 % > 5 % with LVUR 0 % <= 2 % (fieldpad's own lines, common practice).
    # 217 V is -21.7 % of 277 V, outside ANSI C84.1 Range B: the shift is then an alarm, shown before the
    # out-of-range voltage it causes.
    (r,) = run({"va": 217, "vb": 311, "vc": 311, "vab": 480, "vbc": 480, "vca": 480, "nominal_v": 480})
    f = finding(r, "NEUTRAL_SHIFT")
    assert f["severity"] == "alarm" and "open or floating neutral" in f["message"]
    assert r["findings"][0]["code"] == "NEUTRAL_SHIFT"
    # A smaller shift inside the range: a warning (PVUR 6 % > 5 %, LVUR 0 %).
    (r,) = run({"va": 261, "vb": 285, "vc": 285, "vab": 480, "vbc": 480, "vca": 480, "nominal_v": 480})
    assert finding(r, "NEUTRAL_SHIFT")["severity"] == "warning"
    (ok,) = run(BAL)
    assert "NEUTRAL_SHIFT" not in codes(ok)


def test_two_cts_reversed_say_polarity():
    # Issue 12: CTs on B and C reversed (their currents turned by 180°), A right: PF -0.87 on B and C.
    (r,) = run({**BAL, "ib_deg": 30, "ic_deg": -90})
    f = finding(r, "CT_TWO_REVERSED")
    assert f["phase"] == "A" and "polarity" in f["message"]
    assert "CT_REVERSED" not in codes(r)


# ---- checks that catch wiring, and the board inputs (issue 12 "What to build" 1 and 2) ----------


def run_board(*records):
    from fieldpad.core.readings import validate_record
    from fieldpad.core.results import analyze_records

    clean = []
    for rec in records:
        c, problems = validate_record(rec, board_inputs=True)
        assert problems == []
        clean.append(c)
    return analyze_records(clean)


DELTA = {
    "system": "delta",
    "nominal_v": 480,
    "vab": 480,
    "vbc": 480,
    "vca": 480,
    "vab_deg": 30,
    "vbc_deg": -90,
    "vca_deg": 150,
    "ia": 100,
    "ib": 100,
    "ic": 100,
    "ia_deg": -30,
    "ib_deg": -150,
    "ic_deg": 90,
}


def test_line_to_line_angles_that_cannot_close_are_named_and_vuf_from_magnitudes():
    # Kirchhoff's voltage law: Vab + Vbc + Vca = 0. Vca typed at 120° instead of 150°: the sum is 2·480·sin 15°
    # = 248 V, 52 % of 480 (margin 5 %, fieldpad's own).
    (r,) = run({**DELTA, "vca_deg": 120})
    f = finding(r, "LL_NOT_CLOSED")
    assert f["severity"] == "warning" and f["value"] == pytest.approx(100 * 2 * 480 * 0.258819 / 480, abs=0.1)
    assert r["basis"] == "line-to-line magnitudes only (line-to-neutral equivalent)" and r["vuf_pct"] == 0.0
    (ok,) = run(DELTA)
    assert "LL_NOT_CLOSED" not in codes(ok) and ok["findings"] == []


def test_measured_line_to_line_against_derived_from_line_to_neutral():
    # Vab = Va - Vb (definition): 277 V at 120° apart gives 479.8 V. B's lead on C: Vb reads Vc's 277 V at 120°.
    (ok,) = run({**BAL, "vab": 480, "vbc": 480, "vca": 480})
    assert "LL_MISMATCH" not in codes(ok)
    (r,) = run({**BAL, "vb_deg": 120, "vab": 480, "vbc": 480, "vca": 480})
    assert r["findings"][0]["code"] == "LL_MISMATCH" and "each voltage lead" in r["findings"][0]["message"]


def test_three_wire_currents_must_sum_to_zero():
    # Kirchhoff's current law on a 3-wire feed; Ic read at half (a clamp on the wrong range): |sum| = 50 A.
    (r,) = run({**DELTA, "ic": 50})
    f = finding(r, "CURRENT_SUM")
    assert f["severity"] == "warning" and f["value"] == pytest.approx(50.0, abs=1e-6)
    assert r["findings"][0]["code"] == "CURRENT_SUM"


def test_all_cts_reversed_or_an_exporting_board_is_an_info():
    (r,) = run({**BAL, "ia_deg": 150, "ib_deg": 30, "ic_deg": -90})
    assert [f["code"] for f in r["findings"]] == ["POWER_TO_SUPPLY"]
    assert r["findings"][0]["severity"] == "info" and "not a source" in r["findings"][0]["message"]


def test_split_phase_lost_neutral_legs_80_160():
    # Legs that still add up to 240 V but are 80/160: the neutral moved (issue 12), not a lost leg.
    (r,) = run({"system": "split-phase", "nominal_v": 240, "va": 80, "vb": 160, "va_deg": 0, "vb_deg": 180})
    assert r["findings"][0]["code"] == "NEUTRAL_SHIFT" and r["findings"][0]["severity"] == "alarm"
    assert "PHASE_LOST" not in codes(r)
    (r,) = run({"system": "split-phase", "nominal_v": 240, "va": 5, "vb": 120, "va_deg": 0, "vb_deg": 180})
    assert "PHASE_LOST" in codes(r)


def test_high_leg_delta_halves_100_140():
    (r,) = run(
        {
            "system": "high-leg-delta",
            "nominal_v": 240,
            "vab": 240,
            "vbc": 240,
            "vca": 240,
            "va": 100,
            "vb": 208,
            "vc": 140,
        }
    )
    f = finding(r, "NEUTRAL_SHIFT")
    assert f["severity"] == "warning" and f["value"] == pytest.approx(100 * 20 / 120, abs=1e-4)


def test_displacement_angle_is_an_alternative_to_absolute_current_angles():
    # 30 lag on each phase is the same reading as BAL's absolute -30, -150, 90 (README "Board inputs").
    rec = {k: v for k, v in BAL.items() if not k.startswith("i")}
    (a,) = run_board(
        {**rec, "ia": 100, "ib": 100, "ic": 100, "ia_vi_deg": "30 lag", "ib_vi_deg": "30 lag", "ic_vi_deg": "30 lag"}
    )
    (b,) = run(BAL)
    for k in ("p_w", "q_var", "i1", "i2", "pf_b"):
        assert a[k] == pytest.approx(b[k]), k
    (d,) = run_board(
        {
            **{k: v for k, v in DELTA.items() if not k.endswith(("a_deg", "b_deg", "c_deg")) or k.startswith("v")},
            "ia_vi_deg": -30,
            "ib_vi_deg": -30,
            "ic_vi_deg": -30,
        }
    )
    (e,) = run(DELTA)
    assert d["p_w"] == pytest.approx(e["p_w"]) and d["findings"] == []


def test_board_inputs_are_checked():
    from fieldpad.core.readings import validate_record

    _, problems = validate_record({**BAL, "rating_a": 0, "purpose": "pump", "ia_vi_deg": 10}, board_inputs=True)
    fields = {f for f, _ in problems}
    assert fields == {"rating_a", "purpose", "ia_vi_deg"}
    _, problems = validate_record({**BAL, "rating_a": 100})
    assert problems == [("rating_a", "unknown field")]  # only where the caller takes board inputs


def test_neutral_against_its_rating():
    # A neutral of 140 A over the highest phase (100 A): with a 200 A neutral rating nothing to flag as
    # overload; over a 125 A rating an alarm.
    k = {**BAL, "ia": 100, "ib": 10, "ic": 10, "i_n": 140}
    (r,) = run_board({**k, "neutral_rating_a": 200})
    assert "NEUTRAL_OVERLOAD" not in codes(r)
    (r,) = run_board({**k, "neutral_rating_a": 125})
    f = finding(r, "NEUTRAL_OVERLOAD")
    assert f["severity"] == "alarm" and f["threshold"] == 125


def test_expected_rotation_and_purpose():
    acb = {**BAL, "vb_deg": 120, "vc_deg": -120, "ib_deg": 90, "ic_deg": -150}
    (r,) = run_board({**acb, "expected_rotation": "acb"})
    assert "ROTATION_REVERSED" not in codes(r)
    (r,) = run_board({**BAL, "expected_rotation": "ACB"})
    assert "ROTATION_REVERSED" in codes(r) and "not the ACB expected" in finding(r, "ROTATION_REVERSED")["message"]
    # Current unbalance (12.5 % > 10 %, common practice): a warning on a motor feeder, an info on a panel;
    # light load judged against the rating (below 10 % of 400 A).
    unb = {**BAL, "ia": 100, "ib": 80, "ic": 100}
    (m,) = run_board({**unb, "purpose": "motor"})
    (p,) = run_board({**unb, "purpose": "distribution"})
    (light,) = run_board({**unb, "purpose": "motor", "rating_a": 1200})
    assert severity(m, "CURRENT_UNBALANCE") == {"warning"}
    assert severity(p, "CURRENT_UNBALANCE") == {"info"} and severity(light, "CURRENT_UNBALANCE") == {"info"}


def test_every_definition_says_what_to_check_and_never_that_it_is_safe():
    from fieldpad.core.registry import REGISTRY
    from fieldpad.core.thresholds import SOURCES

    for d in REGISTRY.values():
        assert d.source == "voltage" or d.source in SOURCES, d.code
        assert "safe" not in (d.seen + d.check).lower(), d.code
        assert d.check or d.code == "ROTATION_UNKNOWN", d.code  # its reason text says what to check
