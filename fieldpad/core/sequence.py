"""Symmetrical components (Fortescue) for three phases and, in the general DFT
form, for n = 2..12 phases; the inverse transforms; the line-to-neutral
equivalent of sequence quantities measured line-to-line.

Notes
-----
For n phases with ``w = exp(j·2π/n)`` the amplitude-invariant transform is

    X_k = (1/n) · Σ_{p=0}^{n-1} w^{k·p} · V_p ,   k = 0 … n−1

and its inverse ``V_p = Σ_k w^{−k·p} · X_k``.  For n = 3, ``w = a = 1∠120°``
and this is Fortescue's ``V1 = (Va + a·Vb + a²·Vc)/3``,
``V2 = (Va + a²·Vb + a·Vc)/3``, ``V0 = (Va + Vb + Vc)/3``.  The order of
the output is (0, 1, 2, …): zero, positive, negative sequence for n = 3.

References
----------
C. L. Fortescue, "Method of Symmetrical Co-ordinates Applied to the Solution
of Polyphase Networks", AIEE Transactions 37 (1918) — the n-phase form.
J. J. Grainger and W. D. Stevenson, *Power System Analysis*, McGraw-Hill
1994, chapter 11 (three-phase form and the 30-degree shift).
"""

from __future__ import annotations

import numpy as np

from .phasors import SQRT3

A = np.exp(2j * np.pi / 3.0)  #: the operator a = 1∠120°


def _dft_matrix(n: int) -> np.ndarray:
    if not 2 <= n <= 12:
        raise ValueError(f"number of phases must be 2..12, got {n}")
    k = np.arange(n)
    return np.exp(2j * np.pi * np.outer(k, k) / n) / n


# Rows: 0, 1, 2 sequence; columns: phase a, b, c.
FORTESCUE = _dft_matrix(3)
FORTESCUE_INV = np.linalg.inv(FORTESCUE)


def sequence_components(phases):
    """Zero, positive and negative sequence of three phasors.

    Parameters
    ----------
    phases : array_like of complex, shape (..., 3)
        Phase a, b, c phasors (V or A), one common angle reference.

    Returns
    -------
    numpy.ndarray of complex, shape (..., 3)
        (X0, X1, X2) referred to phase a, same unit as the input.

    Examples
    --------
    >>> from fieldpad.core.phasors import polar
    >>> s = sequence_components(polar(277.0, np.array([0.0, -120.0, 120.0])))
    >>> np.round(np.abs(s), 9).tolist()
    [0.0, 277.0, 0.0]
    """
    v = np.asarray(phases)
    x0, x1, x2 = sequence_components_cols(v[..., 0], v[..., 1], v[..., 2])
    out = np.empty(np.shape(x0) + (3,), dtype=complex)
    out[..., 0], out[..., 1], out[..., 2] = x0, x1, x2
    return out


def sequence_components_cols(va, vb, vc):
    """:func:`sequence_components` with each phase as its own array.

    Returns
    -------
    (x0, x1, x2) : tuple of complex arrays
    """
    # a·Vb + a²·Vc = −(Vb + Vc)/2 + j(√3/2)(Vb − Vc), and a²·Vb + a·Vc its conjugate pair:
    # the same transform with fewer complex multiplications.
    va, vb, vc = (np.asarray(x, dtype=complex) for x in (va, vb, vc))
    s = vb + vc
    if s.ndim == 0:
        u = va - 0.5 * s
        t = (vb - vc) * (0.5j * SQRT3)
        return (va + s) / 3.0, (u + t) / 3.0, (u - t) / 3.0
    # Arrays: the 1/3 is folded in, and real scalings run on the float view
    # (a complex division per element is several times dearer).
    x0 = va + s
    _scale(x0, 1.0 / 3.0)
    u = va - 0.5 * s
    _scale(u, 1.0 / 3.0)
    t = (vb - vc) * (1j * SQRT3 / 6.0)
    x1 = u + t
    return x0, x1, np.subtract(u, t, out=u)


def _scale(z, k):
    """Multiply a contiguous complex array by a real number, in place."""
    z.view(np.float64)[...] *= k


def phases_from_sequence(seq):
    """Inverse of :func:`sequence_components`: phase a, b, c from (X0, X1, X2)."""
    return np.asarray(seq) @ FORTESCUE_INV.T


def sequence_components_n(phases):
    """Symmetrical components of n = 2..12 phasors (general DFT form).

    Parameters
    ----------
    phases : array_like of complex, shape (..., n)
        Phase phasors in phase order, each lagging the previous by 360/n
        degrees in the positive sequence.

    Returns
    -------
    numpy.ndarray of complex, shape (..., n)
        Components of sequence 0 … n−1 (component 1 is the positive sequence).
    """
    v = np.asarray(phases)
    return v @ _dft_matrix(v.shape[-1]).T


def phases_from_sequence_n(seq):
    """Inverse of :func:`sequence_components_n`."""
    s = np.asarray(seq)
    return s @ np.linalg.inv(_dft_matrix(s.shape[-1])).T


def ln_equivalent_from_ll(seq_ll):
    """Line-to-neutral-equivalent sequence phasors from line-to-line ones.

    Parameters
    ----------
    seq_ll : array_like of complex, shape (..., 3)
        (Vab0, Vab1, Vab2) from :func:`sequence_components` of (Vab, Vbc, Vca).

    Returns
    -------
    numpy.ndarray of complex, shape (..., 3)
        (NaN, Va1, Va2): ``Va1 = Vab1 / (√3∠30°)`` and
        ``Va2 = Vab2 / (√3∠−30°)``.  The zero sequence cannot be seen
        line-to-line (Vab0 is always 0), so it is NaN.

    References
    ----------
    Grainger & Stevenson, *Power System Analysis* (1994), section 11.2 — the
    30-degree shift between line-to-line and line-to-neutral sequence voltages.
    """
    s = np.asarray(seq_ll)
    out = np.empty(s.shape, dtype=complex)
    out[..., 0] = np.nan
    out[..., 1] = s[..., 1] / (SQRT3 * np.exp(1j * np.pi / 6.0))
    out[..., 2] = s[..., 2] / (SQRT3 * np.exp(-1j * np.pi / 6.0))
    return out
