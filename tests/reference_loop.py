"""A plain per-reading Python implementation of the analysis of a 3-phase 4-wire wye reading with
every magnitude and angle entered (cmath and math only, no numpy).

It is written from the definitions, not from fieldpad's vectorised code, and serves twice: as the
independent check in tests/test_reference_loop.py and as "the same work in a plain loop" in
tests/bench/bench_core.py.  Default thresholds, ANSI C84.1 limits.
"""

from __future__ import annotations

import cmath
import math

A = cmath.exp(2j * math.pi / 3)
CURVE = [(0.0, 1.0), (1.0, 1.0), (2.0, 0.95), (3.0, 0.88), (4.0, 0.82), (5.0, 0.75)]


def _rect(m, d):
    return cmath.rect(m, math.radians(d))


def _maxdev(xs):
    avg = sum(xs) / len(xs)
    return 100 * max(abs(x - avg) for x in xs) / avg if avg > 0 else math.nan


def _derate(u):
    if not 0 <= u <= 5:
        return math.nan
    for (x0, y0), (x1, y1) in zip(CURVE, CURVE[1:]):
        if u <= x1:
            return y0 + (y1 - y0) * (u - x0) / (x1 - x0)
    return math.nan


def _status(ratio):
    if 0.95 <= ratio <= 1.05:
        return 0
    if 110 / 120 <= ratio <= 127 / 120:
        return 1
    return 2


