"""Voltage against nominal: ANSI C84.1 Range A and B, or IEC 60038 ±10 %.

The limits are fractions of the nominal voltage (service voltage, systems up
to 600 V):

* ANSI C84.1-2020, Table 1: Range A 0.95 … 1.05 (114–126 V on a 120 V base);
  Range B 0.917 … 1.058 (110–127 V on a 120 V base).  From memory: the stored public pages searched
  hold the standard's scope and trade discussion of Range A and B (service voltage; Range B for limited
  excursions, prompt corrective action outside it) but no copy of Table 1's values, so every value
  below stays marked "from memory".
* IEC 60038:2009 clause 4 (a.c. systems 100–1000 V): supply voltage within
  ±10 % of the nominal voltage under normal operating conditions.

Status codes: 0 within (Range A / ±10 %), 1 outside Range A but within
Range B (ANSI only), 2 outside Range B (ANSI) or outside ±10 % (IEC);
-1 where the voltage or the nominal is unknown.
"""

from __future__ import annotations

import numpy as np

ANSI, IEC = "ansi", "iec"

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
    v = np.asarray(v, dtype=float)
    n = np.asarray(v_nominal, dtype=float)
    r = v / np.where(n > 0, n, np.nan)
    return status_of_ratio(r, standard == IEC)


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


#: ANSI C84.1-2020 Table 1 (systems up to 600 V), from memory: nominal line-to-line voltage -> the table's own
#: line-to-neutral base (208Y/120, 480Y/277, 600Y/347).  The limits apply to these bases, not to LL/√3
#: (120.09 and 277.13 would move 114.05 V on a 208Y/120 board from Range A into Range B).
ANSI_LN_BASE = {208.0: 120.0, 480.0: 277.0, 600.0: 347.0}
#: ANSI C84.1-2020 Table 1 line-to-line nominals compared as such (3-wire 240, 480, 600; the 208 of 208Y/120;
#: the 240 of 240/120 high-leg delta and 120/240 split-phase), from memory.
ANSI_LL = (208.0, 240.0, 480.0, 600.0)
#: IEC 60038:2009 Table 1 (100-1000 V), from memory: 230/400, 400/690 and the 60 Hz 120/208, 277/480,
#: 347/600 (also the older 220/380 and 240/415).
IEC_LN_BASE = {400.0: 230.0, 690.0: 400.0, 208.0: 120.0, 480.0: 277.0, 600.0: 347.0, 380.0: 220.0, 415.0: 240.0}


def _lookup(v, table):
    out = np.full(np.shape(v), np.nan)
    for k, base in table.items():
        out = np.where(v == k, base, out)
    return out


def comparison_base(v_nominal, line_to_neutral, split, iec):
    """The voltage each phase is compared with, V; NaN where no range is known.

    Parameters
    ----------
    v_nominal : array_like
        Nominal line-to-line voltage (240 for split-phase), V.
    line_to_neutral, split, iec : array_like of bool
        Whether line-to-neutral voltages are compared; whether the system is 120/240 V split-phase (legs on
        a base of half the nominal); whether IEC 60038 applies (else ANSI C84.1).

    Notes
    -----
    * ANSI C84.1-2020 Table 1 covers the listed low-voltage systems only; its limits are applied on the
      table's own bases (:data:`ANSI_LN_BASE`, :data:`ANSI_LL`).  Any other nominal, and every medium
      voltage (4160 V and up, which has its own table with other limits), gets no range ("no range known").
    * IEC 60038:2009 clause 4 covers 100-1000 V: the table's line-to-neutral base where listed, else LL/√3;
      above 1000 V no range is known here.

    Examples
    --------
    >>> comparison_base([208.0, 4160.0], True, False, False).tolist()
    [120.0, nan]
    """
    v = np.asarray(v_nominal, dtype=float)
    ln = np.asarray(line_to_neutral, dtype=bool)
    split = np.asarray(split, dtype=bool)
    iec = np.asarray(iec, dtype=bool)
    ansi_ll = np.where(np.isin(v, ANSI_LL), v, np.nan)
    ansi = np.where(ln, np.where(split, np.where(v == 240.0, 120.0, np.nan), _lookup(v, ANSI_LN_BASE)), ansi_ll)
    iec_scope = (v >= 100.0) & (v <= 1000.0)
    iec_ln = np.where(np.isfinite(_lookup(v, IEC_LN_BASE)), _lookup(v, IEC_LN_BASE), v / np.sqrt(3.0))
    iec_base = np.where(iec_scope, np.where(ln, np.where(split, v / 2.0, iec_ln), v), np.nan)
    return np.where(iec, iec_base, ansi)
