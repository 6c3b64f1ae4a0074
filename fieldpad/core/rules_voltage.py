"""Finding rules on the voltages: lost phase, leads, neutral shift, closure, rotation, range, unbalance, high leg.

Each rule reads the quantities of :mod:`fieldpad.core.quantities` (``q``) and the site's thresholds
(``th``); :func:`prepare` sets the conditions several rules share.  Thresholds and their sources:
:mod:`fieldpad.core.thresholds`.
"""

from __future__ import annotations

import numpy as np

from . import rotation as rot
from .arrays import max3, ratio
from .finding_def import collector

DEFINITIONS: list = []
finding = collector(DEFINITIONS)
NAN, NONE = np.nan, -1


def prepare(q, th) -> None:
    """Conditions shared by several rules: lost phase, leads in phase, leads mismatched, neutral shift."""
    shift_pct = th.neutral_shift_pct
    # An open neutral moves the star point: line-to-neutral unequal over a balanced line-to-line set (so it
    # is not a lost phase, which unbalances line-to-line too). Split-phase: two legs that still add up to the
    # nominal 240 V within 10 % (common practice) are a moved neutral, not a lost leg.
    wye_shift = q.wye & (q.pvur > shift_pct) & (q.lvur <= th.ll_balanced_pct)
    legs_sum = ratio(q.ma + q.mb, q.v_nom)
    split_shift = q.split & (q.pvur > shift_pct) & (np.abs(legs_sum - 1.0) <= 0.1)
    # "At or below" the collapse ratio: an open phase on a 3-wire feed leaves exactly 1/2 (480/240/240); the
    # relative margin keeps a ratio computed as 0.49999999999 or 0.50000000001 on the same side.
    q.lost = (q.low_rel <= th.collapse_ratio * (1.0 + 1e-9)) & ~wye_shift & ~split_shift
    q.in_phase = q.is3 & (q.rreason == rot.REASON_IN_PHASE) & ~q.lost
    # Line-to-line measured and derived from line-to-neutral phasors: the largest difference over the
    # measured average, %.
    meas = [q.col[f] for f in ("vab", "vbc", "vca")]
    mean = (meas[0] + meas[1] + meas[2]) / 3.0
    diff = max3(*(np.abs(m - d) for m, d in zip(meas, q.ll_derived)))
    q.ll_diff_pct = np.where(q.has_ln_ang & q.is3 & ~q.delta, 100.0 * ratio(diff, mean), np.nan)
    q.ll_mismatch = (q.ll_diff_pct > th.ll_mismatch_pct) & ~q.lost & ~q.in_phase
    q.shift_pct = np.where(q.high_leg_sys, q.halves_pct, q.pvur)
    from_phasors = q.wye & (q.v0uf_pct > shift_pct)
    q.shift = (
        ~q.lost
        & ~q.in_phase
        & ~q.ll_mismatch
        & (from_phasors | wye_shift | split_shift | (q.high_leg_sys & (q.halves_pct > shift_pct)))
    )
    q.volts_bad = q.lost | q.in_phase | q.ll_mismatch | q.ll_open


@finding(
    "VOLTAGES_IN_PHASE",
    ["alarm"],
    10,
    "",
    "in_phase_ratio",
    "The three voltages are in phase (no rotating component), which no three-phase supply gives.",
    "Check that each voltage lead is on its own phase and that every angle was read against the same "
    "reference. Rotation not determined.",
)
def in_phase(q, th):
    return [("alarm", q.in_phase, NAN, NAN, NONE)]


@finding(
    "PHASE_LOST",
    ["alarm"],
    20,
    "% of highest",
    "collapse_ratio",
    "Phase {ph} is far below the others.",
    "Check for a lost phase (blown fuse, open breaker pole, loose or burnt connection) before energising motors.",
)
def phase_lost(q, th):
    return [("alarm", q.lost, 100.0 * q.low_rel, 100.0 * th.collapse_ratio, q.low_ix)]


@finding(
    "NEUTRAL_SHIFT",
    ["alarm", "warning"],
    30,
    "%",
    "neutral_shift",
    "Line-to-neutral voltages are unequal ({value:.1f} % from their average) while the line-to-line "
    "voltage is balanced (or the legs still add up to it): the neutral point has moved.",
    "Check for an open or floating neutral (loose or burnt neutral termination, neutral-earth bond, the "
    "centre tap) before loading single-phase equipment; an alarm where a phase is outside its range.",
)
def neutral_shift(q, th):
    severe = q.shift & (q.vstat_worst == 2)
    return [
        ("alarm", severe, q.shift_pct, th.neutral_shift_pct, NONE),
        ("warning", q.shift & ~severe, q.shift_pct, th.neutral_shift_pct, NONE),
    ]


@finding(
    "LL_MISMATCH",
    ["warning"],
    40,
    "%",
    "ll_mismatch_pct",
    "Measured line-to-line voltages differ from those derived from the line-to-neutral phasors by up to {value:.1f} %.",
    "Check that each voltage lead is on its own phase and on the neutral, and re-read the line-to-line "
    "voltages; the line-to-neutral results are not trusted until they agree.",
)
def ll_mismatch(q, th):
    return [("warning", q.ll_mismatch, q.ll_diff_pct, th.ll_mismatch_pct, NONE)]


