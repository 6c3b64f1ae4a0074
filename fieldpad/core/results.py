"""Result records: the analysis of each reading as a plain dict, in the order
``fieldpad compute`` writes them (public contract for the first fields).

Values are rounded to 4 decimals; a quantity the input cannot give is None.
"""

from __future__ import annotations

import numpy as np

from .analysis import BASIS_NAMES, Analysis
from .findings import findings_lists
from .rotation import REASON_NOT_3PH, REASON_TEXT, ROTATION_NAMES

#: Output fields in order.  The first block is the public contract of
#: ``fieldpad compute``; the rest are additions.
RESULT_FIELDS = (
    "v0",
    "v1",
    "v2",
    "v0_deg",
    "v1_deg",
    "v2_deg",
    "vuf_pct",
    "v0uf_pct",
    "lvur_pct",
    "pvur_pct",
    "rotation",
    "i0",
    "i1",
    "i2",
    "i0_deg",
    "i1_deg",
    "i2_deg",
    "iuf_pct",
    "i_n_calc",
    "i_n_calc_deg",
    "i_n_est",
    "p_w",
    "q_var",
    "s_va",
    "pf",
    "derating",
    # additions
    "iur_pct",
    "i_n_diff",
    "s_vector_va",
    "p_a_w",
    "p_b_w",
    "p_c_w",
    "q_a_var",
    "q_b_var",
    "q_c_var",
    "pf_a",
    "pf_b",
    "pf_c",
    "temp_rise_pct",
    "v_dev_max_pct",
    "high_leg",
    "rotation_note",
    "basis",
    "s_va_method",
    "findings",
)
_FLOAT_FIELDS = tuple(
    f for f in RESULT_FIELDS if f not in ("rotation", "high_leg", "rotation_note", "basis", "s_va_method", "findings")
)
#: How ``s_va`` and ``pf`` were formed (analysis value ``s_va_vector``).
S_VA_METHOD = {-1: None, 0: "arithmetic", 1: "vector"}


def _column(values) -> list:
    """Rounded to 4 decimals, NaN and infinities as None, as a plain list."""
    a = np.round(np.asarray(values, dtype=float), 4)
    a[~np.isfinite(a)] = np.nan
    return [None if x != x else x for x in a.tolist()]


def to_records(result: Analysis, labels=("A", "B", "C"), standards=None) -> list[dict]:
    """One dict per reading, fields in :data:`RESULT_FIELDS` order."""
    v = result.values
    three_phase = (np.asarray(v["rotation_reason"]) != REASON_NOT_3PH).tolist()
    columns = {f: _column(v[f]) for f in _FLOAT_FIELDS}
    columns["rotation"] = [ROTATION_NAMES[r] if tp else None for r, tp in zip(v["rotation"].tolist(), three_phase)]
    columns["rotation_note"] = [REASON_TEXT[r] or None for r in v["rotation_reason"].tolist()]
    columns["basis"] = [BASIS_NAMES[b] for b in v["basis"].tolist()]
    columns["s_va_method"] = [S_VA_METHOD[k] for k in v["s_va_vector"].tolist()]
    columns["high_leg"] = [labels[h] if h >= 0 else None for h in v["high_leg"].tolist()]
    columns["findings"] = findings_lists(result, labels, standards)
    return [dict(zip(RESULT_FIELDS, row)) for row in zip(*(columns[f] for f in RESULT_FIELDS))]


def analyze_records(clean_records: list[dict], thresholds=None, labels=("A", "B", "C")) -> list[dict]:
    """Validated records (see :func:`fieldpad.core.readings.validate_record`) -> result dicts."""
    from .analysis import analyze
    from .readings import records_to_columns

    if not clean_records:
        return []
    cols, system, standard = records_to_columns(clean_records)
    return to_records(analyze(cols, system, standard, thresholds), labels, standard)
