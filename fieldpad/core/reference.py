"""The angle reference of a reading: the one rule for a blank reference angle.

A meter that shows angles relative to VA (or, line-to-line, relative to Vab)
often shows no angle for VA itself.  The rule, kept here and nowhere else: a
reference angle left blank, with its magnitude given and at least the next
phase's angle given, is 0° (common practice: the reference phasor is drawn at
0°).  The analysis (``core.analysis``), the sheet's grid and its phasor
drawing all call this module.
"""

from __future__ import annotations

import numpy as np

#: The reference angle in degrees, and the fields that carry it (line-to-neutral, line-to-line).
REFERENCE_DEG = 0.0
REFERENCE_FIELDS = ("va_deg", "vab_deg")


def fill_reference(magnitude, angle_deg, next_angle_deg):
    """The reference angle (degrees) with a blank one taken as 0° where the rule applies.

    Parameters
    ----------
    magnitude : array_like
        Magnitude of the reference phasor (VA or Vab), V; NaN where not given.
    angle_deg : array_like
        Its angle in degrees; NaN where left blank.
    next_angle_deg : array_like
        The next phase's angle (VB or Vbc), degrees; NaN where not given.

    Returns
    -------
    numpy.ndarray of float
        ``angle_deg`` with :data:`REFERENCE_DEG` where the magnitude and the
        next angle are given and the reference angle is blank.

    Examples
    --------
    >>> fill_reference([277.0, 277.0, np.nan], [np.nan, 10.0, np.nan], [240.0, 250.0, 240.0]).tolist()
    [0.0, 10.0, nan]
    """
    m = np.asarray(magnitude, dtype=float)
    a = np.asarray(angle_deg, dtype=float)
    nxt = np.asarray(next_angle_deg, dtype=float)
    missing = np.isfinite(m) & np.isnan(a) & np.isfinite(nxt)
    return np.where(missing, REFERENCE_DEG, a) if missing.any() else a


def is_reference(field: str) -> bool:
    """True for the field that holds a reading's angle reference (VA°, or Vab° line-to-line)."""
    return field in REFERENCE_FIELDS
