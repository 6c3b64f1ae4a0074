"""Induction-motor derating for voltage unbalance.

The derating factor is interpolated on the NEMA MG 1 derating curve (Part 14,
clause 14.36, Figure 14-1 in the editions the trade uses), whose x-axis is
NEMA's own line-voltage unbalance (max deviation from the average line-to-line
voltage).  The points below were read off the published curve (from memory);
the curve is flat at 1.0 up to 1 % and ends at 5 %.  NEMA MG 1 recommends
against operating a motor above 5 % unbalance: there the factor is NaN and the
caller flags the reading.

The extra winding temperature rise of about ``2·u²`` percent (u the
unbalance in percent; 3.5 % unbalance gives roughly 25 % more rise) is a rule
of thumb (common practice), not a standard's figure.
"""

from __future__ import annotations

import numpy as np

#: (line-voltage unbalance %, derating factor), read off the NEMA MG 1 curve (from memory).
DERATING_CURVE = np.array(
    [
        [0.0, 1.00],
        [1.0, 1.00],
        [2.0, 0.95],
        [3.0, 0.88],
        [4.0, 0.82],
        [5.0, 0.75],
    ]
)
MAX_UNBALANCE_PCT = 5.0


def derating_factor(lvur_pct):
    """Motor derating factor for a NEMA line-voltage unbalance in percent.

    Returns NaN above 5 % (operation not recommended) and for NaN input.

    >>> float(derating_factor(2.0)), float(derating_factor(2.5))
    (0.95, 0.915)
    """
    u = np.asarray(lvur_pct, dtype=float)
    f = np.interp(u, DERATING_CURVE[:, 0], DERATING_CURVE[:, 1])
    return np.where((u >= 0) & (u <= MAX_UNBALANCE_PCT), f, np.nan)


def temperature_rise_pct(unbalance_pct):
    """Rule-of-thumb extra winding temperature rise, ``2·u²`` percent."""
    u = np.asarray(unbalance_pct, dtype=float)
    return 2.0 * u * u
