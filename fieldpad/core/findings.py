"""Findings: the structured list a technician reads for each reading.

Each finding is a dict with ``code``, ``severity`` (``alarm``, ``warning`` or
``info``), ``message`` (what was seen and what to check next; never that
equipment is safe), ``value`` and ``threshold`` (numbers or None), ``unit``,
``phase`` (the phase label or None) and ``source`` (where the threshold
comes from).  The masks are computed vectorised by
:func:`fieldpad.core.analysis.analyze`; this module only words them.
"""
from __future__ import annotations

import math

import numpy as np

from .analysis import Analysis
from .rotation import REASON_TEXT
from .thresholds import SOURCES

SEVERITY_ORDER = {"alarm": 0, "warning": 1, "info": 2}

MESSAGES = {
    "PHASE_LOST": "Phase {ph} is far below the others: check for a lost phase (blown fuse, open breaker pole, "
                  "loose or burnt connection) before energising motors.",
    "ROTATION_REVERSED": "Phase rotation is A-C-B (reverse). Motors will run backwards: check for two swapped "
                         "supply leads or meter leads before energising.",
    "ROTATION_UNKNOWN": "Phase rotation not determined: {reason}.",
    "VOLTAGES_IN_PHASE": "The three voltages are in phase (no rotating component), which no three-phase supply "
                         "gives: check that each voltage lead is on its own phase and that every angle was read "
                         "against the same reference. Rotation not determined.",
    "VOLTAGE_OUT_OF_RANGE": "Voltage on {ph} is {value:+.1f} % from nominal, outside the {std} limits: check the "
                            "nominal entered, the transformer tap and the supply.",
    "VOLTAGE_RANGE_B": "Voltage on {ph} is {value:+.1f} % from nominal: outside ANSI Range A, inside Range B. "
                       "Acceptable only occasionally; report to whoever manages the supply.",
    "VOLTAGE_NO_RANGE": "Nominal {value:g} V is not among the system voltages whose limits fieldpad knows for "
                        "this standard (ANSI C84.1 Table 1 low voltage; IEC 60038 100-1000 V): voltage not "
                        "compared with a range. Check the nominal entered, and the supply's own limits.",
    "VUF_HIGH": "Voltage unbalance factor {value:.2f} % exceeds {threshold:g} %: look for unequal single-phase "
                "loading or a supply problem.",
    "LVUR_EXCESSIVE": "Line-voltage unbalance {value:.2f} % exceeds {threshold:g} %: motor operation not "
                      "recommended (NEMA MG 1). Find the cause before running motors.",
    "LVUR_DERATE": "Line-voltage unbalance {value:.2f} % exceeds {threshold:g} %: three-phase motors on this "
                   "board need derating (factor {derating}).",
    "CURRENT_UNBALANCE": "Current unbalance {value:.1f} % exceeds {threshold:g} %: check the load distribution "
                         "across phases and for a high-resistance connection (uneven single-phase loads are "
                         "normal on a distribution board).",
    "NEUTRAL_OVERLOAD": "Neutral current {value:.1f} A exceeds the highest phase current: compare it with the "
                        "neutral conductor's rating (often triplen harmonics add in the neutral) and check the "
                        "neutral terminations.",
    "NEUTRAL_HIGH": "Neutral current {value:.1f} A is high for the phase currents: check the phase loading "
                    "balance and for harmonic loads.",
    "NEUTRAL_MISMATCH": "Measured neutral differs from the phasor sum of the phases by {value:+.1f} A: triplen "
                        "harmonics add in the neutral and are not in a fundamental-phasor sum; also check for a "
                        "shared neutral or a CT on the wrong conductor.",
    # Measured below the phasor sum: harmonics cannot explain it (they only add to a true-RMS reading).
    "NEUTRAL_MISMATCH_LOW": "Measured neutral is {value:+.1f} A from the phasor sum of the phases (lower): check "
                            "the neutral clamp's position and direction, a shared neutral or a CT on the wrong "
                            "conductor.",
    "CT_REVERSED": "Power on {ph} is negative while the other phases are positive: a CT or current lead on {ph} "
                   "is probably reversed.",
    "CT_TWO_REVERSED": "Power is negative on the two phases other than {ph}: two CTs or current leads are "
                       "probably reversed (polarity). Check the direction of those two clamps or CTs "
                       "(arrow toward the load).",
    "CLAMPS_ROTATED": "Power on every phase is negative or near zero (highest PF {value:.2f}): check that each "
                      "current clamp is on the phase of its voltage lead (clamps moved one phase on: A's on B, "
                      "B's on C, C's on A), then the clamps' direction (all reversed), and whether the board "
                      "is fed from this side (a source or exporting board shows the same).",
    "NEUTRAL_SHIFT": "Line-to-neutral voltages are unequal ({value:.1f} % from their average) while the "
                     "line-to-line voltages are balanced: the neutral point has moved. Check for an open or "
                     "floating neutral (loose or burnt neutral termination, neutral-earth bond) before "
                     "loading single-phase equipment.",
    "CURRENT_SEQUENCE": "Currents rotate opposite to the voltages: a current clamp or CT is probably on the wrong "
                        "phase; check each clamp against its voltage lead.",
    "HIGH_LEG_POSITION": "The high leg is on {ph}, not on B where North American practice puts it: check the "
                         "marking (orange) and the panel's phase arrangement against the local code.",
    "HIGH_LEG_NOT_FOUND": "No leg reads about 0.87 of line-to-line with the other two adding up to line-to-line: "
                          "no high leg found. Check the system type entered (high-leg delta) and the meter leads "
                          "to the centre-tapped neutral.",
    "MAGNITUDE_ONLY": "No angles entered: unbalance from magnitudes only (IEC 61000-4-30 formula); rotation, "
                      "power and the phasor neutral need angles.",
}

