"""The voltage triangle: three line-to-line magnitudes drawn as a triangle, with
its outer and inner Napoleon triangles.

With no angles, the three line-to-line magnitudes still close a triangle (the
line-to-line phasors sum to zero).  Erecting an equilateral triangle on each
side, outwards and inwards, and joining their centres gives the outer and
inner Napoleon triangles, both equilateral (Napoleon's theorem).  Their sides
are the line-to-line sequence magnitudes: outer = |V1 line-to-line| = √3·|V1|,
inner = |V2 line-to-line| = √3·|V2| (V1, V2 in line-to-neutral terms), so
the unbalance V2/V1 is the ratio of the inner side to the outer one: a small
inner triangle is a small unbalance.

Geometry, pure functions: array in, array out, broadcasting; NaN where the
magnitudes cannot form a triangle (no warnings).  Vertices are complex numbers
in volts, centred on the triangle's centroid, vertex A straight up (90°) and
the order A, B, C clockwise (an A-B-C rotation drawn counter-clockwise
positive, as the phasor diagram).

References
----------
H. S. M. Coxeter and S. L. Greitzer, *Geometry Revisited*, MAA, 1967, §3.3
(Napoleon triangles; the difference of their areas is the area of the
original triangle) — from memory.
"""

from __future__ import annotations

import numpy as np

SQRT3 = float(np.sqrt(3.0))


def vertices(u_ab, u_bc, u_ca):
    """Vertices A, B, C (complex, V) of the triangle whose sides are the line-to-line magnitudes.

    Parameters
    ----------
    u_ab, u_bc, u_ca : array_like
        Line-to-line RMS magnitudes (V), broadcasting.

    Returns
    -------
    (a, b, c) : tuple of numpy.ndarray of complex
        |a − b| = u_ab, |b − c| = u_bc, |c − a| = u_ca; centroid at 0, ``a`` at 90°.
        NaN where the sides cannot close a triangle.

    Examples
    --------
    >>> a, b, c = vertices(3.0, 4.0, 5.0)
    >>> [round(float(abs(x - y)), 9) for x, y in ((a, b), (b, c), (c, a))]
    [3.0, 4.0, 5.0]
    """
    ab, bc, ca = (np.asarray(x, dtype=float) for x in (u_ab, u_bc, u_ca))
    ab, bc, ca = np.broadcast_arrays(ab, bc, ca)
    ok = (ab > 0) & (bc > 0) & (ca > 0) & (ab <= bc + ca) & (bc <= ab + ca) & (ca <= ab + bc)
    safe_bc = np.where(ok, bc, 1.0)
    # B at 0, C on the positive real axis, A below it (so A, B, C run clockwise): law of cosines.
    x = (np.where(ok, ab, 1.0) ** 2 + safe_bc**2 - np.where(ok, ca, 1.0) ** 2) / (2.0 * safe_bc)
    y = -np.sqrt(np.clip(np.where(ok, ab, 1.0) ** 2 - x**2, 0.0, None))
    a0, b0, c0 = x + 1j * y, np.zeros_like(x) + 0j, safe_bc + 0j
    g = (a0 + b0 + c0) / 3.0
    a0, b0, c0 = a0 - g, b0 - g, c0 - g
    # Turn so that A points straight up.
    turn = np.where(np.abs(a0) > 0, 1j * np.conj(a0) / np.where(np.abs(a0) > 0, np.abs(a0), 1.0), 1.0)
    nan = np.full(x.shape, np.nan + 0j)
    return tuple(np.where(ok, p * turn, nan) for p in (a0, b0, c0))


def napoleon(a, b, c, outer: bool = True):
    """Centres of the equilateral triangles erected on the sides of triangle ``a, b, c`` (complex, V).

    ``outer``: erected outwards (the outer Napoleon triangle), else inwards.  The
    vertices must run clockwise (as :func:`vertices` gives them).

    Returns
    -------
    (n_ab, n_bc, n_ca) : tuple of numpy.ndarray of complex

    Notes
    -----
    For a side from p to q, the apex of the equilateral triangle is
    p + (q − p)·e^{∓j60°} and its centre is the mean of p, q and the apex.
    """
    rot = np.exp(1j * np.pi / 3.0 * (1.0 if outer else -1.0))  # clockwise vertices: outwards is +60°

    def centre(p, q):
        apex = p + (q - p) * rot
        return (p + q + apex) / 3.0

    return centre(a, b), centre(b, c), centre(c, a)


def napoleon_sides(u_ab, u_bc, u_ca):
    """Sides of the outer and inner Napoleon triangles (V): √3·|V1| and √3·|V2| in line-to-neutral terms.

    Returns
    -------
    (outer, inner) : tuple of numpy.ndarray
        NaN where the magnitudes cannot form a triangle.

    Notes
    -----
    outer² = (a² + b² + c²)/6 + (2/√3)·S and inner² = (a² + b² + c²)/6 − (2/√3)·S,
    S the triangle's area (Heron); both follow from the construction in
    :func:`napoleon` (the test checks the two against each other).

    Examples
    --------
    A balanced 480 V set: outer 480 V = √3 · 277.1 V, inner 0.

    >>> [round(float(x), 6) for x in napoleon_sides(480.0, 480.0, 480.0)]
    [480.0, 0.0]
    """
    a, b, c = vertices(u_ab, u_bc, u_ca)
    outs = napoleon(a, b, c, outer=True)
    ins = napoleon(a, b, c, outer=False)
    return np.abs(outs[0] - outs[1]), np.abs(ins[0] - ins[1])
