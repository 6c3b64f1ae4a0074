"""Power per phase and in total, from fundamental phasors.

Sign convention (IEEE Std 1459-2010, load convention): the complex power of a
phase is ``S = V·I*``; P is positive when power flows to the load, and Q is
positive when the current lags the voltage (inductive load).  The power
factor is ``PF = P / S`` with the sign of P kept (a negative PF means power
flowing back, or a reversed CT).

* Arithmetic apparent power: ``S_arith = Σ|Vx|·|Ix|`` (needs only magnitudes).
* Vector apparent power: ``S_vec = |ΣPx + jΣQx|``.
* Sequence-power identity (amplitude-invariant transform):
  ``Σ Vx·Ix* = 3·(V0·I0* + V1·I1* + V2·I2*)`` (Grainger & Stevenson 1994,
  section 11.7, from memory).
* A 3-wire system measured line-to-line: total power by the two-wattmeter
  (Blondel) method, ``S = Vab·Ia* + Vcb·Ic*`` with ``Vcb = −Vbc``; per-phase
  powers are not defined.
"""

from __future__ import annotations

import numpy as np


def complex_power(v, i):
    """Complex power ``S = V·I*`` elementwise (VA; real part W, imaginary var)."""
    return np.asarray(v) * np.conj(np.asarray(i))


def power_factor(p, s):
    """``P/S`` with the sign of P kept; NaN where S is zero or unknown."""
    p = np.asarray(p, dtype=float)
    s = np.asarray(s, dtype=float)
    safe = np.where(s > 0, s, 1.0)
    return np.where(s > 0, p / safe, np.nan)


def sequence_power(v_seq, i_seq):
    """Total complex power from sequence components: ``3·Σ Vk·Ik*`` (VA)."""
    return 3.0 * (np.asarray(v_seq) * np.conj(np.asarray(i_seq))).sum(axis=-1)


def two_wattmeter_power(vab, vbc, ia, ic):
    """Total complex power of a 3-wire system from line-to-line voltages (VA).

    ``S = Vab·Ia* + Vcb·Ic*`` with ``Vcb = −Vbc`` (two-wattmeter / Blondel
    method; Ib is not needed since Ia + Ib + Ic = 0 in a 3-wire system).
    Voltages in V, currents in A, all complex phasors on one reference.
    """
    return complex_power(vab, ia) - complex_power(vbc, ic)