SOURCE_KEY = {
    "PHASE_LOST": "collapse_ratio", "ROTATION_REVERSED": "rotation", "ROTATION_UNKNOWN": "rotation",
    "VOLTAGES_IN_PHASE": "in_phase_ratio",
    "VUF_HIGH": "vuf_pct", "LVUR_EXCESSIVE": "lvur_max_pct", "LVUR_DERATE": "lvur_pct",
    "CURRENT_UNBALANCE": "iur_pct", "NEUTRAL_OVERLOAD": "neutral_overload_ratio",
    "NEUTRAL_HIGH": "neutral_ratio", "NEUTRAL_MISMATCH": "neutral_mismatch_ratio",
    "CT_REVERSED": "ct_reversed", "CLAMPS_ROTATED": "clamps_rotated", "CT_TWO_REVERSED": "ct_reversed",
    "NEUTRAL_SHIFT": "neutral_shift", "CURRENT_SEQUENCE": "rotation", "HIGH_LEG_POSITION": "high_leg",
    "HIGH_LEG_NOT_FOUND": "high_leg_ratio",
    "MAGNITUDE_ONLY": "rotation",
}


def phase_label(ph: int, labels=("A", "B", "C")):
    """A finding's phase: 0..2 a phase, 3..5 a line-to-line pair (3 = A-B, 4 = B-C, 5 = C-A), else None."""
    if 0 <= ph < len(labels):
        return labels[ph]
    if 3 <= ph < 6 and len(labels) == 3:
        return f"{labels[ph - 3]}-{labels[(ph - 2) % 3]}"
    return None


def _num(x):
    x = float(x)
    return None if math.isnan(x) or math.isinf(x) else round(x, 4)


def findings_lists(result: Analysis, labels=("A", "B", "C"), standards=None) -> list[list[dict]]:
    """Word the findings of every reading.

    Parameters
    ----------
    result : Analysis
    labels : sequence of str
        Phase labels the site uses (``A/B/C`` or ``L1/L2/L3``).
    standards : array_like of int, optional
        Voltage standard per reading (0 ANSI, 1 IEC), for the message and source.

    Returns
    -------
    list of list of dict, sorted by severity within each reading.
    """
    out: list[list[dict]] = [[] for _ in range(result.n)]
    std = np.zeros(result.n, np.int8) if standards is None else np.asarray(standards)
    derating = result["derating"]
    reason = result["rotation_reason"]
    for code, severity, mask, value, threshold, unit, phase in result.findings:
        if not mask.any():
            continue
        value, threshold, phase = (result.finding_field(x) for x in (value, threshold, phase))
        for i in np.flatnonzero(mask):
            ph = int(phase[i])
            iec = bool(std[i] == 1)
            src_key = SOURCE_KEY.get(code) or ("voltage_iec" if iec else "voltage_ansi")
            low = code == "NEUTRAL_MISMATCH" and value[i] < 0  # no triplen hint when measured < computed
            msg = MESSAGES[code + "_LOW" if low else code].format(
                ph=phase_label(ph, labels) or "?",
                value=float(value[i]) if np.isfinite(value[i]) else float("nan"),
                threshold=float(threshold[i]) if np.isfinite(threshold[i]) else float("nan"),
                derating=f"{derating[i]:.2f}" if np.isfinite(derating[i]) else "n/a",
                reason=REASON_TEXT.get(int(reason[i]), ""),
                std="IEC 60038" if iec else "ANSI C84.1 Range B",
            )
            out[i].append({
                "code": code,
                "severity": severity,
                "message": msg,
                "value": _num(value[i]),
                "threshold": _num(threshold[i]),
                "unit": unit,
                "phase": phase_label(ph, labels),
                "source": SOURCES[src_key],
            })
    for lst in out:
        lst.sort(key=lambda f: SEVERITY_ORDER[f["severity"]])
    return out
