"""Finding rules on the currents: CT and clamp wiring, the 3-wire sum, current unbalance, the neutral.

The wiring hypothesis per reading is :func:`fieldpad.core.wiring.best_hypothesis` (computed with the
quantities); it is trusted only where the voltages are (:func:`fieldpad.core.rules_voltage.prepare`).
"""

from __future__ import annotations

import numpy as np

from . import rotation as rot
from . import wiring as w
from .arrays import ratio
from .finding_def import collector

DEFINITIONS: list = []
finding = collector(DEFINITIONS)
NAN, NONE = np.nan, -1


def prepare(q, th) -> None:
    """The wiring hypothesis where the voltages can be trusted; light load; the board's purpose."""
    rating = q.col["rating_a"]
    # Light: below th.light_load_ratio of the main rating where it is given, else below th.light_load_a.
    q.light = ~(q.i_max >= np.where(rating > 0, th.light_load_ratio * rating, th.light_load_a))
    purpose = q.col["purpose"]
    # A motor feeder: as entered; where no purpose is given, a 3-wire delta (three-phase loads, mostly motors).
    q.motor = (purpose == 2) | (~(purpose > 0) & q.delta)
    hyp = np.where(q.volts_bad, w.AS_WIRED, q.hyp)
    # Each phase's displacement power factor cos θ (defined on a 3-wire delta too, against the
    # line-to-neutral equivalent).
    pfs = [np.cos(np.radians(np.nan_to_num(t))) for t in q.theta]
    one = (hyp >= w.REV_A) & (hyp <= w.REV_C)
    q.rev_ix = np.where(one, hyp - w.REV_A, 0).astype(np.int8)
    q.rev_pf = np.choose(q.rev_ix, pfs)
    # A phase is called reversed only with its PF at or below -th.ct_reversed_pf (a near-quadrature light
    # phase read with the meter's angle error is not a reversed CT).
    q.one_rev = one & (q.rev_pf <= -th.ct_reversed_pf)
    q.two_rev = (hyp >= w.TWO_A) & (hyp <= w.TWO_C)
    q.all_rev = hyp == w.ALL_REV
    q.rotated = (hyp == w.ROT_ON) | (hyp == w.ROT_BACK)
    q.swapped = hyp >= w.SWAP_AB
    # The phasor sum of the currents is wrong when a clamp is: judge the neutral on a measured value then.
    q.i_suspect = q.one_rev | q.two_rev | q.rotated | q.swapped
    q.pf_max = np.fmax(np.fmax(q.pf_a, q.pf_b), q.pf_c)
    # The neutral: measured, else the phasor sum, else the magnitude estimate; against its rating if entered.
    q.i_n_best = np.where(np.isfinite(q.i_n_meas), q.i_n_meas, np.where(np.isfinite(q.i_n_calc), q.i_n_calc, q.i_n_est))
    q.i_n_best = np.where(q.i_suspect & ~np.isfinite(q.i_n_meas), np.nan, q.i_n_best)
    rated = q.col["neutral_rating_a"] > 0
    q.n_limit = np.where(rated, q.col["neutral_rating_a"], th.neutral_overload_ratio * q.i_max)
    # A relative tolerance: |polar(12.7, θ)| can be 12.700000000000001, and equal is not "exceeds".
    q.n_over = q.i_n_best > q.n_limit * (1.0 + 1e-9)


@finding(
    "CT_TWO_REVERSED",
    ["alarm"],
    70,
    "",
    "ct_reversed",
    "Power is negative on the two phases other than {ph}: two CTs or current leads are probably reversed (polarity).",
    "Check the direction of those two clamps or CTs (arrow toward the load).",
)
def ct_two_reversed(q, th):
    return [("alarm", q.two_rev, NAN, NAN, (q.hyp - w.TWO_A).astype(np.int8))]


@finding(
    "CT_REVERSED",
    ["alarm"],
    80,
    "PF",
    "ct_reversed",
    "Power on {ph} is negative (PF {value:.2f}) while the other phases take power from the supply.",
    "A CT or current lead on {ph} is probably reversed: check its direction (arrow toward the load).",
)
def ct_reversed(q, th):
    return [("alarm", q.one_rev, q.rev_pf, NAN, q.rev_ix)]


@finding(
    "CLAMPS_ROTATED",
    ["warning"],
    90,
    "PF",
    "clamps_rotated",
    "Every phase's current is about 120° from where its own voltage's load would put it (highest PF {value:.2f}).",
    "Check that each current clamp is on the phase of its voltage lead (clamps moved one phase on: A's on "
    "B, B's on C, C's on A, or the other way); a load far outside PF 0.7 lagging to 0.95 leading shows "
    "the same.",
)
def clamps_rotated(q, th):
    return [("warning", q.rotated, q.pf_max, NAN, NONE)]


@finding(
    "CLAMPS_SWAPPED",
    ["warning"],
    100,
    "",
    "clamps_rotated",
    "The currents on {ph} are each about 120° from their own voltage, the third phase as expected.",
    "Check for the two clamps of {ph} exchanged (each on the other's phase).",
)
def clamps_swapped(q, th):
    return [("warning", q.swapped, NAN, NAN, (q.hyp - w.SWAP_AB + 3).astype(np.int8))]


