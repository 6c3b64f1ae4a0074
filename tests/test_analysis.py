"""The full analysis on whole readings: each system type and the findings a crew meets."""

import numpy as np
import pytest

from fieldpad.core.findings import findings_lists
from fieldpad.core.readings import validate_record
from fieldpad.core.results import RESULT_FIELDS, analyze_records
from fieldpad.core.thresholds import Thresholds

BAL = {
    "va": 277,
    "vb": 277,
    "vc": 277,
    "va_deg": 0,
    "vb_deg": -120,
    "vc_deg": 120,
    "ia": 100,
    "ib": 100,
    "ic": 100,
    "ia_deg": -30,
    "ib_deg": -150,
    "ic_deg": 90,
    "nominal_v": 480,
}


def run(*records, thresholds=None):
    clean = []
    for r in records:
        c, problems = validate_record(r)
        assert problems == []
        clean.append(c)
    return analyze_records(clean, thresholds)


def codes(result):
    return {f["code"] for f in result["findings"]}


def test_balanced_wye_has_no_findings_and_all_contract_fields():
    (r,) = run(BAL)
    assert list(r)[:26] == list(RESULT_FIELDS[:26])
    assert r["rotation"] == "ABC"
    assert r["v1"] == pytest.approx(277.0) and r["v2"] == pytest.approx(0.0, abs=1e-9)
    assert r["i_n_calc"] == pytest.approx(0.0, abs=1e-6) and r["i_n_calc_deg"] is None
    assert r["p_w"] == pytest.approx(3 * 277 * 100 * np.cos(np.pi / 6), rel=1e-9)
    assert r["pf"] == pytest.approx(0.866, abs=1e-3)
    assert r["findings"] == []


def test_swapped_leads_reverse_rotation():
    (r,) = run({**BAL, "vb_deg": 120, "vc_deg": -120, "ib_deg": 90, "ic_deg": -150})
    assert r["rotation"] == "ACB"
    assert "ROTATION_REVERSED" in codes(r)
    assert r["vuf_pct"] == pytest.approx(0.0, abs=1e-9)  # balanced, just reversed


def test_reversed_ct_on_one_phase():
    (r,) = run({**BAL, "ib_deg": 30})
    assert "CT_REVERSED" in codes(r)
    f = next(f for f in r["findings"] if f["code"] == "CT_REVERSED")
    assert f["phase"] == "B" and f["severity"] == "alarm"


def test_current_clamps_on_wrong_phases():
    # Currents in ACB order against ABC voltages (clamps B and C swapped), same lag: B's clamp reads C's
    # current (+120° from B's own) and C's reads B's (-120°), A is right: the pair is named.
    (r,) = run({**BAL, "ib_deg": 90, "ic_deg": -150})
    f = next(f for f in r["findings"] if f["code"] == "CLAMPS_SWAPPED")
    assert f["phase"] == "B-C" and f["severity"] == "warning"


def test_lost_phase():
    (r,) = run({**BAL, "vc": 12})
    assert "PHASE_LOST" in codes(r)
    assert r["rotation"] == "unknown"
    assert next(f for f in r["findings"] if f["code"] == "PHASE_LOST")["phase"] == "C"


def test_neutral_overload_and_mismatch():
    (r,) = run({**BAL, "ia": 100, "ib": 10, "ic": 10, "i_n": 140})
    assert r["i_n_calc"] == pytest.approx(90.0)
    assert r["i_n_est"] == pytest.approx(90.0)
    assert {"NEUTRAL_OVERLOAD", "NEUTRAL_MISMATCH"} <= codes(r)


def test_delta_magnitude_only_unbalance_and_derating():
    (r,) = run({"system": "delta", "vab": 460, "vbc": 467, "vca": 450, "nominal_v": 480})
    assert r["lvur_pct"] == pytest.approx(1.9608, abs=1e-4)
    assert r["derating"] == pytest.approx(0.95, abs=0.005)
    assert r["v0"] is None and r["rotation"] == "unknown"
    assert {"LVUR_DERATE", "MAGNITUDE_ONLY"} <= codes(r)


def test_delta_with_angles_uses_ln_equivalent():
    # Grainger & Stevenson Example 11.2 triangle (from memory): Van1 = 441∠-40.9°, Van2 = 166.7∠60°.
    (r,) = run({"system": "delta", "vab": 1000, "vbc": 866, "vca": 500, "vab_deg": 0, "vbc_deg": -150, "vca_deg": 120})
    assert r["v1"] == pytest.approx(441.0, abs=0.1) and r["v1_deg"] == pytest.approx(-40.9, abs=0.05)
    assert r["v2"] == pytest.approx(166.7, abs=0.1) and r["v2_deg"] == pytest.approx(60.0, abs=0.05)


def test_high_leg_delta_position():
    base = {"system": "high-leg-delta", "nominal_v": 240, "vab": 240, "vbc": 240, "vca": 240}
    (ok,) = run({**base, "va": 120, "vb": 208, "vc": 120})
    (bad,) = run({**base, "va": 120, "vb": 120, "vc": 208})
    assert ok["high_leg"] == "B" and "HIGH_LEG_POSITION" not in codes(ok)
    assert bad["high_leg"] == "C" and "HIGH_LEG_POSITION" in codes(bad)


