"""Writing CSV and JSON text from columns, a block of rows at a time, without a value object per cell.

A row is a sequence of *parts*: a constant (bytes, the same in every row), a fixed-width cell matrix
(``uint8`` array of shape (N, width), NUL bytes as padding) or a variable part (a list of N bytes
objects, e.g. text a person typed).  :func:`assemble` lays the fixed parts of every row side by side in one
byte matrix, drops the padding and splices the variable parts in.  Numbers are written as Python's
``repr`` writes them (``277.0``, ``-120.0``, ``1.9608``), so the text is the same as the csv and json
modules write for the same values.
"""

from __future__ import annotations

import json
from itertools import chain

import numpy as np

# "0000".."9999" as 4 bytes each (uint32); LEAD has the leading zeros as NUL (0 -> "\0\0\00"); FRAC the
# trailing zeros as NUL after the first digit (0 -> "0", 5000 -> "5", 1230 -> "123").
_DIG = np.frombuffer(b"".join(f"{k:04d}".encode() for k in range(10000)), np.uint32)
_LEAD = np.frombuffer(b"".join(f"{k:d}".encode().rjust(4, b"\0") for k in range(10000)), np.uint32)
_FRAC = np.frombuffer(
    b"".join((f"{k:04d}".rstrip("0") or "0").encode().ljust(4, b"\0") for k in range(10000)), np.uint32
)
_LIMIT = float(2**53)


def float_cells(x, *, null: bytes = b"", rounded: bool = True):
    """Cells for float values, as ``repr`` writes them; NaN and infinities are ``null`` (empty for CSV,
    ``null`` for JSON).

    ``rounded``: the values are rounded to 4 decimals first (the result fields, as ``numpy.round``
    rounds them); otherwise they are written exactly (stored inputs).  Returns an (N, width) ``uint8``
    matrix, or a list of bytes when a value needs more than 4 decimals or 12 integer digits (then written by
    ``repr``).

    Notes
    -----
    A value rounded to 4 decimals is ``k / 10**4`` for an integer ``k`` below 2**53, the double nearest
    that decimal; ``repr`` writes the shortest text that reads back as the same double, which is that
    decimal without its trailing zeros (at least one digit after the point).  So the digits of ``k`` are
    the text, and they are looked up four at a time.
    """
    x = np.asarray(x, dtype=float)
    n = x.shape[0]
    with np.errstate(invalid="ignore"):
        k = np.rint(x * 1e4)  # numpy.round(x, 4) is rint(x * 1e4) / 1e4
        ok = np.abs(k) < _LIMIT
        if not rounded:
            ok &= k / 1e4 == x
    fin = np.isfinite(x)
    if not ok[fin].all():
        y = np.round(x, 4) if rounded else x
        return [repr(v).encode() if v == v and abs(v) != float("inf") else null for v in y.tolist()]
    neg = np.signbit(k)
    a = np.abs(k)
    a[~ok] = 0.0
    a = a.astype(np.int64)
    ip = a // 10000
    fp = a - ip * 10000
    top = int(ip.max()) if n else 0
    groups = 1 if top < 10**4 else 2 if top < 10**8 else 3
    width = 1 + 4 * groups + 1 + 4
    m = np.empty((n, width), np.uint8)
    m[:, 0] = neg * np.uint8(45)
    if groups == 1:
        m[:, 1:5].view(np.uint32)[:, 0] = _LEAD[ip]
    else:
        g = []
        rest = ip
        for _ in range(groups):
            rest, part = np.divmod(rest, 10000)
            g.append(part)
        g.reverse()  # most significant first
        higher = np.zeros(n, bool)  # a nonzero group to the left
        for j, part in enumerate(g):
            last = j == groups - 1
            lead = ~higher & ((part > 0) | last)
            cell = np.where(higher, _DIG[part], np.where(lead, _LEAD[part], 0))
            m[:, 1 + 4 * j : 5 + 4 * j].view(np.uint32)[:, 0] = cell
            higher |= part > 0
    m[:, 1 + 4 * groups] = 46  # "."
    m[:, 2 + 4 * groups :].view(np.uint32)[:, 0] = _FRAC[fp]
    bad = ~ok
    if bad.any():
        m[bad] = 0
        if null:
            m[bad, 1 : 1 + len(null)] = np.frombuffer(null, np.uint8)
    return m


