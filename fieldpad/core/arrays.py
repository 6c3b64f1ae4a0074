"""Small array helpers shared by the analysis and the finding rules (numpy only, no warnings)."""

from __future__ import annotations

import numpy as np

CNAN = complex(np.nan, np.nan)


def fin(*arrays):
    """True where every array is finite."""
    out = np.isfinite(arrays[0])
    for a in arrays[1:]:
        out &= np.isfinite(a)
    return out


def angle(z, mag, scale):
    """Angle in degrees in (-180, 180] (np.angle's range), NaN where the phasor
    is zero to within 1e-9 of ``scale``."""
    a = np.angle(z)
    np.multiply(a, 180.0 / np.pi, out=a)
    # Where mag is NaN the angle is NaN already.
    np.copyto(a, np.nan, where=mag <= 1e-9 * scale)
    return a


def max3(a, b, c):
    return np.fmax(np.fmax(a, b), c)


def min3(a, b, c):
    return np.fmin(np.fmin(a, b), c)


def pick(mask, a, b):
    """np.where that skips the copy when the whole batch takes one side."""
    if mask.all():
        return a
    if not mask.any():
        return np.broadcast_to(b, np.shape(a)) if np.ndim(b) == 0 else b
    return np.where(mask, a, b)


def ratio(num, den):
    """num/den as a plain ratio; NaN where den is not positive (no warning)."""
    return np.where(den > 0, num / np.where(den > 0, den, 1.0), np.nan)


def index_of(value, a, b, c):
    """0, 1 or 2: which of a, b, c equals value (the first on a tie; 2 when none)."""
    return np.where(a == value, 0, np.where(b == value, 1, 2)).astype(np.int8)
