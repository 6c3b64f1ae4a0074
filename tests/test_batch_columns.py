"""The columnar path of `fieldpad compute` (formats/columns.py, formats/writers.py) against the per-record
path it replaced (validate_record per record, analyze_records, csv/json modules): the same bytes out, the
same problem lines, for files mixing every accepted spelling, system and bad value."""

import csv
import io
import json
import random

import pytest
from cli_runner import run_cli

from fieldpad.core.readings import validate_record
from fieldpad.core.results import RESULT_FIELDS, analyze_records
from fieldpad.formats.records import PROBLEMS_KEY, parse_records, record_problems, write_csv

SPELLINGS = {
    "V": ["277", "277.5", "277,5", "277V", "277 V", "0.48kV", " 276.9 ", "1e2", "+277", "480", "208", "0"],
    "A": ["100", "12 A", "1.2kA", "0", "99.5", "13,2"],
    "deg": ["0", "-120", "120", "240deg", "-120°", "30 lag", "30 lead", "-30", "90", "179.99"],
}
BAD = ["abc", "NaN", "inf", "-5", "1e7", "1,234", "277A", "1_000", "5e", "٣"]
FIELDS = {
    "va": "V",
    "vb": "V",
    "vc": "V",
    "vab": "V",
    "vbc": "V",
    "vca": "V",
    "nominal_v": "V",
    "ia": "A",
    "ib": "A",
    "ic": "A",
    "i_n": "A",
    "va_deg": "deg",
    "vb_deg": "deg",
    "vc_deg": "deg",
    "vab_deg": "deg",
    "vbc_deg": "deg",
    "vca_deg": "deg",
    "ia_deg": "deg",
    "ib_deg": "deg",
    "ic_deg": "deg",
}


@pytest.fixture(autouse=True, params=["pyarrow", "csv module"])
def reader(request, monkeypatch):
    """Every test with each CSV reader: pyarrow's (files of 1 MiB and more) and the csv module's (smaller)."""
    import fieldpad.formats.columns as columns

    monkeypatch.setattr(columns, "SMALL_BYTES", 0 if request.param == "pyarrow" else 1 << 40)
    return request.param


def realistic(rng):
    """A reading of a scenario of our own: a 480Y/277 board, sometimes miswired or half entered."""
    system = rng.choice(["wye", "wye", "delta", "high-leg-delta", "split-phase", ""])
    rec = {"system": system}
    base = {"wye": 277, "": 277, "delta": 480, "high-leg-delta": 120, "split-phase": 120}[system]
    if system in ("wye", "", "high-leg-delta", "split-phase"):
        for p, a in (("va", 0), ("vb", -120), ("vc", 120)):
            rec[p] = f"{base * (1 + rng.uniform(-0.05, 0.05)):.2f}"
            if rng.random() < 0.8:
                rec[p + "_deg"] = f"{a + rng.uniform(-3, 3):.1f}"
    if system in ("delta", "high-leg-delta") or rng.random() < 0.2:
        for p in ("vab", "vbc", "vca"):
            rec[p] = f"{480 * (1 + rng.uniform(-0.03, 0.03)):.1f}"
    for p, a in (("ia", -30), ("ib", -150), ("ic", 90)):
        rec[p] = f"{rng.uniform(0, 200):.1f}"
        rec[p + "_deg"] = f"{a + rng.uniform(-40, 40) + (180 if rng.random() < 0.05 else 0):.1f}"
    if rng.random() < 0.5:
        rec["i_n"] = f"{rng.uniform(0, 80):.1f}"
    rec["nominal_v"] = rng.choice(["480", "208", "400", "", "600", "4160"])
    if system == "split-phase":
        for f in ("vc", "vc_deg", "ic", "ic_deg"):
            rec.pop(f, None)
        rec["nominal_v"] = "240"
    if system == "delta":
        for f in ("va", "vb", "vc", "va_deg", "vb_deg", "vc_deg"):
            rec.pop(f, None)
    for f in list(rec):
        if f in FIELDS and rng.random() < 0.1:
            rec[f] = rng.choice(SPELLINGS[FIELDS[f]])
    if rng.random() < 0.1:
        rec["standard"] = rng.choice(["ansi", "IEC", ""])
    return rec