def analyse_one(r: dict) -> dict:
    """Results and finding codes for one reading (dict of floats: va.., va_deg.., ia.., nominal_v, i_n)."""
    v = [_rect(r[f"v{p}"], r[f"v{p}_deg"]) for p in "abc"]
    i = [_rect(r[f"i{p}"], r[f"i{p}_deg"]) for p in "abc"]
    vm = [r[f"v{p}"] for p in "abc"]
    im = [r[f"i{p}"] for p in "abc"]
    v0, v1, v2 = sum(v) / 3, (v[0] + A * v[1] + A * A * v[2]) / 3, (v[0] + A * A * v[1] + A * v[2]) / 3
    i0, i1, i2 = sum(i) / 3, (i[0] + A * i[1] + A * A * i[2]) / 3, (i[0] + A * A * i[1] + A * i[2]) / 3
    big_v, small_v = max(abs(v1), abs(v2)), min(abs(v1), abs(v2))
    out = {
        "v0": abs(v0),
        "v1": abs(v1),
        "v2": abs(v2),
        "vuf_pct": 100 * small_v / big_v,
        "v0uf_pct": 100 * abs(v0) / big_v,
    }
    ll = [abs(v[0] - v[1]), abs(v[1] - v[2]), abs(v[2] - v[0])]
    out["lvur_pct"] = _maxdev(ll)
    out["pvur_pct"] = _maxdev(vm)
    lowest = min(vm) / max(vm)
    lost = lowest <= 0.5
    in_phase = False
    if lost:
        rot = "unknown"
    elif max(abs(v1), abs(v2)) < 0.1 * abs(v0):  # the three in phase: nothing rotates
        rot, in_phase = "unknown", True
    elif abs(v1) >= 2 * abs(v2) and abs(v1) > 0:
        rot = "ABC"
    elif abs(v2) >= 2 * abs(v1) and abs(v2) > 0:
        rot = "ACB"
    else:
        rot = "unknown"
    out["rotation"] = rot
    # v1 is the sequence turning with the system (the larger), so that v2/v1 is vuf_pct.
    out["v1"], out["v2"] = big_v, small_v
    # Currents named against the voltages' rotation; against their own dominant sequence when it is unknown.
    turn_acb = rot == "ACB" or (rot == "unknown" and abs(i2) > abs(i1))
    pos_i, neg_i = (abs(i2), abs(i1)) if turn_acb else (abs(i1), abs(i2))
    out.update(i0=abs(i0), i1=pos_i, i2=neg_i)
    out["iuf_pct"] = 100 * neg_i / pos_i if pos_i > 0 else math.nan
    out["iur_pct"] = _maxdev(im)
    out["i_n_calc"] = abs(sum(i))
    a, b, c = im
    out["i_n_est"] = math.sqrt(max(0.0, a * a + b * b + c * c - a * b - b * c - c * a))
    s = [v[k] * i[k].conjugate() for k in range(3)]
    out["p_w"] = sum(x.real for x in s)
    out["q_var"] = sum(x.imag for x in s)
    out["s_va"] = sum(vm[k] * im[k] for k in range(3))
    out["s_vector_va"] = abs(complex(out["p_w"], out["q_var"]))
    out["pf"] = out["p_w"] / out["s_va"] if out["s_va"] > 0 else math.nan
    for k, p in enumerate("abc"):
        out[f"p_{p}_w"], out[f"q_{p}_var"] = s[k].real, s[k].imag
        out[f"pf_{p}"] = s[k].real / abs(s[k]) if abs(s[k]) > 0 else math.nan
    out["derating"] = _derate(out["lvur_pct"])
    out["temp_rise_pct"] = 2 * out["lvur_pct"] ** 2
    nom = {208.0: 120.0, 480.0: 277.0}[r["nominal_v"]]  # ANSI C84.1-2020 Table 1's own bases (from memory)
    statuses = [_status(x / nom) for x in vm]
    codes = set()
    lvur, pvur = out["lvur_pct"], out["pvur_pct"]
    wye_shift = pvur > 5.0 and lvur <= 2.0  # star point moved, line-to-line balanced: not a lost phase
    if lost and wye_shift:
        lost = False  # (the rotation rule still counts it as collapsed: rotation unknown)
    if lost:
        codes.add("PHASE_LOST")
    if rot == "ACB":
        codes.add("ROTATION_REVERSED")
    if not lost and not in_phase and (out["v0uf_pct"] > 5.0 or wye_shift):
        codes.add("NEUTRAL_SHIFT")  # open or floating neutral
    if in_phase:
        codes.add("VOLTAGES_IN_PHASE")
    elif rot == "unknown" and not lost:
        codes.add("ROTATION_UNKNOWN")
    if max(statuses) == 2:
        codes.add("VOLTAGE_OUT_OF_RANGE")
    if max(statuses) == 1:
        codes.add("VOLTAGE_RANGE_B")
    if out["vuf_pct"] > 2.0:
        codes.add("VUF_HIGH")
    if out["lvur_pct"] > 5.0:
        codes.add("LVUR_EXCESSIVE")
    elif out["lvur_pct"] > 1.0:
        codes.add("LVUR_DERATE")
    if out["iur_pct"] > 10.0:
        codes.add("CURRENT_UNBALANCE")
    # The wiring that brings every phase's V-I angle into PF 0.7 lagging .. 0.95 leading, current-weighted,
    # by 20 degrees over as wired (fieldpad.core.wiring, written here again from its docstring).
    hyp, out["_wiring_margins"] = "as wired", []
    if not (lost or in_phase):
        theta = [math.degrees(cmath.phase(v[k] * i[k].conjugate())) if abs(v[k] * i[k]) > 0 else 0.0 for k in range(3)]
        top = max(im)
        w = [x / top if top > 0 else 0.0 for x in im]
        sign = -1 if rot == "ACB" else 1
        lag, lead = math.degrees(math.acos(0.7)), math.degrees(math.acos(0.95))

        def outside(t):
            t = (t + 180.0) % 360.0 - 180.0
            return max(0.0, t - lag, -lead - t)

        table = {
            "as wired": (0, 0, 0),
            "rev A": (180, 0, 0),
            "rev B": (0, 180, 0),
            "rev C": (0, 0, 180),
            "two A": (0, 180, 180),
            "two B": (180, 0, 180),
            "two C": (180, 180, 0),
            "all": (180, 180, 180),
            "rot on": (120, 120, 120),
            "rot back": (240, 240, 240),
            "swap AB": (120, 240, 0),
            "swap BC": (0, 120, 240),
            "swap CA": (240, 0, 120),
        }
        pen = {h: sum(w[k] * outside(theta[k] - sign * sh[k]) for k in range(3)) for h, sh in table.items()}
        best = min(pen, key=lambda h: (pen[h], list(table).index(h)))
        ranked = sorted(pen.values())
        out["_wiring_margins"] = [pen["as wired"] - pen[best] - 20.0, ranked[1] - ranked[0]]
        if pen["as wired"] - pen[best] >= 20.0:
            hyp = best
        pfd = [math.cos(math.radians(t)) for t in theta]
        if hyp.startswith("rev"):
            out["_wiring_margins"].append(pfd["ABC".index(hyp[-1])] + 0.25)
            if pfd["ABC".index(hyp[-1])] > -0.25:
                hyp = "as wired"
    ct_reversed = hyp.startswith("rev")
    suspect = hyp not in ("as wired", "all")
    if ct_reversed:
        codes.add("CT_REVERSED")
    if hyp.startswith("two"):
        codes.add("CT_TWO_REVERSED")
    if hyp == "all":
        codes.add("POWER_TO_SUPPLY")
    if hyp.startswith("rot"):
        codes.add("CLAMPS_ROTATED")
    if hyp.startswith("swap"):
        codes.add("CLAMPS_SWAPPED")
    i_n = r.get("i_n")
    measured = i_n is not None and not math.isnan(i_n)
    best_n = i_n if measured else out["i_n_calc"]
    if max(im) > 0 and not (suspect and not measured):
        ratio = best_n / max(im)
        if ratio > 1.0:
            codes.add("NEUTRAL_OVERLOAD")
        elif ratio > 0.8:
            codes.add("NEUTRAL_HIGH")
    if measured and not suspect:
        diff = i_n - out["i_n_calc"]
        biggest = max(i_n, out["i_n_calc"])
        if biggest > 0 and abs(diff) > 0.2 * biggest and abs(diff) >= 1.0:
            # Above the phasor sum (harmonics may explain it) or below it (they cannot).
            codes.add("NEUTRAL_MISMATCH" if diff > 0 else "NEUTRAL_BELOW_SUM")
    if rot != "unknown" and not lost and not in_phase and not (ct_reversed or hyp.startswith(("two", "swap"))):
        i_rot = (
            "ABC"
            if abs(i1) >= 2 * abs(i2) and abs(i1) > 0
            else ("ACB" if abs(i2) >= 2 * abs(i1) and abs(i2) > 0 else "unknown")
        )
        if i_rot != "unknown" and i_rot != rot:
            codes.add("CURRENT_SEQUENCE")
    out["codes"] = codes
    return out
