"""Phasor helpers: polar/rectangular conversion, angle wrapping, line-to-line
from line-to-neutral.

See :mod:`fieldpad.core` for the conventions (RMS volts/amps, degrees,
counter-clockwise positive, one common reference).
"""

from __future__ import annotations

import numpy as np

SQRT3 = float(np.sqrt(3.0))


def polar(magnitude, angle_deg):
    """Complex phasor from an RMS magnitude and an angle in degrees.

    Parameters
    ----------
    magnitude : array_like
        RMS magnitude (V or A), any shape.
    angle_deg : array_like
        Angle in degrees, counter-clockwise positive; broadcasts with ``magnitude``.

    Returns
    -------
    numpy.ndarray of complex

    Examples
    --------
    >>> complex(np.round(polar(2.0, 90.0), 12))
    2j
    """
    m = np.asarray(magnitude, dtype=float)
    a = np.asarray(angle_deg, dtype=float)
    if m.ndim != 1 or m.shape != a.shape:
        c, s = cos_sin_deg(a)
        out = np.empty(np.broadcast(m, c).shape, dtype=complex)
        out.real = m * c
        out.imag = m * s
        return out
    # Many readings: the same identities as cos_sin_deg, with the magnitude
    # folded in and fewer temporary arrays (m·cos θ = m(1 − t²)/(1 + t²),
    # m·sin θ = 2mt/(1 + t²), t = tan(θ/2)).
    t = np.multiply(a, np.pi / 360.0)
    np.tan(t, out=t)
    t2 = t * t
    k = t2 + 1.0
    np.divide(m, k, out=k)
    out = np.empty(t.shape, dtype=complex)
    parts = out.view(np.float64).reshape(-1, 2)
    np.subtract(1.0, t2, out=t2)
    np.multiply(t2, k, out=parts[:, 0])
    t += t
    np.multiply(t, k, out=parts[:, 1])
    return out


def cos_sin_deg(angle_deg):
    """Cosine and sine of angles in degrees, via the half-angle tangent.

    ``t = tan(θ/2)``, ``cos θ = (1 − t²)/(1 + t²)``, ``sin θ = 2t/(1 + t²)``
    (the tangent half-angle identities).  Some numpy builds evaluate float64
    ``tan`` about ten times faster than ``cos`` and ``sin``; the identities keep
    the result within a few units in the last place of ``np.cos``/``np.sin``
    for |θ| ≤ 360°, including θ = ±180° where ``t`` is large but finite.
    NaN angles give NaN.
    """
    t = np.tan(np.deg2rad(np.asarray(angle_deg, dtype=float)) * 0.5)
    t2 = t * t
    inv = 1.0 / (1.0 + t2)
    return (1.0 - t2) * inv, 2.0 * t * inv


def wrap_deg(angle_deg):
    """Wrap angles in degrees to the interval (-180, 180].

    >>> wrap_deg([240.0, -180.0, 540.0]).tolist()
    [-120.0, 180.0, 180.0]
    """
    a = np.mod(np.asarray(angle_deg, dtype=float), 360.0)
    return np.where(a > 180.0, a - 360.0, a)


def angle_deg(phasor):
    """Angle of a complex phasor in degrees, wrapped to (-180, 180].

    The angle of a zero phasor is NaN (it has no direction), not 0.
    """
    z = np.asarray(phasor)
    ang = wrap_deg(np.degrees(np.angle(z)))
    return np.where(np.abs(z) > 0.0, ang, np.nan)


def line_to_line(v_ln):
    """Line-to-line phasors from line-to-neutral phasors.

    Parameters
    ----------
    v_ln : array_like of complex, shape (..., 3)
        Va, Vb, Vc line-to-neutral (V).

    Returns
    -------
    numpy.ndarray of complex, shape (..., 3)
        Vab = Va − Vb, Vbc = Vb − Vc, Vca = Vc − Va (V).

    Examples
    --------
    A balanced ABC set of 277 V gives 479.8 V line-to-line, Vab leading Va by 30°:

    >>> v = polar(277.0, np.array([0.0, -120.0, 120.0]))
    >>> ll = line_to_line(v)
    >>> np.round(np.abs(ll), 1).tolist(), float(np.round(angle_deg(ll[0]), 6))
    ([479.8, 479.8, 479.8], 30.0)
    """
    v = np.asarray(v_ln)
    return v - np.roll(v, -1, axis=-1)
