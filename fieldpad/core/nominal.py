"""Voltage against nominal: ANSI C84.1 Range A and B, or IEC 60038 ±10 %.

The limits are fractions of the nominal voltage (service voltage, systems up
to 600 V):

* ANSI C84.1-2020, Table 1: Range A 0.95 … 1.05 (114–126 V on a 120 V base);
  Range B 0.917 … 1.058 (110–127 V on a 120 V base).  From memory.
* IEC 60038:2009 clause 4 (a.c. systems 100–1000 V): supply voltage within
  ±10 % of the nominal voltage under normal operating conditions.

Status codes: 0 within (Range A / ±10 %), 1 outside Range A but within
Range B (ANSI only), 2 outside Range B (ANSI) or outside ±10 % (IEC);
-1 where the voltage or the nominal is unknown.
"""
from __future__ import annotations

import numpy as np

ANSI, IEC = "ansi", "iec"
STANDARD_NAMES = {ANSI: "ANSI C84.1", IEC: "IEC 60038"}

#: standard -> ((low_a, high_a), (low_b, high_b)) as fractions of nominal.
LIMITS = {
    ANSI: ((0.95, 1.05), (110.0 / 120.0, 127.0 / 120.0)),
    IEC: ((0.90, 1.10), (0.90, 1.10)),
}


def deviation_pct(v, v_nominal):
    """``100·(V − Vnom)/Vnom``; NaN where the nominal is unknown or zero."""
    v = np.asarray(v, dtype=float)
    n = np.asarray(v_nominal, dtype=float)
    safe = np.where(n > 0, n, 1.0)
    return np.where(n > 0, 100.0 * (v - n) / safe, np.nan)


def status(v, v_nominal, standard=ANSI):
    """Range status code (see module docstring) for each voltage."""
    (la, ha), (lb, hb) = LIMITS[standard]
    v = np.asarray(v, dtype=float)
    n = np.asarray(v_nominal, dtype=float)
    r = v / np.where(n > 0, n, np.nan)
    code = np.where((r >= la) & (r <= ha), 0, np.where((r >= lb) & (r <= hb), 1, 2))
    return np.where(np.isfinite(r), code, -1).astype(np.int8)


def status_of_ratio(ratio, iec):
    """Range status codes for voltage/nominal ratios, per reading's standard.

    Parameters
    ----------
    ratio : array_like
        Measured voltage over nominal (NaN where unknown).
    iec : array_like of bool
        True where the reading uses IEC 60038, False for ANSI C84.1.
    """
    r = np.asarray(ratio, dtype=float)
    iec = np.asarray(iec, dtype=bool)
    if not iec.any():
        (la, ha), (lb, hb) = LIMITS[ANSI]
    elif iec.all():
        (la, ha), (lb, hb) = LIMITS[IEC]
    else:
        (aa, ab), (ba, bb) = LIMITS[ANSI]
        (ia, ib), (ja, jb) = LIMITS[IEC]
        la, ha = np.where(iec, ia, aa), np.where(iec, ib, ab)
        lb, hb = np.where(iec, ja, ba), np.where(iec, jb, bb)
    code = np.where((r >= la) & (r <= ha), 0, np.where((r >= lb) & (r <= hb), 1, 2))
    return np.where(np.isfinite(r), code, -1).astype(np.int8)