def reference(data: bytes, fmt: str):
    """The per-record path: (stdout bytes, problem lines)."""
    parsed = parse_records(data)
    problems, clean = [], []
    for where, rec in parsed.records:
        early = record_problems(rec)
        problems.extend(f"{where}: {f}: {r}" for f, r in early)
        if early and "__extra__" in rec:
            continue
        rec.pop(PROBLEMS_KEY, None)
        c, probs = validate_record(rec)
        problems.extend(f"{where}: {field}: {reason}" for field, reason in probs)
        clean.append(c)
    if problems:
        return b"", problems
    results = analyze_records(clean)
    if fmt == "csv":
        return write_csv(results, RESULT_FIELDS).encode(), []
    if parsed.kind == "json-object":
        return (json.dumps(results[0], ensure_ascii=False, indent=2) + "\n").encode(), []
    return ("[\n" + ",\n".join(json.dumps(r, ensure_ascii=False, indent=2) for r in results) + "\n]\n").encode(), []


def to_csv(recs):
    cols = sorted({k for r in recs for k in r})
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(cols)
    for r in recs:
        w.writerow([r.get(c, "") for c in cols])
    return buf.getvalue().encode()


def compute(data, fmt):
    p = run_cli("compute", "--format", fmt, stdin=data, text=False)
    return p.returncode, p.stdout, p.stderr.decode().splitlines()


@pytest.mark.parametrize("seed", range(4))
@pytest.mark.parametrize("form", ["csv", "json"])
@pytest.mark.parametrize("fmt", ["csv", "json"])
def test_same_output_as_the_per_record_path(seed, form, fmt):
    rng = random.Random(seed)
    recs = [realistic(rng) for _ in range(300)]
    data = to_csv(recs) if form == "csv" else json.dumps(recs).encode()
    want, want_problems = reference(data, fmt)
    code, out, err = compute(data, fmt)
    if want_problems:
        assert code == 2 and out == b""
        assert err[:20] == want_problems[:20]
    else:
        assert code == 0, err
        assert out == want


@pytest.mark.parametrize("form", ["csv", "json"])
def test_bad_cells_give_the_per_record_messages(form):
    rng = random.Random(7)
    recs = [realistic(rng) for _ in range(200)]
    for r in rng.sample(recs, 15):
        f = rng.choice([f for f in r if f in FIELDS])
        r[f] = rng.choice(BAD)
    recs[5]["volts"] = "1"
    data = to_csv(recs) if form == "csv" else json.dumps(recs).encode()
    _, want = reference(data, "csv")
    code, out, err = compute(data, "csv")
    assert code == 2 and out == b"" and want
    assert err[:20] == want[:20]
    if len(want) > 20:
        assert err[20] == f"... and {len(want) - 20} more problem(s)"


def test_quoted_values_short_rows_blank_lines_and_crlf():
    # Files the columnar reader hands to the csv module (a quoted line end, a short row) or reads itself
    # (quotes without line ends, CRLF, blank lines): the same results as the per-record path.
    cases = [
        b'va,vb,vc,note_free\r\n"277","277","277",\r\n\r\n"276,5",277,277,\r\n',
        b"va,vb,vc\n277\n277,277,277\n",
        b'va,vb,vc\n"2\n77",277,277\n',
        b"\xef\xbb\xbfva,vb,vc,va_deg,vb_deg,vc_deg\n277,277,277,0,-120,120\n,,,,,\n278,277,276,0,-120,120\n",
    ]
    for data in cases:
        want, want_problems = reference(data, "csv")
        code, out, err = compute(data, "csv")
        assert (code == 2) == bool(want_problems), (data, err)
        assert out == want and err[:20] == want_problems[:20], data


def test_header_check_is_linear():
    import time

    header = ",".join(f"x{k}" for k in range(100_000)) + ",x5\n"
    t = time.perf_counter()
    code, _, err = compute((header + "1\n").encode(), "csv")
    assert code == 2 and "named twice in the header: x5" in err[0]
    assert time.perf_counter() - t < 20  # the quadratic check took minutes


@pytest.mark.parametrize("form", ["csv", "json"])
def test_records_cut_by_the_read_chunks(form, monkeypatch):
    # The file is read a chunk at a time: records, numbers and lines cut anywhere give the same results.
    import fieldpad.formats.columns as columns

    monkeypatch.setattr(columns, "CHUNK_BYTES", 97)
    monkeypatch.setattr(columns, "BLOCK_ROWS", 7)
    rng = random.Random(11)
    recs = [realistic(rng) for _ in range(60)]
    data = to_csv(recs) if form == "csv" else json.dumps(recs, indent=1).encode()
    want, want_problems = reference(data, "json")
    code, out, err = compute(data, "json")
    assert err[:20] == want_problems[:20]
    assert out == want
