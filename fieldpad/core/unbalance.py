"""Unbalance by each common definition, from phasors or from magnitudes only.

All functions return percentages and NaN where the definition has no value
(a zero denominator, or magnitudes that cannot form a triangle); they never
warn or raise on such readings.

Definitions
-----------
* ``vuf``  — true unbalance factor ``100·|V2|/|V1|`` (IEC 61000-4-30 Ed.3
  clause 5.7.1; EN 50160 clause 4.2.5 uses the same quantity).
* ``v0uf`` — zero-sequence ratio ``100·|V0|/|V1|`` (IEC 61000-4-30 Ed.3 5.7.1).
* ``max_deviation_pct`` — ``100·max|x − mean| / mean``.  On the three
  line-to-line magnitudes this is NEMA MG 1 (Part 14.36) "line voltage
  unbalance" (LVUR).  On the three line-to-neutral magnitudes it is the IEEE
  "phase voltage unbalance rate" (PVUR); fieldpad pins the max-deviation-from-
  average variant (as described by P. Pillay and M. Manyage, "Definitions of
  voltage unbalance", IEEE Power Engineering Review, May 2001 — from memory),
  not the (max − min)/average variant some texts use.  On currents it is the
  current unbalance by deviation from average.
* ``vuf_from_ll_magnitudes`` — the IEC 61000-4-30 formula from the three
  fundamental line-to-line magnitudes:
  ``β = ΣU⁴/(ΣU²)²``, ``u2 = √((1 − √(3 − 6β))/(1 + √(3 − 6β)))``.
* ``sequence_magnitudes_from_ll`` — |V1| and |V2| of the line-to-line set
  from the triangle formed by the three line-to-line magnitudes (the three
  phasors sum to zero, so they close a triangle).  With the triangle's area
  ``Δ`` (Heron), ``|V1|² = ΣU²/6 + 2Δ/√3`` and ``|V2|² = ΣU²/6 − 2Δ/√3``
  (Napoleon's theorem: the equilateral triangles erected on the sides have
  centres forming an equilateral triangle whose size is set by |V1|, the
  inward ones by |V2|).  Magnitudes alone cannot tell which rotation the
  system has, so the larger component is taken as the positive sequence (the
  normal case for a healthy supply); say so where it is shown.
"""

from __future__ import annotations

import numpy as np

from .phasors import SQRT3


def _ratio_pct(num, den):
    num = np.asarray(num, dtype=float)
    den = np.asarray(den, dtype=float)
    safe = np.where(den > 0.0, den, 1.0)
    return np.where(den > 0.0, 100.0 * num / safe, np.nan)


def vuf(seq):
    """Negative-sequence unbalance factor ``100·|X2|/|X1|`` in percent.

    Parameters
    ----------
    seq : array_like of complex, shape (..., 3)
        (X0, X1, X2) from :func:`fieldpad.core.sequence.sequence_components`.

    Notes
    -----
    The sequence that turns with the system's own rotation is taken as the
    positive one: for a set wired A-C-B the roles of X1 and X2 swap, so a
    balanced ACB set gives 0 % (its rotation is reported separately).  In
    other words the factor is ``100·min(|X1|,|X2|)/max(|X1|,|X2|)``, which
    equals the IEC definition whenever the rotation is ABC.
    """
    s = np.abs(np.asarray(seq))
    return vuf_cols(s[..., 1], s[..., 2])


def vuf_cols(x1_abs, x2_abs):
    """:func:`vuf` from |X1| and |X2| as arrays (what the analysis calls)."""
    return _ratio_pct(np.fmin(x1_abs, x2_abs), np.fmax(x1_abs, x2_abs))


def v0uf(seq):
    """Zero-sequence unbalance factor ``100·|X0|/|X1|`` in percent (X1 the
    dominant of the two rotating sequences, as in :func:`vuf`)."""
    s = np.abs(np.asarray(seq))
    return v0uf_cols(s[..., 0], s[..., 1], s[..., 2])


def v0uf_cols(x0_abs, x1_abs, x2_abs):
    """:func:`v0uf` from |X0|, |X1|, |X2| as arrays (what the analysis calls)."""
    return _ratio_pct(x0_abs, np.fmax(x1_abs, x2_abs))


