"""`fieldpad compute` end to end: the command line in process (tests/cli_runner.py), and once as the installed
program in a process of its own."""

import csv
import io
import json
import subprocess
import sys

import pytest
from cli_runner import run_cli

BAL = {
    "va": 277,
    "vb": 277,
    "vc": 277,
    "va_deg": 0,
    "vb_deg": -120,
    "vc_deg": 120,
    "ia": 100,
    "ib": 100,
    "ic": 100,
    "ia_deg": -30,
    "ib_deg": -150,
    "ic_deg": 90,
}


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


@pytest.mark.parametrize(
    "payload, where, field, reason",
    [
        ({"va": "abc"}, "record 1", "va", "not a number"),
        ({"va": "NaN"}, "record 1", "va", "not a finite number"),
        ({"va": "inf"}, "record 1", "va", "not a finite number"),
        ({"va": -5}, "record 1", "va", "negative"),
        ({"va": 1e7}, "record 1", "va", "too large"),
        ({"vb_deg": 10}, "record 1", "vb_deg", "without its magnitude"),
        ({"volts": 1}, "record 1", "volts", "unknown field"),
        ({"system": "star"}, "record 1", "system", "unknown system"),
        ({"system": "delta", "vab": 100, "vbc": 100, "vca": 300}, "record 1", "vab,vbc,vca", "triangle"),
    ],
)
def test_bad_input_names_record_field_reason(payload, where, field, reason):
    p = compute(json.dumps(payload).encode())
    assert p.returncode == 2
    assert p.stdout == b""
    err = p.stderr.decode()
    assert f"{where}: {field}: " in err and reason in err
    assert "Traceback" not in err


@pytest.mark.parametrize(
    "data, reason",
    [
        (b"", "empty"),
        (b"[1, 2", "malformed JSON"),
        (b'{"va": NaN}', "not a finite number"),
        (b"va,vb\n\xff\xfe,1\n", "not UTF-8"),
        (b"va,va\n1,2\n", "named twice"),
        (b"[]", "empty"),
    ],
)
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


class TestNPhase:
    """n-phase sets (commands/nphase.py) through the core's n-phase transform. Reference: the
    amplitude-invariant DFT form of Fortescue's transform (C. L. Fortescue, AIEE Transactions 37, 1918),
    X_k = (1/n) sum_p exp(j 2 pi k p / n) V_p, which is scipy.fft.ifft of the phase phasors."""

    def _set(self, mags, degs, **extra):
        rec = {"phases": len(mags), **extra}
        for k, (m, d) in enumerate(zip(mags, degs), start=1):
            rec[f"vp{k}"], rec[f"vp{k}_deg"] = m, d
        return rec

    def test_two_secondaries_of_a_phase_shifting_transformer_as_six_phases(self):
        scipy_fft = pytest.importorskip("scipy.fft")
        import numpy as np

        # A scenario of our own: a 12-pulse drive transformer, secondary 2 shifted 30 degrees from secondary 1,
        # read in the order a1, a2, b1, b2, c1, c2; secondary 2 a little low.
        mags = [400.0, 396.0, 401.0, 395.5, 399.0, 396.5]
        degs = [0.0, -30.0, -120.0, -150.0, 120.0, 90.0]
        p = compute(json.dumps(self._set(mags, degs)).encode())
        assert p.returncode == 0, p.stderr
        out = json.loads(p.stdout)
        ref = scipy_fft.ifft(np.array(mags) * np.exp(1j * np.radians(degs)))
        for k in range(6):
            assert out[f"vseq{k}"] == pytest.approx(abs(ref[k]), abs=1e-4)
            assert out[f"vseq{k}_deg"] == pytest.approx(np.degrees(np.angle(ref[k])), abs=1e-4)

    def test_three_phases_agree_with_the_three_phase_analysis(self):
        rec = {"va": 277, "vb": 270, "vc": 281, "va_deg": 0, "vb_deg": -118, "vc_deg": 121}
        three = json.loads(compute(json.dumps(rec).encode()).stdout)
        n = json.loads(compute(json.dumps(self._set([277, 270, 281], [0, -118, 121])).encode()).stdout)
        assert n["vseq1"] == three["v1"] and n["vseq2"] == three["v2"] and n["vseq0"] == three["v0"]
        assert n["vseq1_deg"] == three["v1_deg"] and n["vseq2_deg"] == three["v2_deg"]

    def test_balanced_sets_have_only_the_positive_sequence_csv_with_currents(self):
        rows = [
            "phases,vp1,vp1_deg,vp2,vp2_deg,vp3,vp3_deg,vp4,vp4_deg,ip1,ip1_deg,ip2,ip2_deg,ip3,ip3_deg,ip4,ip4_deg"
        ]
        rows.append("4,230,0,230,-90,230,-180,230,90,10,-20,10,-110,10,160,10,70")
        rows.append("2,120,,120,180,,,,,5,0,0,,,,,")
        p = compute(("\n".join(rows) + "\n").encode(), "--format", "csv")
        assert p.returncode == 0, p.stderr
        got = list(csv.DictReader(io.StringIO(p.stdout.decode())))
        assert got[0]["vseq1"] == "230.0" and got[0]["vseq1_deg"] == "0.0" and got[0]["vseq0"] == "0.0"
        assert got[0]["vseq0_deg"] == ""  # a zero component has no angle
        assert got[0]["iseq1"] == "10.0" and got[0]["iseq1_deg"] == "-20.0"
        assert got[1]["vseq1"] == "120.0" and got[1]["vseq2"] == "" and got[1]["iseq0"] == "2.5"

    @pytest.mark.parametrize(
        "rec, where, field, reason",
        [
            ({"phases": 13}, "record 1", "phases", "from 2 to 12"),
            ({"phases": 2, "vp1": 1}, "record 1", "vp2", "is required for a set of 2 phases"),
            ({"phases": 2, "vp1": 1, "vp2": 1, "vp2_deg": "x"}, "record 1", "vp2_deg", "'x' is not a number"),
            ({"phases": 2, "vp1": 1, "vp2": 1, "vp2_deg": 180, "vp3": 1}, "record 1", "vp3", "the set has 2 phases"),
            ({"phases": 2, "vp1": 1, "vp2": 1, "vp2_deg": 180, "ip1": 3}, "record 1", "ip2", "or none"),
            ({"phases": 2, "vp1": 1, "vp2": 1, "vp2_deg": 180, "va": 3}, "record 1", "va", "unknown field"),
        ],
    )
    def test_bad_sets_name_record_field_reason(self, rec, where, field, reason):
        p = compute(json.dumps([rec]).encode())
        assert p.returncode == 2 and p.stdout == b""
        assert f"{where}: {field}: " in p.stderr.decode() and reason in p.stderr.decode()