@finding(
    "CURRENT_SEQUENCE",
    ["warning"],
    110,
    "%",
    "rotation",
    "Currents rotate opposite to the voltages.",
    "A current clamp or CT is probably on the wrong phase: check each clamp against its voltage lead.",
)
def current_sequence(q, th):
    wrong = (q.rcode != rot.UNKNOWN) & (q.i_rot != rot.UNKNOWN) & (q.i_rot != q.rcode)
    return [("warning", wrong & ~q.one_rev & ~q.two_rev & ~q.swapped & ~q.volts_bad, "iuf_pct", NAN, NONE)]


@finding(
    "CURRENT_SUM",
    ["warning"],
    120,
    "A",
    "current_sum_ratio",
    "The three line currents of this 3-wire feed add up to {value:.1f} A, not about 0 (Kirchhoff's current law).",
    "Check each clamp's range or ratio, that each clamp is around one conductor only, and each clamp's direction.",
)
def current_sum(q, th):
    bad = (q.i_sum_3w > th.current_sum_ratio * q.i_max) & (q.i_sum_3w >= 1.0)
    return [("warning", bad, q.i_sum_3w, th.current_sum_ratio * q.i_max, NONE)]


@finding(
    "NEUTRAL_OVERLOAD",
    ["alarm", "warning", "info"],
    130,
    "A",
    "neutral_overload_ratio",
    "Neutral current {value:.1f} A exceeds {threshold:.1f} A (the neutral's rating where it is entered, "
    "else the highest phase current).",
    "Compare it with the neutral conductor's rating (triplen harmonics add in the neutral) and check the "
    "neutral terminations.",
)
def neutral_overload(q, th):
    rated = q.col["neutral_rating_a"] > 0
    # Over its rating: an alarm. Over the highest phase (no rating entered): at most a warning, an info when
    # the board is lightly loaded.
    return [
        ("alarm", q.n_over & rated, q.i_n_best, q.n_limit, NONE),
        ("warning", q.n_over & ~rated & ~q.light, q.i_n_best, q.n_limit, NONE),
        ("info", q.n_over & ~rated & q.light, q.i_n_best, q.n_limit, NONE),
    ]


@finding(
    "CURRENT_UNBALANCE",
    ["warning", "info"],
    200,
    "%",
    "iur_pct",
    "Current unbalance {value:.1f} % exceeds {threshold:g} %.",
    "Check the load distribution across phases and for a high-resistance connection (uneven single-phase "
    "loads are normal on a distribution board).",
)
def current_unbalance(q, th):
    high = q.iur > th.iur_pct
    warn = high & q.motor & ~q.light
    return [("warning", warn, "iur_pct", th.iur_pct, NONE), ("info", high & ~warn, "iur_pct", th.iur_pct, NONE)]


@finding(
    "NEUTRAL_HIGH",
    ["info"],
    210,
    "A",
    "neutral_ratio",
    "Neutral current {value:.1f} A is high for the phase currents.",
    "Check the phase loading balance and for harmonic loads.",
)
def neutral_high(q, th):
    rated = q.col["neutral_rating_a"] > 0
    lim = np.where(rated, th.neutral_ratio * q.col["neutral_rating_a"], th.neutral_ratio * q.i_max)
    return [("info", (q.i_n_best > lim) & ~q.n_over, q.i_n_best, lim, NONE)]


def _neutral_mismatch(q, th):
    big = np.fmax(q.i_n_meas, q.i_n_calc)
    mismatch = np.abs(q.i_n_diff) > th.neutral_mismatch_ratio * np.where(big > 0, big, np.nan)
    return mismatch & (np.abs(q.i_n_diff) >= 1.0) & ~q.i_suspect


@finding(
    "NEUTRAL_MISMATCH",
    ["info"],
    220,
    "A",
    "neutral_mismatch_ratio",
    "Measured neutral is above the phasor sum of the phases by {value:+.1f} A.",
    "Triplen harmonics add in the neutral and are not in a fundamental-phasor sum; also check for a shared "
    "neutral or a CT on the wrong conductor.",
)
def neutral_mismatch(q, th):
    return [("info", _neutral_mismatch(q, th) & (q.i_n_diff > 0), "i_n_diff", NAN, NONE)]


# Measured below the phasor sum: harmonics cannot explain it (they only add to a true-RMS reading); common
# practice.
@finding(
    "NEUTRAL_BELOW_SUM",
    ["info"],
    221,
    "A",
    "neutral_mismatch_ratio",
    "Measured neutral is below the phasor sum of the phases by {value:+.1f} A.",
    "Harmonics cannot make a neutral read low: check the neutral clamp's position and direction, a shared "
    "neutral, or a CT on the wrong conductor.",
)
def neutral_below_sum(q, th):
    return [("info", _neutral_mismatch(q, th) & (q.i_n_diff < 0), "i_n_diff", NAN, NONE)]


@finding(
    "POWER_TO_SUPPLY",
    ["info"],
    195,
    "PF",
    "power_to_supply",
    "Power flows toward the supply on every phase (PF {value:.2f} at most negative).",
    "If this board is not a source (generator, PV, a feed back), all CTs or clamps are reversed: check "
    "their direction (arrow toward the load).",
)
def power_to_supply(q, th):
    return [("info", q.all_rev, ratio(q.p_w, q.s_va), NAN, NONE)]
