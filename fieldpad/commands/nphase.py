"""``fieldpad compute`` on n-phase sets: 2 to 12 phases (for example the two secondaries of a phase-shifting
transformer read as six phases), every sequence's magnitude and angle by the core's n-phase symmetrical
components (:func:`fieldpad.core.sequence.sequence_components_n`, the DFT form of Fortescue's transform).

Fields (our own naming, README "n-phase sets"):

* input: ``phases`` (N, 2..12), ``vp1`` .. ``vpN`` (RMS volts) with ``vp1_deg`` .. ``vpN_deg`` (degrees,
  counter-clockwise positive; a blank ``vp1_deg`` is 0, the reference), optionally ``ip1`` .. ``ipN`` (RMS
  amps) with ``ip1_deg`` .. ``ipN_deg``.  Phase k+1 lags phase k by 360/N degrees in the positive sequence.
* output: ``phases``, then for k = 0 .. M-1 (M the largest N in the file) ``vseq{k}`` and ``vseq{k}_deg``,
  the sequence-k component referred to phase 1 (k = 1 the positive sequence), and the same ``iseq{k}``,
  ``iseq{k}_deg`` when the file has currents; empty (null) where the set has no such sequence, an angle is
  empty where its magnitude is zero (to within 1e-9 of the largest component).
"""

from __future__ import annotations

import numpy as np

from ..core.phasors import polar
from ..core.readings import ReadingError, parse_value
from ..core.sequence import sequence_components_n

MAX_PHASES = 12
FIELDS = ("phases",) + tuple(f"{p}{k}{s}" for p in ("vp", "ip") for k in range(1, MAX_PHASES + 1) for s in ("", "_deg"))
KIND = {f: ("V" if f.startswith("vp") else "A") if not f.endswith("_deg") else "deg" for f in FIELDS[1:]}


def is_nphase(raw) -> bool:
    """A file of n-phase sets: it has a ``phases`` field."""
    return "phases" in raw.cols


def _record_problems(rec: dict):
    """(n, values, problems) of one n-phase record: ``values`` field -> float or None."""
    problems = []
    for key in rec:
        if key not in FIELDS:
            problems.append(
                (
                    str(key),
                    "unknown field (an n-phase set takes phases, vp1..vpN, vp1_deg..vpN_deg, "
                    "ip1..ipN, ip1_deg..ipN_deg)",
                )
            )
    n = None
    p = rec.get("phases")
    try:
        n = parse_value(p, "A")  # a plain number; the unit words of a current do not fit a count
        if n is None:
            problems.append(("phases", "is required (2 to 12)"))
        elif n != int(n) or not 2 <= n <= MAX_PHASES:
            problems.append(("phases", f"{n:g} is not a number of phases from 2 to 12"))
            n = None
        else:
            n = int(n)
    except ReadingError as e:
        problems.append(("phases", str(e)))
        n = None
    values = {}
    for f in FIELDS[1:]:
        try:
            values[f] = parse_value(rec.get(f), KIND[f])
        except ReadingError as e:
            problems.append((f, str(e)))
            values[f] = None
    if n is not None:
        for k in range(1, MAX_PHASES + 1):
            for f in (f"vp{k}", f"vp{k}_deg", f"ip{k}", f"ip{k}_deg"):
                if k > n and values[f] is not None:
                    problems.append((f, f"the set has {n} phases"))
        has_i = any(values[f"ip{k}"] is not None or values[f"ip{k}_deg"] is not None for k in range(1, n + 1))
        for k in range(1, n + 1):
            if values[f"vp{k}"] is None:
                problems.append((f"vp{k}", f"is required for a set of {n} phases"))
            if values[f"vp{k}_deg"] is None and k > 1:
                problems.append((f"vp{k}_deg", f"is required for a set of {n} phases"))
            if has_i:
                for f in (f"ip{k}", f"ip{k}_deg"):
                    if values[f] is None and not (f.endswith("_deg") and values[f"ip{k}"] == 0):
                        problems.append((f, "give every phase's current and angle, or none"))
    return n, values, problems