def test_board_inputs_through_compute_match_the_per_record_check():
    # The board inputs (README "Board inputs") through `fieldpad compute`'s column check, CSV and JSON, give
    # what the per-record check and the analysis give (tests/test_findings.py::run_board). Invented values:
    # a 208Y/120 panel whose neutral (rated 60 A) carries 75 A, and a motor feeder at 20 % unbalance.
    import json as _json

    from fieldpad.core.readings import validate_record
    from fieldpad.core.results import analyze_records

    rows = [
        {
            "va": "120",
            "vb": "120",
            "vc": "120",
            "va_deg": "0",
            "vb_deg": "-120",
            "vc_deg": "120",
            "ia": "80",
            "ib": "20",
            "ic": "20",
            "ia_deg": "-10",
            "ib_deg": "-130",
            "ic_deg": "110",
            "i_n": "75",
            "nominal_v": "208",
            "neutral_rating_a": "60",
            "rating_a": "100",
            "purpose": "distribution",
        },
        {
            "va": "277",
            "vb": "277",
            "vc": "277",
            "va_deg": "0",
            "vb_deg": "-120",
            "vc_deg": "120",
            "ia": "100",
            "ib": "80",
            "ic": "100",
            "ia_vi_deg": "30 lag",
            "ib_vi_deg": "-30",
            "ic_vi_deg": "-30",
            "nominal_v": "480",
            "purpose": "Motor",
            "expected_rotation": "abc",
        },
    ]
    expected = analyze_records([validate_record(r, board_inputs=True)[0] for r in rows])
    fields = sorted({k for r in rows for k in r})
    csv_text = ",".join(fields) + "\n" + "\n".join(",".join(r.get(f, "") for f in fields) for r in rows) + "\n"
    for data in (csv_text, _json.dumps(rows)):
        r = run_cli("compute", "-", stdin=data)
        assert r.returncode == 0, r.stderr
        got = _json.loads(r.stdout)
        assert [sorted(f["code"] for f in g["findings"]) for g in got] == [
            sorted(f["code"] for f in e["findings"]) for e in expected
        ]
        assert "NEUTRAL_OVERLOAD" in {f["code"] for f in got[0]["findings"]}
        assert got[1]["iur_pct"] == pytest.approx(expected[1]["iur_pct"])
    bad = csv_text.replace("distribution", "pump")
    r = run_cli("compute", "-", stdin=bad)
    assert r.returncode == 2 and "line 2: purpose: unknown purpose 'pump'" in r.stderr
