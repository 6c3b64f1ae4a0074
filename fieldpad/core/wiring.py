"""Which current-clamp wiring explains each phase's V-I displacement.

Each phase's displacement ``θ = angle(V) − angle(I)`` (degrees, positive when the current lags) is known
once the voltages and currents share one reference.  A wiring fault at the meter turns a phase's current
by a fixed angle: a reversed CT or clamp by 180°, a clamp on the next phase by 120° (ABC rotation), two
clamps exchanged by +120° and −120° on the two phases.  Each hypothesis below undoes its shifts; the one
that brings every phase's displacement back into the usual range of loads (PF 0.7 lagging to 0.95
leading: common practice for building and industrial loads) is taken, weighted by each phase's current.
A fault hypothesis is taken only when it improves on "as wired" by :data:`MARGIN_DEG` (fieldpad's own
margin), so a light phase at an odd power factor is not a reversed CT.

The same displacement is what a board exporting power shows with every CT reversed: "all reversed" is
reported as power toward the supply, not as a fault.

Hypothesis codes (:data:`HYPOTHESES`): 0 as wired; 1-3 one CT reversed on A, B, C; 4-6 two reversed, A, B
or C the right one; 7 all reversed; 8 every clamp one phase on (A's on B, B's on C, C's on A); 9 one phase
back (A's on C, ...); 10-12 two clamps exchanged (A-B, B-C, C-A).
"""

from __future__ import annotations

import math

import numpy as np

#: The usual range of a load's displacement (degrees, lag positive): PF 0.7 lagging to 0.95 leading.
LAG_DEG = math.degrees(math.acos(0.7))
LEAD_DEG = math.degrees(math.acos(0.95))
#: A fault hypothesis must beat "as wired" by this many current-weighted degrees (fieldpad's own margin).
MARGIN_DEG = 20.0

AS_WIRED, REV_A, REV_B, REV_C, TWO_A, TWO_B, TWO_C, ALL_REV, ROT_ON, ROT_BACK, SWAP_AB, SWAP_BC, SWAP_CA = range(13)
#: code -> shift (degrees) undone on phases A, B, C for an A-B-C rotation (mirrored for A-C-B).
HYPOTHESES = {
    AS_WIRED: (0, 0, 0),
    REV_A: (180, 0, 0),
    REV_B: (0, 180, 0),
    REV_C: (0, 0, 180),
    TWO_A: (0, 180, 180),
    TWO_B: (180, 0, 180),
    TWO_C: (180, 180, 0),
    ALL_REV: (180, 180, 180),
    ROT_ON: (120, 120, 120),
    ROT_BACK: (240, 240, 240),
    SWAP_AB: (120, 240, 0),
    SWAP_BC: (0, 120, 240),
    SWAP_CA: (240, 0, 120),
}
#: The hypotheses that exist on two legs (split-phase): as wired, one reversed, both reversed.
TWO_LEG = (AS_WIRED, REV_A, REV_B, ALL_REV)


def displacement_deg(v, i):
    """``angle(V) − angle(I)`` in degrees, wrapped to (-180, 180]; NaN where either is zero or unknown."""
    z = np.asarray(v) * np.conj(np.asarray(i))
    d = np.degrees(np.angle(z))
    return np.where(np.abs(z) > 0, d, np.nan)


def _outside(theta):
    """Degrees outside the usual load range [-LEAD_DEG, LAG_DEG], theta wrapped to (-180, 180]."""
    t = np.mod(theta + 180.0, 360.0) - 180.0
    return np.fmax(0.0, np.fmax(t - LAG_DEG, -LEAD_DEG - t))


def best_hypothesis(theta, weight, two_leg, acb, margin=MARGIN_DEG):
    """The wiring hypothesis per reading (see the module docstring).

    Parameters
    ----------
    theta : sequence of 3 arrays, shape (N,)
        Displacement of phases A, B, C (degrees; NaN where the phase carries no current).
    weight : sequence of 3 arrays, shape (N,)
        Each phase's current over the highest (0 where none).
    two_leg, acb : arrays of bool, shape (N,)
        Split-phase (legs A and B only); the voltages turn A-C-B (the shifts are mirrored).

    Returns
    -------
    (code, improvement) : int8 array and float array (degrees gained over "as wired")

    Examples
    --------
    B's CT reversed on a load at 30° lag: B reads 210°, the others 30°.

    >>> code, _ = best_hypothesis([[30.0], [-150.0], [30.0]], [[1.0], [1.0], [1.0]], [False], [False])
    >>> int(code[0]) == REV_B
    True
    """
    th = [np.nan_to_num(np.asarray(t, dtype=float)) for t in theta]
    w = [np.nan_to_num(np.asarray(x, dtype=float)) for x in weight]
    two_leg = np.asarray(two_leg, dtype=bool)
    sign = np.where(np.asarray(acb, dtype=bool), -1.0, 1.0)
    pen = np.empty((len(HYPOTHESES),) + np.shape(th[0]))
    for code, shifts in HYPOTHESES.items():
        p = sum(wk * _outside(tk - sign * s) for tk, wk, s in zip(th, w, shifts))
        pen[code] = np.where(two_leg & (code not in TWO_LEG), np.inf, p)
    best = np.argmin(pen, axis=0)
    gain = pen[AS_WIRED] - np.take_along_axis(pen, best[None], axis=0)[0]
    code = np.where(gain >= margin, best, AS_WIRED).astype(np.int8)
    return code, gain