def check_block(raw):
    """(columns, problems) of a block of n-phase records: ``columns`` is (n array, field -> float array);
    problems as :func:`fieldpad.formats.columns.check_block` gives them."""
    from ..formats.columns import _cell, _number_column

    rows = raw.n
    suspect = np.zeros(rows, bool)
    if any(k not in FIELDS for k in raw.cols):
        suspect[:] = True
    for i in raw.extra:
        suspect[i] = True
    for i in raw.skip:
        suspect[i] = True
    cols = {}
    for f in FIELDS:
        if f not in raw.cols:
            continue
        x, slow = _number_column(raw, f, "A" if f == "phases" else KIND[f])
        for i in slow.tolist():
            try:
                v = parse_value(_cell(raw, f, i), "A" if f == "phases" else KIND[f])
            except ReadingError:
                suspect[i] = True
                v = None
            x[i] = np.nan if v is None else v
        cols[f] = x
    nan = np.full(rows, np.nan)
    n = cols.get("phases", nan)
    with np.errstate(invalid="ignore"):
        good_n = (n == np.round(n)) & (n >= 2) & (n <= MAX_PHASES)
    suspect |= ~good_n
    ni = np.where(good_n, n, 0).astype(np.int64)
    i_any = np.zeros(rows, bool)
    for k in range(1, MAX_PHASES + 1):
        inside = k <= ni
        for f in (f"vp{k}", f"vp{k}_deg", f"ip{k}", f"ip{k}_deg"):
            given = ~np.isnan(cols.get(f, nan))
            suspect |= given & ~inside
        suspect |= inside & np.isnan(cols.get(f"vp{k}", nan))
        if k > 1:
            suspect |= inside & np.isnan(cols.get(f"vp{k}_deg", nan))
        i_any |= inside & (~np.isnan(cols.get(f"ip{k}", nan)) | ~np.isnan(cols.get(f"ip{k}_deg", nan)))
    for k in range(1, MAX_PHASES + 1):
        inside = k <= ni
        mag, ang = cols.get(f"ip{k}", nan), cols.get(f"ip{k}_deg", nan)
        suspect |= inside & i_any & (np.isnan(mag) | (np.isnan(ang) & (mag != 0)))
    problems = []
    for i in np.flatnonzero(suspect).tolist():
        early = list(raw.extra.get(i, ()))
        if i in raw.skip:
            problems.append((i, "(row)", f"{raw.skip[i]} more value(s) than the header has columns"))
            continue
        _n, _v, probs = _record_problems(raw.record(i))
        problems.extend((i, f, r) for f, r in early + probs)
    return (ni, {k: v for k, v in cols.items() if k != "phases"}, i_any), problems


def analyse(ni, cols, has_i):
    """Sequence magnitudes and angles of each set: (field -> float array), fields in output order for
    ``m`` = the largest number of phases."""
    rows = ni.shape[0]
    m = int(ni.max()) if rows else 2
    out = {"phases": ni.astype(float)}
    nan = np.full(rows, np.nan)
    for prefix, seq, given in (("vp", "vseq", np.ones(rows, bool)), ("ip", "iseq", has_i)):
        mags = {k: np.full(rows, np.nan) for k in range(m)}
        angs = {k: np.full(rows, np.nan) for k in range(m)}
        for n in np.unique(ni).tolist():
            sel = np.flatnonzero((ni == n) & given)
            if not sel.size:
                continue
            ph = np.stack(
                [
                    polar(
                        cols.get(f"{prefix}{k}", nan)[sel],
                        np.nan_to_num(cols.get(f"{prefix}{k}_deg", nan)[sel], nan=0.0),
                    )
                    for k in range(1, n + 1)
                ],
                axis=-1,
            )
            s = sequence_components_n(ph)
            a = np.abs(s)
            scale = a.max(axis=-1, keepdims=True)
            deg = np.round(np.degrees(np.angle(s)), 4) + 0.0  # + 0.0: no "-0.0" for a rounded-off angle
            deg = np.where(a <= 1e-9 * scale, np.nan, deg)
            for k in range(n):
                mags[k][sel] = a[:, k]
                angs[k][sel] = deg[:, k]
        if prefix == "ip" and not has_i.any():
            continue
        for k in range(m):
            out[f"{seq}{k}"] = mags[k]
            out[f"{seq}{k}_deg"] = angs[k]
    return out


def output_fields(m: int, currents: bool) -> tuple:
    fields = ["phases"]
    for seq in ("vseq", "iseq") if currents else ("vseq",):
        for k in range(m):
            fields += [f"{seq}{k}", f"{seq}{k}_deg"]
    return tuple(fields)


def write(spool, kind, fmt, write_bytes, m: int, currents: bool) -> None:
    """Write every checked block's sequences (CSV or JSON, as :func:`fieldpad.commands.compute.write_results`
    writes the three-phase results)."""
    import json

    from ..formats.writers import WRITE_ROWS, assemble, float_cells

    fields = output_fields(m, currents)
    if fmt == "csv":
        write_bytes((",".join(fields) + "\n").encode())
    elif kind != "json-object":
        write_bytes(b"[")
    first = True
    for ni, cols, has_i in spool:
        res = analyse(ni, cols, has_i)
        rows = ni.shape[0]
        for lo in range(0, rows, WRITE_ROWS):
            hi = min(rows, lo + WRITE_ROWS)
            parts = []
            for j, f in enumerate(fields):
                x = res.get(f, np.full(rows, np.nan))[lo:hi]
                if fmt == "csv":
                    if f == "phases":
                        parts.append([str(int(v)).encode() for v in x.tolist()])
                    else:
                        parts.append(float_cells(x))
                    parts.append(b"," if j < len(fields) - 1 else b"\n")
                else:
                    parts.append((b"{" if j == 0 else b",") + b"\n  " + json.dumps(f).encode() + b": ")
                    parts.append(
                        [str(int(v)).encode() for v in x.tolist()] if f == "phases" else float_cells(x, null=b"null")
                    )
            if fmt == "csv":
                write_bytes(assemble(parts, hi - lo))
                continue
            parts.append(b"\n}")
            if kind == "json-object":
                write_bytes(assemble(parts + [b"\n"], hi - lo))
                continue
            body = assemble([b",\n"] + parts, hi - lo)
            write_bytes(body[1:] if first else body)
            first = False
    if fmt != "csv" and kind != "json-object":
        write_bytes(b"\n]\n")
