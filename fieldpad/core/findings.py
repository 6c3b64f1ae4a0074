"""Findings: the structured list a technician reads for each reading.

Each finding is a dict with ``code``, ``severity`` (``alarm``, ``warning`` or
``info``), ``message`` (what was seen and what to check next; never that
equipment is safe), ``value`` and ``threshold`` (numbers or None), ``unit``,
``phase`` (the phase label or None) and ``source`` (where the threshold
comes from).  The masks are computed vectorised by
:func:`fieldpad.core.analysis.analyze`; each finding's wording and order are its definition's in
:mod:`fieldpad.core.registry`; this module only words them.
"""

from __future__ import annotations

import math

import numpy as np

from .analysis import Analysis
from .registry import ORDER, REGISTRY
from .rotation import REASON_TEXT, ROTATION_NAMES
from .thresholds import SOURCES

SEVERITY_ORDER = {"alarm": 0, "warning": 1, "info": 2}
#: code -> the threshold source key (a key of SOURCES; "voltage" by the reading's standard).
SOURCE_KEY = {code: d.source for code, d in REGISTRY.items()}


def phase_label(ph: int, labels=("A", "B", "C")):
    """A finding's phase: 0..2 a phase, 3..5 a line-to-line pair (3 = A-B, 4 = B-C, 5 = C-A), else None."""
    if 0 <= ph < len(labels):
        return labels[ph]
    if 3 <= ph < 6 and len(labels) == 3:
        return f"{labels[ph - 3]}-{labels[(ph - 2) % 3]}"
    return None


def _num(x):
    x = float(x)
    return None if math.isnan(x) or math.isinf(x) else round(x, 4)


def findings_lists(result: Analysis, labels=("A", "B", "C"), standards=None) -> list[list[dict]]:
    """Word the findings of every reading.

    Parameters
    ----------
    result : Analysis
    labels : sequence of str
        Phase labels the site uses (``A/B/C`` or ``L1/L2/L3``).
    standards : array_like of int, optional
        Voltage standard per reading (0 ANSI, 1 IEC), for the message and source.

    Returns
    -------
    list of list of dict, within each reading by severity, then the definition's priority.
    """
    out: list[list[dict]] = [[] for _ in range(result.n)]
    std = np.zeros(result.n, np.int8) if standards is None else np.asarray(standards)
    derating = result["derating"]
    reason = result["rotation_reason"]
    rcode = result["rotation"]
    expected = result.finding_field(result.values.get("expected_rotation", 1))
    for code, severity, mask, value, threshold, unit, phase in result.findings:
        if not mask.any():
            continue
        value, threshold, phase = (result.finding_field(x) for x in (value, threshold, phase))
        for i in np.flatnonzero(mask):
            ph = int(phase[i])
            iec = bool(std[i] == 1)
            d = REGISTRY[code]
            src_key = ("voltage_iec" if iec else "voltage_ansi") if d.source == "voltage" else d.source
            text = f"{d.seen} {d.check}" if d.check else d.seen
            msg = text.format(
                ph=phase_label(ph, labels) or "?",
                value=float(value[i]) if np.isfinite(value[i]) else float("nan"),
                threshold=float(threshold[i]) if np.isfinite(threshold[i]) else float("nan"),
                derating=f"{derating[i]:.2f}" if np.isfinite(derating[i]) else "n/a",
                reason=REASON_TEXT.get(int(reason[i]), ""),
                std="IEC 60038" if iec else "ANSI C84.1 Range B",
                std_name="IEC 60038 (the standard in force for this reading)"
                if iec
                else "ANSI C84.1 (the standard in force for this reading)",
                rot=ROTATION_NAMES[int(rcode[i])],
                expected=ROTATION_NAMES[int(expected[i])],
            )
            out[i].append(
                {
                    "code": code,
                    "severity": severity,
                    "message": msg,
                    "value": _num(value[i]),
                    "threshold": _num(threshold[i]),
                    "unit": unit,
                    "phase": phase_label(ph, labels),
                    "source": SOURCES[src_key],
                }
            )
    for lst in out:
        lst.sort(key=lambda f: ORDER[f["code"], f["severity"]])
    return out