def vocab_cells(codes, texts: dict, *, quote) -> np.ndarray:
    """Cells for a small vocabulary: ``codes`` (int array) -> ``texts[code]`` (str or None), each written by
    ``quote``.  Returns an (N, width) ``uint8`` matrix."""
    codes = np.asarray(codes)
    keys = sorted(texts)
    cells = [quote(texts[k]) for k in keys]
    width = max([len(c) for c in cells] + [1])
    table = np.zeros((len(keys), width), np.uint8)
    for j, c in enumerate(cells):
        table[j, : len(c)] = np.frombuffer(c, np.uint8)
    index = np.searchsorted(np.array(keys), codes)
    return table[index]


def csv_text(value) -> bytes:
    """A CSV cell as the csv module writes it (minimal quoting); None is empty."""
    if value is None:
        return b""
    s = str(value)
    if any(c in s for c in ',"\r\n'):
        s = '"' + s.replace('"', '""') + '"'
    return s.encode("utf-8")


_encode_str = json.encoder.encode_basestring  # the C function json.dumps(..., ensure_ascii=False) uses


def _json_scalar(v) -> str:
    if v is None:
        return "null"
    t = type(v)
    if t is str:
        return _encode_str(v)
    if t is float:
        return float.__repr__(v) if v == v and v not in (float("inf"), float("-inf")) else json.dumps(v)
    if t is bool:
        return "true" if v else "false"
    if t is int:
        return int.__repr__(v)
    return json.dumps(v, ensure_ascii=False)


_FINDING_KEYS = ("code", "severity", "message", "value", "threshold", "unit", "phase", "source")
_CACHE: dict = {}


def _cached(v) -> str:
    """:func:`_json_scalar` of a value that repeats (a code, a unit, a source)."""
    got = _CACHE.get(v)
    if got is None:
        if len(_CACHE) > 10_000:
            _CACHE.clear()
        got = _CACHE[v] = _json_scalar(v)
    return got


def _dict_body(d: dict, inner: str) -> str:
    if tuple(d) == _FINDING_KEYS:  # a finding (core/findings.py): the repeating texts are encoded once
        c, sc = _cached, _json_scalar
        return (
            f'{inner}"code": {c(d["code"])},{inner}"severity": {c(d["severity"])},{inner}"message": '
            f'{_encode_str(d["message"]) if type(d["message"]) is str else sc(d["message"])},{inner}"value": '
            f'{sc(d["value"])},{inner}"threshold": {sc(d["threshold"])},{inner}"unit": {c(d["unit"])},'
            f'{inner}"phase": {c(d["phase"])},{inner}"source": {c(d["source"])}'
        )
    return inner + ("," + inner).join(f"{_encode_str(k)}: {_json_scalar(v)}" for k, v in d.items())


def flat_dicts_json(items: list, pad: str = "") -> str:
    """``json.dumps(items, ensure_ascii=False, indent=2)`` for a list of flat dicts (values None, text or
    numbers), each line after the first indented by ``pad`` more; the same text, without the pure-Python
    encoder that ``indent`` brings."""
    inner = "\n" + pad + "    "
    body = ("\n" + pad + "  },\n" + pad + "  {").join(_dict_body(d, inner) for d in items)
    return "[\n" + pad + "  {" + body + "\n" + pad + "  }\n" + pad + "]"


def json_text(value) -> bytes:
    return json.dumps(value, ensure_ascii=False).encode("utf-8")