def max_deviation_pct(magnitudes):
    """Maximum deviation from the average, over the average, in percent.

    Parameters
    ----------
    magnitudes : array_like, shape (..., k)
        k magnitudes (V or A) of one reading along the last axis.

    Examples
    --------
    NEMA MG 1 Part 14.36 worked example (from memory; also reproduced in many
    handbooks): line voltages 460, 467 and 450 V average 459 V, the largest
    deviation is 9 V, the unbalance 1.96 %.

    >>> round(float(max_deviation_pct([460.0, 467.0, 450.0])), 2)
    1.96
    """
    m = np.asarray(magnitudes, dtype=float)
    return max_deviation_pct_cols(*np.moveaxis(m, -1, 0))


def max_deviation_pct_cols(*columns):
    """:func:`max_deviation_pct` with each magnitude as its own array (faster
    for many readings: no reduction over a short last axis)."""
    cols = [np.asarray(c, dtype=float) for c in columns]
    mean = sum(cols) / len(cols)
    dev = np.abs(cols[0] - mean)
    for c in cols[1:]:
        dev = np.maximum(dev, np.abs(c - mean))
    return _ratio_pct(dev, mean)


def triangle_ok(u_ab, u_bc, u_ca):
    """True where three line-to-line magnitudes can close a triangle.

    Each side must be positive and no longer than the sum of the other two
    (a degenerate, flat triangle is allowed: it is a fully collapsed phase).
    A relative tolerance of 1e-9 absorbs rounding.
    """
    a, b, c = (np.asarray(x, dtype=float) for x in (u_ab, u_bc, u_ca))
    tol = 1e-9 * (a + b + c)
    return (a > 0) & (b > 0) & (c > 0) & (a <= b + c + tol) & (b <= a + c + tol) & (c <= a + b + tol)


def _triangle_area(a, b, c):
    # Heron's formula in the numerically stable ordering is not needed at
    # field magnitudes; clip the small negatives that rounding can give.
    p = (a + b + c) * (-a + b + c) * (a - b + c) * (a + b - c)
    return 0.25 * np.sqrt(np.clip(p, 0.0, None))


def sequence_magnitudes_from_ll(u_ab, u_bc, u_ca):
    """|V1| and |V2| of a line-to-line set from its three magnitudes alone.

    Returns
    -------
    (v1, v2) : tuple of numpy.ndarray
        Line-to-line positive and negative sequence magnitudes (V), the larger
        one as ``v1``.  NaN where the magnitudes cannot form a triangle.
    """
    a, b, c = (np.asarray(x, dtype=float) for x in (u_ab, u_bc, u_ca))
    ok = triangle_ok(a, b, c)
    mean_sq = (a * a + b * b + c * c) / 6.0
    k = 2.0 * _triangle_area(a, b, c) / SQRT3
    v1 = np.sqrt(mean_sq + k)
    v2 = np.sqrt(np.clip(mean_sq - k, 0.0, None))
    return np.where(ok, v1, np.nan), np.where(ok, v2, np.nan)


def vuf_from_ll_magnitudes(u_ab, u_bc, u_ca):
    """IEC 61000-4-30 voltage unbalance from three line-to-line magnitudes (%).

    Notes
    -----
    ``β = (Uab⁴ + Ubc⁴ + Uca⁴) / (Uab² + Ubc² + Uca²)²`` and
    ``u2 = 100·√((1 − √(3 − 6β)) / (1 + √(3 − 6β)))``
    (IEC 61000-4-30 Ed.3 clause 5.7.1; EN 50160 clause 4.2.5 note).
    NaN where the magnitudes cannot form a triangle.

    Examples
    --------
    >>> float(vuf_from_ll_magnitudes(400.0, 400.0, 400.0))
    0.0
    """
    a, b, c = (np.asarray(x, dtype=float) for x in (u_ab, u_bc, u_ca))
    a2, b2, c2 = a * a, b * b, c * c
    s2 = a2 + b2 + c2
    safe = np.where(s2 > 0, s2 * s2, 1.0)
    # 6β − 2 written without cancellation: 3·ΣU⁴ − (ΣU²)² = Σ_{i<j}(Ui² − Uj²)².
    six_beta_minus_2 = 2.0 * ((a2 - b2) ** 2 + (b2 - c2) ** 2 + (c2 - a2) ** 2) / safe
    r = np.sqrt(np.clip(1.0 - six_beta_minus_2, 0.0, 1.0))  # r = √(3 − 6β)
    # (1 − r)/(1 + r) = (1 − r²)/(1 + r)² = (6β − 2)/(1 + r)²: the same value, well conditioned near balance.
    u2 = 100.0 * np.sqrt(np.clip(six_beta_minus_2, 0.0, None)) / (1.0 + r)
    return np.where(triangle_ok(a, b, c), u2, np.nan)
