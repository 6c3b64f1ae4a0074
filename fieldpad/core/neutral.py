"""Neutral current: the phasor sum, and the magnitude-only estimate.

Notes
-----
* With angles, the neutral current of a 4-wire system is the phasor sum of
  the phase currents, ``IN = Ia + Ib + Ic = 3·I0`` (Kirchhoff's current law at
  the neutral point).  For 120/240 V split-phase it is ``IN = I1 + I2`` of the
  two legs (their phasors as measured, normally about 180° apart).
* Without angles, the estimate assumes the currents are 120° apart (equal power
  factor in the three phases):
  ``IN ≈ √(Ia² + Ib² + Ic² − Ia·Ib − Ib·Ic − Ic·Ia)`` — common practice; for
  split-phase legs 180° apart the estimate is ``|Ia − Ib|``.
* Both are fundamental-frequency results.  Triplen harmonics (3rd, 9th, …) of
  the phase currents add in the neutral instead of cancelling, so a measured
  true-RMS neutral current well above the phasor sum usually means harmonic
  load (switch-mode supplies, LED drivers) — common practice.
"""

from __future__ import annotations

import numpy as np


def neutral_phasor(currents):
    """Phasor sum of the phase currents, shape (..., k) -> (...), amps."""
    c = np.asarray(currents)
    return neutral_phasor_cols(*np.moveaxis(c, -1, 0))


def neutral_phasor_cols(*currents):
    """:func:`neutral_phasor` with each phase as its own array (what the analysis calls)."""
    out = np.asarray(currents[0], dtype=complex)
    for c in currents[1:]:
        out = out + c
    return out


def neutral_estimate_3ph(ia, ib, ic):
    """Neutral current estimate from three magnitudes assuming 120° spacing (A).

    Examples
    --------
    >>> float(neutral_estimate_3ph(10.0, 10.0, 0.0))
    10.0
    """
    a, b, c = (np.asarray(x, dtype=float) for x in (ia, ib, ic))
    return np.sqrt(np.clip(a * a + b * b + c * c - a * b - b * c - c * a, 0.0, None))


def neutral_estimate_split(ia, ib):
    """Split-phase neutral estimate assuming the legs are 180° apart (A)."""
    return np.abs(np.asarray(ia, dtype=float) - np.asarray(ib, dtype=float))
