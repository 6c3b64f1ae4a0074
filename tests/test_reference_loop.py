"""The vectorised analysis against an independent plain-Python implementation, reading by reading."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from reference_loop import analyse_one

from fieldpad.core.analysis import analyze
from fieldpad.core.results import to_records

FIELDS = (
    "v0",
    "v1",
    "v2",
    "vuf_pct",
    "v0uf_pct",
    "lvur_pct",
    "pvur_pct",
    "i0",
    "i1",
    "i2",
    "iuf_pct",
    "iur_pct",
    "i_n_calc",
    "i_n_est",
    "p_w",
    "q_var",
    "s_va",
    "s_vector_va",
    "pf",
    "p_a_w",
    "q_b_var",
    "pf_c",
    "derating",
    "temp_rise_pct",
)

reading = st.fixed_dictionaries(
    {
        **{f"v{p}": st.floats(5.0, 320.0) for p in "abc"},
        "va_deg": st.just(0.0),
        "vb_deg": st.floats(-180.0, 180.0),
        "vc_deg": st.floats(-180.0, 180.0),
        **{f"i{p}": st.floats(0.5, 400.0) for p in "abc"},
        **{f"i{p}_deg": st.floats(-180.0, 180.0) for p in "abc"},
        "nominal_v": st.sampled_from([208.0, 480.0]),
        "i_n": st.one_of(st.just(math.nan), st.floats(0.0, 500.0)),
    }
)


@settings(max_examples=150, deadline=None)
@given(st.lists(reading, min_size=1, max_size=20))
def test_vectorised_equals_plain_loop(rows):
    cols = {k: np.array([r[k] for r in rows]) for k in rows[0]}
    got = to_records(analyze(cols, np.zeros(len(rows), np.int8)))
    for r, g in zip(rows, got):
        want = analyse_one(r)
        # Skip readings on a decision boundary, where rounding may fall either way.
        margins = [
            abs(want["vuf_pct"] - 2.0),
            abs(want["lvur_pct"] - 1.0),
            abs(want["lvur_pct"] - 5.0),
            abs(want["iur_pct"] - 10.0),
            abs(min(r[f"v{p}"] for p in "abc") / max(r[f"v{p}"] for p in "abc") - 0.5),
            max(want["v1"], want["v2"]) - 0.1 * want["v0"],  # in-phase rule (rotation.py rule 4)
            want["v0uf_pct"] - 5.0,
            want["pvur_pct"] - 5.0,
            want["lvur_pct"] - 2.0,  # neutral shift
            *want["_wiring_margins"],
        ]  # the wiring hypothesis: its 20° margin, a tie, the PF margin
        # ... and degenerate sets with no rotating component at all (V1 = V2 = 0 up to rounding: 0/0).
        degenerate = max(want["v1"], want["v2"]) < 1e-9 * max(r[f"v{p}"] for p in "abc") or max(
            want["i1"], want["i2"]
        ) < 1e-9 * max(r[f"i{p}"] for p in "abc")
        if min(abs(m) for m in margins) < 1e-6 or degenerate:
            continue
        for f in FIELDS:
            w = want[f]
            if isinstance(w, float) and math.isnan(w):
                assert g[f] is None, f
            else:
                assert g[f] == pytest.approx(w, rel=1e-6, abs=1e-3), f
        assert g["rotation"] == want["rotation"]
        got_codes = {f["code"] for f in g["findings"]}
        assert got_codes == want["codes"], (r, got_codes, want["codes"])
