"""Phase rotation (sequence) from phasors, with a documented decision rule.

Decision rule (common practice, thresholds adjustable per site)
---------------------------------------------------------------
1. The three angles are needed.  From magnitudes alone the rotation is
   ``unknown`` (a rotation tester or a meter showing angles is needed).
2. If any phase magnitude is at or below ``collapse_ratio`` (default 0.5) of the
   largest, that phase is missing or collapsed and the rotation is ``unknown``.
3. Otherwise ``ABC`` if ``|X1| ≥ dominance·|X2|``, ``ACB`` if
   ``|X2| ≥ dominance·|X1|`` (default dominance 2, i.e. one sequence at least
   twice the other), else ``unknown``: no clear dominance.  Both must be
   above zero: ``0 ≥ 2·0`` is true, but two zero sequences rotate neither way.
4. If the rotating components are small beside the zero sequence
   (``max(|X1|,|X2|) < in_phase_ratio·|X0|``, default 0.1: fieldpad's own
   margin, no standard gives one) the three are (nearly) in phase: the
   rotation is ``unknown`` and the analysis raises an alarm (the leads are
   probably on one phase, or the angles were not taken from one reference).

Codes: 1 = ABC, -1 = ACB, 0 = unknown.  Reason codes explain an unknown.
"""

from __future__ import annotations

import numpy as np

ABC, ACB, UNKNOWN = 1, -1, 0
ROTATION_NAMES = {ABC: "ABC", ACB: "ACB", UNKNOWN: "unknown"}

REASON_NONE, REASON_NO_ANGLES, REASON_COLLAPSED, REASON_NO_DOMINANCE, REASON_NOT_3PH, REASON_IN_PHASE = range(6)
REASON_TEXT = {
    REASON_NONE: "",
    REASON_NO_ANGLES: "not every voltage angle is entered: rotation cannot be told from magnitudes alone; enter "
    "the angles or use a rotation tester",
    REASON_COLLAPSED: "a phase is missing or collapsed: rotation cannot be trusted",
    REASON_NO_DOMINANCE: "neither sequence clearly dominates: check the readings and the leads",
    REASON_NOT_3PH: "not a three-phase system",
    REASON_IN_PHASE: "the three are in phase (no rotating component): check that each lead is on its own phase "
    "and that every angle was read against the same reference",
}


def rotation(seq, magnitudes, has_angles, collapse_ratio=0.5, dominance=2.0):
    """Phase rotation code and reason code for each reading.

    Parameters
    ----------
    seq : array_like of complex, shape (..., 3)
        (X0, X1, X2) of the voltages (line-to-neutral or line-to-line).
    magnitudes : array_like, shape (..., 3)
        The three phase (or line) magnitudes, V.
    has_angles : array_like of bool, shape (...)
        Whether all three angles were entered.
    collapse_ratio, dominance : float
        See the module docstring.

    Returns
    -------
    (code, reason) : tuple of int8 arrays
    """
    s = np.abs(np.asarray(seq))
    m = np.asarray(magnitudes, dtype=float)
    mmax = m.max(axis=-1)
    low = np.where(mmax > 0, m.min(axis=-1) / np.where(mmax > 0, mmax, 1.0), 0.0)
    return rotation_from(s[..., 1], s[..., 2], low, has_angles, collapse_ratio, dominance)


def rotation_from(
    x1_abs, x2_abs, lowest_ratio, has_angles, collapse_ratio=0.5, dominance=2.0, x0_abs=None, in_phase_ratio=0.1
):
    """The decision rule on its inputs: |X1|, |X2|, the lowest phase magnitude
    over the highest (NaN or 0 when unknown), whether angles were entered and,
    optionally, |X0| (for rule 4; None skips it).

    Examples
    --------
    Three voltages of 277 V all at 0°: X1 = X2 = 0, X0 = 277.

    >>> code, reason = rotation_from(0.0, 0.0, 1.0, True, x0_abs=277.0)
    >>> int(code), int(reason) == REASON_IN_PHASE
    (0, True)
    """
    v1 = np.asarray(x1_abs, dtype=float)
    v2 = np.asarray(x2_abs, dtype=float)
    # At exactly the ratio is collapsed (an open phase on a 3-wire feed leaves 1/2), with a relative margin.
    collapsed = ~(np.asarray(lowest_ratio, dtype=float) > collapse_ratio * (1.0 + 1e-9))
    code = np.where((v1 >= dominance * v2) & (v1 > 0), ABC, np.where((v2 >= dominance * v1) & (v2 > 0), ACB, UNKNOWN))
    reason = np.where(code == UNKNOWN, REASON_NO_DOMINANCE, REASON_NONE)
    if x0_abs is not None:
        in_phase = np.fmax(v1, v2) < in_phase_ratio * np.asarray(x0_abs, dtype=float)
        code = np.where(in_phase, UNKNOWN, code)
        reason = np.where(in_phase, REASON_IN_PHASE, reason)
    code = np.where(collapsed, UNKNOWN, code)
    reason = np.where(collapsed, REASON_COLLAPSED, reason)
    has_angles = np.asarray(has_angles, dtype=bool)
    code = np.where(has_angles, code, UNKNOWN)
    reason = np.where(has_angles, reason, REASON_NO_ANGLES)
    return code.astype(np.int8), reason.astype(np.int8)
