"""`fieldpad compute` end to end: the command line in process (tests/cli_runner.py), and once as the installed
program in a process of its own."""
import csv
import io
import json
import subprocess
import sys

import pytest
from cli_runner import run_cli

BAL = {"va": 277, "vb": 277, "vc": 277, "va_deg": 0, "vb_deg": -120, "vc_deg": 120,
       "ia": 100, "ib": 100, "ic": 100, "ia_deg": -30, "ib_deg": -150, "ic_deg": 90}


def compute(stdin: bytes, *args):
    return run_cli("compute", *args, stdin=stdin, text=False)


def test_json_object_in_object_out():
    p = compute(json.dumps(BAL).encode())
    assert p.returncode == 0, p.stderr
    out = json.loads(p.stdout)
    assert out["rotation"] == "ABC" and out["v1"] == pytest.approx(277.0)
    assert out["v0_deg"] is None  # a zero component has no angle: null, not a made-up number


def test_json_array_and_file_argument(tmp_path):
    f = tmp_path / "r.json"
    f.write_text(json.dumps([BAL, {"system": "delta", "vab": 460, "vbc": 467, "vca": 450}]))
    p = subprocess.run([sys.executable, "-m", "fieldpad", "compute", str(f)], capture_output=True, timeout=60)
    assert p.returncode == 0 and p.stderr == b""  # the installed program, in its own process
    out = json.loads(p.stdout)
    assert [r["rotation"] for r in out] == ["ABC", "unknown"]
    assert out[1]["lvur_pct"] == pytest.approx(1.9608, abs=1e-4)
    assert out[1]["p_w"] is None


def test_csv_in_csv_out():
    src = "system,vab,vbc,vca\ndelta,460,467,450\ndelta,480,480,480\n"
    p = compute(src.encode(), "--format", "csv")
    assert p.returncode == 0, p.stderr
    rows = list(csv.DictReader(io.StringIO(p.stdout.decode())))
    assert len(rows) == 2
    assert float(rows[0]["lvur_pct"]) == pytest.approx(1.9608, abs=1e-4)
    assert rows[0]["p_w"] == ""  # unknown is empty
    assert "LVUR_DERATE" in rows[0]["findings"]


@pytest.mark.parametrize("payload, where, field, reason", [
    ({"va": "abc"}, "record 1", "va", "not a number"),
    ({"va": "NaN"}, "record 1", "va", "not a finite number"),
    ({"va": "inf"}, "record 1", "va", "not a finite number"),
    ({"va": -5}, "record 1", "va", "negative"),
    ({"va": 1e7}, "record 1", "va", "too large"),
    ({"vb_deg": 10}, "record 1", "vb_deg", "without its magnitude"),
    ({"volts": 1}, "record 1", "volts", "unknown field"),
    ({"system": "star"}, "record 1", "system", "unknown system"),
    ({"system": "delta", "vab": 100, "vbc": 100, "vca": 300}, "record 1", "vab,vbc,vca", "triangle"),
])
def test_bad_input_names_record_field_reason(payload, where, field, reason):
    p = compute(json.dumps(payload).encode())
    assert p.returncode == 2
    assert p.stdout == b""
    err = p.stderr.decode()
    assert f"{where}: {field}: " in err and reason in err
    assert "Traceback" not in err


@pytest.mark.parametrize("data, reason", [
    (b"", "empty"),
    (b"[1, 2", "malformed JSON"),
    (b'{"va": NaN}', "not a finite number"),
    (b"va,vb\n\xff\xfe,1\n", "not UTF-8"),
    (b"va,va\n1,2\n", "named twice"),
    (b"[]", "empty"),
])
def test_malformed_files(data, reason):
    p = compute(data)
    assert p.returncode == 2 and p.stdout == b""
    assert reason in p.stderr.decode() and b"Traceback" not in p.stderr


def test_csv_lines_are_named_and_problems_capped():
    rows = "va,vb,vc\n" + "".join("x,1,1\n" for _ in range(30))
    p = compute(rows.encode())
    lines = p.stderr.decode().splitlines()
    assert p.returncode == 2
    assert lines[0].startswith("line 2: va:")
    assert len(lines) == 21 and "10 more" in lines[-1]


def test_csv_extra_values():
    p = compute(b"va,vb\n1,2,3\n")
    assert p.returncode == 2 and b"line 2" in p.stderr and b"more value" in p.stderr