@finding(
    "LL_NOT_CLOSED",
    ["warning"],
    50,
    "% of line-to-line",
    "ll_closure_ratio",
    "The line-to-line phasors as typed do not close (Vab + Vbc + Vca is {value:.1f} % of their average; "
    "Kirchhoff's voltage law makes it 0).",
    "Re-read the line-to-line angles against one reference; unbalance is taken from the magnitudes only "
    "and rotation is not determined until they close.",
)
def ll_not_closed(q, th):
    return [("warning", q.ll_open, "ll_closure_pct", 100.0 * th.ll_closure_ratio, NONE)]


@finding(
    "ROTATION_REVERSED",
    ["alarm"],
    60,
    "",
    "rotation",
    "Phase rotation is {rot}, not the {expected} expected at this site.",
    "Motors will run backwards: check for two swapped supply leads or meter leads before energising.",
)
def rotation_reversed(q, th):
    return [("alarm", (q.rcode != rot.UNKNOWN) & (q.rcode != q.expected), NAN, NAN, NONE)]


@finding(
    "VOLTAGE_OUT_OF_RANGE",
    ["alarm"],
    140,
    "% of nominal",
    "voltage",
    "Voltage on {ph} is {value:+.1f} % from nominal, outside the {std} limits.",
    "Check the nominal entered, the transformer tap and the supply.",
)
def out_of_range(q, th):
    return [("alarm", q.vstat_worst == 2, "v_dev_max_pct", NAN, q.worst_ph)]


@finding(
    "VOLTAGE_RANGE_B",
    ["warning"],
    150,
    "% of nominal",
    "voltage",
    "Voltage on {ph} is {value:+.1f} % from nominal: outside ANSI Range A, inside Range B.",
    "Acceptable only occasionally: repeat the reading over a longer period and report to whoever manages the supply.",
)
def range_b(q, th):
    return [("warning", (q.vstat_worst == 1) & ~q.iec, "v_dev_max_pct", NAN, q.worst_ph)]


@finding(
    "LVUR_EXCESSIVE",
    ["alarm"],
    160,
    "%",
    "lvur_max_pct",
    "Line-voltage unbalance {value:.2f} % exceeds {threshold:g} %: motor operation not recommended (NEMA MG 1).",
    "Find the cause (supply, a high-resistance connection, unequal single-phase loading) before running motors.",
)
def lvur_excessive(q, th):
    return [("alarm", q.lvur > th.lvur_max_pct, "lvur_pct", th.lvur_max_pct, NONE)]


@finding(
    "LVUR_DERATE",
    ["warning"],
    170,
    "%",
    "lvur_pct",
    "Line-voltage unbalance {value:.2f} % exceeds {threshold:g} %: three-phase motors on this board need "
    "derating (factor {derating}).",
    "Check the motors' loading against the derated rating and look for the cause of the unbalance.",
)
def lvur_derate(q, th):
    return [("warning", (q.lvur > th.lvur_pct) & ~(q.lvur > th.lvur_max_pct), "lvur_pct", th.lvur_pct, NONE)]


@finding(
    "VUF_HIGH",
    ["warning"],
    180,
    "%",
    "vuf_pct",
    "Voltage unbalance factor {value:.2f} % exceeds {threshold:g} % on this spot reading (indicative: "
    "EN 50160's limit is for 95 % of a week's 10-minute values).",
    "Look for unequal single-phase loading or a supply problem; a longer recording decides against the limit.",
)
def vuf_high(q, th):
    return [("warning", q.vuf_pct > th.vuf_pct, "vuf_pct", th.vuf_pct, NONE)]


@finding(
    "HIGH_LEG_POSITION",
    ["warning"],
    190,
    "",
    "high_leg",
    "The high leg is on {ph}, not on B where North American practice puts it.",
    "Check the marking (orange) and the panel's phase arrangement against the local code.",
)
def high_leg_position(q, th):
    return [("warning", (q.high_leg_ix >= 0) & (q.high_leg_ix != 1), NAN, NAN, "high_leg")]


@finding(
    "HIGH_LEG_NOT_FOUND",
    ["info"],
    300,
    "",
    "high_leg_ratio",
    "No leg reads about 0.87 of line-to-line with the other two adding up to line-to-line: no high leg found.",
    "Check the system type entered (high-leg delta) and the meter leads to the centre-tapped neutral.",
)
def high_leg_not_found(q, th):
    return [("info", q.no_high_leg, NAN, NAN, NONE)]


@finding(
    "VOLTAGE_NO_RANGE",
    ["info"],
    310,
    "V",
    "voltage",
    "Nominal {value:g} V is not among the system voltages whose limits fieldpad knows for {std_name} "
    "(ANSI C84.1: Table 1 low voltage; IEC 60038: 100-1000 V): voltage not compared with a range.",
    "Check the nominal entered, and the supply's own limits.",
)
def no_range(q, th):
    return [("info", q.no_range, "nominal_v", NAN, NONE)]


@finding("ROTATION_UNKNOWN", ["info"], 320, "", "rotation", "Phase rotation not determined: {reason}.", "")
def rotation_unknown(q, th):
    return [("info", q.is3 & (q.rcode == rot.UNKNOWN) & ~q.lost & ~q.in_phase, NAN, NAN, NONE)]


@finding(
    "MAGNITUDE_ONLY",
    ["info"],
    330,
    "",
    "rotation",
    "No angles entered: unbalance from magnitudes only (IEC 61000-4-30 formula).",
    "Rotation, power and the phasor neutral need angles.",
)
def magnitude_only(q, th):
    return [("info", q.use_mag, NAN, NAN, NONE)]