def test_split_phase():
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
    assert r["i_n_calc"] == pytest.approx(30.0)
    assert r["rotation"] is None and r["vuf_pct"] is None
    assert r["p_w"] == pytest.approx(120 * 70)


def test_voltage_against_nominal_by_standard():
    low = {**BAL, "va": 255, "vb": 255, "vc": 255}  # 255/277 = 92 %
    (ansi,) = run({**low, "standard": "ansi"})
    (iec,) = run({**low, "standard": "iec"})
    assert "VOLTAGE_RANGE_B" in codes(ansi)
    assert not {"VOLTAGE_RANGE_B", "VOLTAGE_OUT_OF_RANGE"} & codes(iec)


def test_site_threshold_override():
    rec = {"system": "delta", "vab": 480, "vbc": 476, "vca": 472}
    assert "LVUR_DERATE" not in codes(run(rec)[0])
    assert "LVUR_DERATE" in codes(run(rec, thresholds=Thresholds().with_overrides({"lvur_pct": 0.5}))[0])


def test_unknown_threshold_name():
    with pytest.raises(KeyError, match="nope"):
        Thresholds().with_overrides({"nope": 1})


def test_mixed_batch_is_vectorised_in_order():
    recs = [BAL, {"system": "delta", "vab": 460, "vbc": 467, "vca": 450}, {**BAL, "vb_deg": 120, "vc_deg": -120}]
    out = run(*recs)
    assert [r["rotation"] for r in out] == ["ABC", "unknown", "ACB"]


def test_reference_angle_may_be_omitted():
    rec = dict(BAL)
    del rec["va_deg"]
    (r,) = run(rec)
    assert r["rotation"] == "ABC"


def test_findings_never_say_safe():
    out = run(BAL, {**BAL, "vc": 12}, {**BAL, "ib_deg": 30})
    for r in out:
        for f in r["findings"]:
            assert "safe" not in f["message"].lower()
            assert f["source"]


def test_lost_phase_on_delta_names_the_phase():
    # C open: Vab whole, Vbc and Vca low.
    (r,) = run({"system": "delta", "vab": 480, "vbc": 200, "vca": 280})
    f = next(f for f in r["findings"] if f["code"] == "PHASE_LOST")
    assert f["phase"] == "C"


def test_asymmetric_ansi_range_b_checks_every_phase():
    # +5.9 % on A is outside Range B (+5.8 %) even though C is further off at -6 % (inside B).
    k = 277 / 100  # ANSI C84.1 Table 1's own base for 480Y/277 (see nominal.ANSI_LN_BASE)
    (r,) = run({**BAL, "va": 105.9 * k, "vb": 100 * k, "vc": 94 * k})
    assert "VOLTAGE_OUT_OF_RANGE" in codes(r)
    f = next(f for f in r["findings"] if f["code"] == "VOLTAGE_OUT_OF_RANGE")
    assert f["phase"] == "A" and f["value"] == pytest.approx(5.9, abs=0.01)  # the phase that is out of range


def test_blocked_analysis_equals_one_block(monkeypatch):
    import fieldpad.core.analysis as an

    rng = np.random.default_rng(3)
    n = 50
    cols = {p: 277 * (1 + 0.05 * rng.standard_normal(n)) for p in ("va", "vb", "vc")}
    cols.update({p + "_deg": b + 3 * rng.standard_normal(n) for p, b in (("va", 0), ("vb", -120), ("vc", 120))})
    cols.update({p: 50 + 40 * rng.random(n) for p in ("ia", "ib", "ic")})
    system = rng.integers(0, 2, n).astype(np.int8)
    cols["vab"] = np.where(system == 1, 480.0, np.nan)
    cols["ia"][::9] = 0.0  # a lost current now and then: more findings to compare
    whole = an.analyze_block(cols, system)
    worded = findings_lists(whole)
    assert sum(map(len, worded)) > 0
    monkeypatch.setattr(an, "BLOCK", 7)
    for workers in (1, 3):  # in turn and on threads
        blocked = an.analyze(cols, system, workers=workers)
        for k, v in whole.values.items():
            np.testing.assert_array_equal(blocked.values[k], v, err_msg=k)
        for a, b in zip(whole.findings, blocked.findings):
            np.testing.assert_array_equal(np.broadcast_to(a[2], (n,)), b[2], err_msg=a[0])
        assert findings_lists(blocked) == worded  # the same value, threshold and phase on each raised finding


def test_neutral_equal_to_highest_phase_is_high_not_overload():
    # Found by the property test against tests/reference_loop.py: 100·a/b/100 landed a hair above 1 when
    # a == b. "Exceeds the highest phase current" means strictly more (common practice).
    (r,) = run({**BAL, "ia": 1.0, "ib": 1.0, "ic": 163.92927797501832, "i_n": 163.92927797501832})
    assert "NEUTRAL_OVERLOAD" not in codes(r) and "NEUTRAL_HIGH" in codes(r)
    (r,) = run({**BAL, "ia": 1.0, "ib": 1.0, "ic": 163.9, "i_n": 164.0})
    assert "NEUTRAL_OVERLOAD" in codes(r)