def fixed_text(values, quote) -> np.ndarray | list:
    """Cells for text values: a fixed-width matrix when the texts are short (ids, times), else a list."""
    cache: dict = {}
    out = []
    for v in values:
        c = cache.get(v)
        if c is None:
            c = cache[v] = quote(v)
        out.append(c)
    width = max([len(c) for c in out] + [1])
    if width > 64 or len(cache) > 4096 and width > 40:
        return out
    arr = np.array(out, dtype=f"S{width}")
    return arr.view(np.uint8).reshape(len(out), width)


def ascii_cells(values) -> np.ndarray:
    """Cells for text known to need no quoting and to be ASCII (ids, stored UTC times, system names,
    numbers as text); None is empty."""
    arr = np.array(["" if v is None else v for v in values], dtype="S")
    width = max(arr.dtype.itemsize, 1)
    return arr.view(np.uint8).reshape(len(values), width) if len(values) else np.zeros((0, 1), np.uint8)


def assemble(parts, n: int) -> bytes:
    """The text of ``n`` rows made of ``parts`` (see the module docstring)."""
    if n == 0:
        return b""
    segments = []  # lists of bytes (one per row), in order
    fixed: list = []

    def close_fixed(last: bool):
        if not fixed:
            return
        width = sum(p.shape[1] if isinstance(p, np.ndarray) else len(p) for p in fixed)
        sep = 0 if last and not segments else 1
        m = np.zeros((n, width + sep), np.uint8)
        at = 0
        for p in fixed:
            if isinstance(p, np.ndarray):
                w = p.shape[1]
                m[:, at : at + w] = p
            else:
                w = len(p)
                m[:, at : at + w] = np.frombuffer(p, np.uint8)
            at += w
        if sep:
            m[:, -1] = 1
        blob = m.tobytes().translate(None, b"\0")
        segments.append(blob if not sep else blob.split(b"\x01")[:-1])
        fixed.clear()

    for p in parts:
        if isinstance(p, (bytes, np.ndarray)):
            fixed.append(p)
        else:
            close_fixed(False)
            segments.append(p)
    close_fixed(True)
    if len(segments) == 1 and isinstance(segments[0], bytes):
        return segments[0]
    return b"".join(chain.from_iterable(zip(*segments)))


# ---- result columns (the fields of fieldpad compute, core/results.py) ---------------------------------------


def result_columns(result, labels=("A", "B", "C")):
    """The result fields of :data:`fieldpad.core.results.RESULT_FIELDS` (all but ``findings``) as columns:
    name -> ("num", float array) or ("vocab", codes, {code: text or None})."""
    from ..core.analysis import BASIS_NAMES
    from ..core.results import RESULT_FIELDS, S_VA_METHOD
    from ..core.rotation import REASON_NOT_3PH, REASON_TEXT, ROTATION_NAMES

    v = result.values
    out = {}
    for f in RESULT_FIELDS:
        if f in ("rotation", "high_leg", "rotation_note", "basis", "s_va_method", "findings"):
            continue
        out[f] = ("num", v[f])
    reason = np.asarray(v["rotation_reason"], np.int64)
    rot = np.where(reason == REASON_NOT_3PH, -99, np.asarray(v["rotation"], np.int64))
    out["rotation"] = ("vocab", rot, {**{k: n for k, n in ROTATION_NAMES.items()}, -99: None})
    out["rotation_note"] = ("vocab", reason, {k: (t or None) for k, t in REASON_TEXT.items()})
    out["basis"] = ("vocab", np.asarray(v["basis"], np.int64), dict(BASIS_NAMES))
    out["s_va_method"] = ("vocab", np.asarray(v["s_va_vector"], np.int64), dict(S_VA_METHOD))
    hl = np.asarray(v["high_leg"], np.int64)
    out["high_leg"] = ("vocab", hl, {-1: None, **{k: labels[k] for k in range(len(labels))}})
    return out


def findings_csv_cells(result, labels=("A", "B", "C")) -> list:
    """The ``findings`` CSV cell of every reading (``severity:CODE(phase) | ...``, as
    :func:`fieldpad.formats.records.findings_cell` writes it, in :func:`fieldpad.core.findings.findings_lists`
    order: by severity, then the analysis's order), as bytes."""
    from ..core.findings import SEVERITY_ORDER, phase_label

    n = result.n
    entries = sorted(enumerate(result.findings), key=lambda e: (SEVERITY_ORDER[e[1][1]], e[0]))
    entries = [e for _k, e in entries if e[2].any()]
    if not entries:
        return [b""] * n
    # Each reading's findings as a row of small codes (0 = not raised, else 2 + phase): the distinct rows
    # are few, and each is worded once.
    codes = np.zeros((n, len(entries)), np.int8)
    for j, (_code, _sev, mask, _v, _t, _u, phase) in enumerate(entries):
        ph = np.asarray(result.finding_field(phase)).astype(np.int8)
        codes[:, j] = np.where(mask, ph + 2, 0)
    rows, inverse = np.unique(codes, axis=0, return_inverse=True)
    words = []
    for row in rows.tolist():
        tokens = []
        for (code, severity, *_rest), c in zip(entries, row):
            if c:
                lab = phase_label(c - 2, labels)
                tokens.append(f"{severity}:{code}" + (f"({lab})" if lab else ""))
        words.append(csv_text(" | ".join(tokens)) if tokens else b"")
    table = np.array(words, dtype=object)
    return table[np.asarray(inverse).ravel()].tolist()


def result_parts_csv(result, labels=("A", "B", "C"), *, sep=b",", end=b"\n") -> list:
    """Parts (see :func:`assemble`) of the result fields in RESULT_FIELDS order, CSV cells."""
    from ..core.results import RESULT_FIELDS

    cols = result_columns(result, labels)
    parts = []
    for f in RESULT_FIELDS:
        if f == "findings":
            parts.append(findings_csv_cells(result, labels))
        else:
            parts.append(_cells(cols[f], csv_text, b""))
        parts.append(sep)
    parts[-1] = end
    return parts


def _cells(col, quote, null):
    if col[0] == "num":
        return float_cells(col[1], null=null)
    return vocab_cells(col[1], col[2], quote=quote)


def result_parts_json(result, labels=("A", "B", "C"), standards=None, *, indent=b"") -> list:
    """Parts of one JSON object per reading, as ``json.dumps(record, ensure_ascii=False, indent=2)``
    writes a result record (fields in RESULT_FIELDS order), each line after the first indented by
    ``indent`` more; rows are not separated."""
    from ..core.findings import findings_lists
    from ..core.results import RESULT_FIELDS

    cols = result_columns(result, labels)
    lead = b"\n" + indent + b"  "
    parts = [b"{"]
    for f in RESULT_FIELDS:
        parts.append((b"" if f == RESULT_FIELDS[0] else b",") + lead + json.dumps(f).encode() + b": ")
        if f == "findings":
            fl = findings_lists(result, labels, standards)
            pad = (indent + b"  ").decode()
            parts.append([flat_dicts_json(x, pad).encode() if x else b"[]" for x in fl])
        else:
            parts.append(_cells(cols[f], json_text, b"null"))
    parts.append(b"\n" + indent + b"}")
    return parts


#: Rows formatted at a time: the byte matrix of a sub-block stays a few MB.
WRITE_ROWS = 8_192


def slices(result, rows: int = WRITE_ROWS):
    """``(lo, hi, part)``: the analysis of rows lo..hi (an :class:`fieldpad.core.analysis.Analysis` of its
    own), ``rows`` at a time."""
    from ..core.analysis import Analysis

    n = result.n
    if n <= rows:
        yield 0, n, result
        return

    def cut(x, lo, hi):
        return x if isinstance(x, str) or np.ndim(x) == 0 else x[lo:hi]

    for lo in range(0, n, rows):
        hi = min(n, lo + rows)
        values = {k: v[lo:hi] for k, v in result.values.items()}
        findings = [
            (code, sev, mask[lo:hi], cut(v, lo, hi), cut(t, lo, hi), unit, cut(p, lo, hi))
            for code, sev, mask, v, t, unit, p in result.findings
        ]
        yield lo, hi, Analysis(n=hi - lo, values=values, findings=findings)
