"""The robustness run: prints one figure per line (what was tried, how many times, how many failures).

Not part of the quick test run; .ci/run runs it after the tests.  Exit status 1 if any figure that must
be 0 is not.

Usage: python tests/robustness/run.py [--quick]
"""

from __future__ import annotations

import io
import json
import random
import re
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

sys.path.insert(0, str(Path(__file__).parent))
from crash import WRITER, kill_test, setup  # noqa: E402
from merge_damage import run_merge_damage  # noqa: E402
from second_open import second_open_test  # noqa: E402

from fieldpad.commands.compute import check_input, write_results  # noqa: E402
from fieldpad.core.readings import FIELD_KIND, ReadingError, parse_value  # noqa: E402
from fieldpad.formats.records import InputError  # noqa: E402
from fieldpad.storage.db import open_db  # noqa: E402
from fieldpad.storage.importer import import_bytes  # noqa: E402

QUICK = "--quick" in sys.argv
FAILED = []
PROBLEM_LINE = re.compile(r"^(record \d+|line \d+): [^:]+: \S.*")


def figure(name, tried, failures, must_be_zero=True, extra=""):
    print(f"{name}: tried {tried}, failures {failures}" + (f" ({extra})" if extra else ""), flush=True)
    if must_be_zero and failures:
        FAILED.append(name)


# ---- 1. entry and file input -------------------------------------------------------------

NUMBERS = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(-(10**30), 10**30).map(str),
    st.sampled_from(
        [
            "nan",
            "NaN",
            "-nan",
            "inf",
            "-Infinity",
            "INF",
            "1e309",
            "-0",
            "0x1F",
            "1_000",
            "١٢٣",
            "277V",
            "277 V",
            "13.8kV",
            "12 A",
            "12A",
            "277,5",
            "1,234",
            "1.234,5",
            "30 lag",
            "30 lead",
            "-120°",
            "240deg",
            "",
            " ",
            "V",
            "--5",
            "+5",
            "5e",
            ".5",
            "5.",
            "∞",
            "277\x00",
            "2 7 7",
        ]
    ),
    st.text(max_size=20),
)
FIELDS = list(FIELD_KIND) + ["system", "standard", "bogus", ""]


def run_parse_fuzz(n):
    counts = {"tried": 0, "crashes": 0, "unnamed": 0}

    @settings(max_examples=n, deadline=None, database=None, suppress_health_check=list(HealthCheck))
    @given(NUMBERS, st.sampled_from(["V", "A", "deg"]))
    def one(text, kind):
        counts["tried"] += 1
        try:
            parse_value(text, kind)
        except ReadingError as e:
            if not str(e):
                counts["unnamed"] += 1
        except Exception:
            counts["crashes"] += 1

    one()
    return counts


records = st.dictionaries(
    st.sampled_from(FIELDS),
    st.one_of(NUMBERS, st.none(), st.booleans(), st.lists(st.integers(), max_size=2)),
    max_size=12,
)


def to_csv_bytes(recs, encoding="utf-8"):
    cols = sorted({k for r in recs for k in r}) or ["va"]
    lines = [",".join(cols)]
    for r in recs:
        lines.append(",".join('"' + str(r.get(c, "")).replace('"', '""') + '"' for c in cols))
    return ("\n".join(lines) + "\n").encode(encoding, errors="replace")


def run_file_fuzz(n, db_dir):
    counts = {"tried": 0, "crashes": 0, "unnamed": 0, "accepted": 0, "rejected": 0}

    def check_lines(lines):
        for line in lines:
            if not PROBLEM_LINE.match(line):
                counts["unnamed"] += 1
                if counts["unnamed"] <= 5:
                    print(f"  not naming record/field/reason: {line[:120]!r}", file=sys.stderr)

    @settings(max_examples=n, deadline=None, database=None, suppress_health_check=list(HealthCheck))
    @given(
        st.lists(records, min_size=0, max_size=4),
        st.sampled_from(["json", "csv", "csv-latin1", "csv-utf16"]),
        st.booleans(),
    )
    def one(recs, form, via_import):
        counts["tried"] += 1
        if form == "json":
            data = json.dumps(recs, default=str).encode()
        elif form == "csv":
            data = to_csv_bytes(recs)
        elif form == "csv-latin1":
            data = to_csv_bytes(recs, "latin-1") + "é".encode("latin-1")
        else:
            data = to_csv_bytes(recs, "utf-16")
        try:
            if via_import:
                extended = [{**r, "site": "S", "board": "B", "taken_at": "2026-12-01T10:00:00Z"} for r in recs]
                data = json.dumps(extended, default=str).encode() if form == "json" else to_csv_bytes(extended)
                db = open_db(Path(db_dir) / f"fuzz{counts['tried'] % 50}.db")
                try:
                    rep = import_bytes(db, data)
                finally:
                    db.close()
                if rep.problems:
                    counts["rejected"] += 1
                    check_lines(rep.problems)
                else:
                    counts["accepted"] += 1
            else:
                kind, clean, problems = check_input(data)
                if problems:
                    counts["rejected"] += 1
                    check_lines(problems)
                else:
                    write_results(clean, kind, random.choice(["json", "csv"]), io.StringIO())
                    counts["accepted"] += 1
        except InputError as e:
            counts["rejected"] += 1
            if not str(e):
                counts["unnamed"] += 1
        except Exception as e:  # a crash: count it and say what it was
            counts["crashes"] += 1
            print(f"  crash: {type(e).__name__}: {e}", file=sys.stderr)

    one()
    return counts


def run_cli_cases(tmp):
    """Whole-program cases through `fieldpad compute`: encodings, empty, huge and the 50 MB file."""
    cases = {
        "empty": b"",
        "only spaces": b"   \n  ",
        "utf-16": "va,vb,vc\n277,277,277\n".encode("utf-16"),
        "latin-1": "va,vb,vc,note\n277,277,277,é\n".encode("latin-1"),
        "NUL bytes": b"va\x00,vb\n1,2\n",
        "huge number": b'{"va": "' + b"9" * 400 + b'"}',
        "deep JSON": b"[" * 100000 + b"]" * 100000,
        "missing columns": b"va,vb,vc\n277\n",
        "extra columns": b"va\n1,2,3\n",
        "comma decimals": b"va;vb\n277,5;276,1\n",
    }
    crashes, tried, silent = 0, 0, 0
    for name, data in cases.items():
        tried += 1
        r = subprocess.run([sys.executable, "-m", "fieldpad", "compute"], input=data, capture_output=True, timeout=300)
        if b"Traceback" in r.stderr or r.returncode not in (0, 2):
            crashes += 1
            print(f"  {name}: exit {r.returncode} {r.stderr[-300:]!r}", file=sys.stderr)
        if r.returncode == 2 and (r.stdout or not r.stderr.strip()):
            silent += 1
    figure("compute: special files (encodings, empty, NUL, huge, deep, columns)", tried, crashes + silent)

    big = Path(tmp) / "big.csv"
    rng = random.Random(1)
    size = 0
    target = 5_000_000 if QUICK else 50_000_000
    with open(big, "w") as f:
        f.write("system,nominal_v,va,vb,vc,va_deg,vb_deg,vc_deg,ia,ib,ic,ia_deg,ib_deg,ic_deg\n")
        while size < target:
            line = (
                f"wye,480,{277 + rng.random():.3f},{277 - rng.random():.3f},{276 + rng.random():.3f},0,"
                f"{-120 + rng.random():.3f},{120 - rng.random():.3f},{100 + rng.random() * 5:.2f},"
                f"{99 + rng.random() * 5:.2f},{98 + rng.random() * 5:.2f},{-30 + rng.random():.2f},"
                f"{-150 + rng.random():.2f},{90 + rng.random():.2f}\n"
            )
            f.write(line)
            size += len(line)
    t = time.perf_counter()
    with open(big, "rb") as src:
        r = subprocess.run(
            [sys.executable, "-m", "fieldpad", "compute", "--format", "csv"],
            stdin=src,
            stdout=subprocess.DEVNULL,
            stderr=subprocess.PIPE,
            timeout=900,
        )
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    figure(
        f"compute: {size / 1e6:.0f} MB CSV file",
        1,
        int(r.returncode != 0),
        extra=f"{time.perf_counter() - t:.0f} s, peak memory of a child process {peak:.0f} MB",
    )


# ---- 2. crash safety -----------------------------------------------------------------------


def run_crash(tmp, kills):
    path = Path(tmp) / "crash.db"
    board = setup(path)
    reported, lost, problems = kill_test(path, board, kills, random.Random(7))
    figure(
        f"SIGKILL of a saving writer ({len(reported)} readings reported committed)",
        kills,
        len(lost),
        extra="committed readings lost",
    )
    figure("integrity check after the kills", 1, len(problems))


def run_second_open(tmp, tries):
    """The lost-WAL scenario: a second open of the same file in one process, other processes coming and
    going, then saves and SIGKILL (tests/robustness/second_open.py)."""
    reported = lost = integrity = 0
    for k in range(tries):
        folder = Path(tmp) / f"second-open-{k}"
        folder.mkdir()
        n, gone, problems = second_open_test(folder, n=5)
        reported, lost, integrity = reported + n, lost + gone, integrity + bool(problems)
    figure(
        f"second open in one process + another process's command + SIGKILL ({reported} readings reported saved)",
        tries,
        lost,
        extra="readings lost",
    )
    figure("integrity failures after those kills", tries, integrity)


# ---- 3. concurrent use ---------------------------------------------------------------------

EXPORTER = r"""
import sys, time
from fieldpad.storage.db import open_db
from fieldpad.report.export import export_records, to_csv
db = open_db(sys.argv[1]); end = time.time() + float(sys.argv[2]); n = errors = 0
while time.time() < end:
    try:
        to_csv(export_records(db)); n += 1
    except Exception as e:
        errors += 1; print("error:", e, file=sys.stderr)
print(n, errors)
"""


def run_concurrent(tmp, seconds):
    path = Path(tmp) / "busy.db"
    board = setup(path)
    writers = [
        subprocess.Popen(
            [sys.executable, WRITER, str(path), board, "1000000", str(seconds)], stdout=subprocess.PIPE, text=True
        )
        for _ in range(2)
    ]
    exporter = subprocess.Popen(
        [sys.executable, "-c", EXPORTER, str(path), str(seconds)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    outs = [w.communicate(timeout=seconds + 120)[0] for w in writers]
    ex_out, ex_err = exporter.communicate(timeout=seconds + 120)
    lines = [line for out in outs for line in out.splitlines()]
    errors = [line for line in lines if line.startswith("error")]
    ids = {line for line in lines if not line.startswith("error")}
    db = open_db(path)
    stored = {r["reading_id"] for r in db.query("SELECT reading_id FROM reading")}
    db.close()
    n_exports, ex_errors = (int(x) for x in ex_out.split()[:2])
    figure(
        f"two writers + one exporter for {seconds} s: errors shown to a user",
        len(ids) + n_exports,
        len(errors) + ex_errors,
        extra=f"{len(ids)} saves, {n_exports} full exports",
    )
    figure("writes lost in that run", len(ids), len(ids - stored))


# ---- 4. the crew on one central server ----------------------------------------------------------


def run_crew(tmp):
    sys.path.insert(0, str(Path(__file__).parents[1]))
    try:
        import pg_cluster
        import psycopg  # noqa: F401
    except ImportError as e:
        figure(f"central server: not run ({e})", 0, 0)
        return
    if pg_cluster.find_binaries()[0] is None:
        figure(f"central server: not run ({pg_cluster.find_binaries()[1]})", 0, 0)
        return
    from crew_sync import crew_test

    folder = Path(tmp) / "crew"
    folder.mkdir()
    if QUICK:
        r = crew_test(folder, laptops=5, per_laptop=300, seconds=10, kills=5)
    else:
        r = crew_test(folder, laptops=20, per_laptop=2000, seconds=60, kills=20)
    c = r["concurrent"]
    figure(
        f"central server: {c['laptops']} laptops saving, correcting, voiding and syncing at once for "
        f"{c['seconds']:.0f} s ({c['versions']} versions, {c['syncs']} syncs): versions lost",
        c["versions"],
        c["lost"],
    )
    figure("  doubled", c["versions"], c["doubled"])
    figure("  laptops not holding the same record after two more syncs each", c["laptops"], c["diverged"])
    figure("  syncs that failed while the server was up", c["syncs"], c["sync_failures"])
    figure("  laptop databases failing the integrity check", c["laptops"], c["damaged"])
    k = r["killed"]
    figure(
        "central server: syncs killed (SIGKILL) at random moments: sends left partial",
        k["kills"],
        k["partial"],
        extra=f"then one sync: {k['lost']} not on the server, {k['damaged']} integrity problems",
    )
    figure("  versions lost after the next sync", k["kills"], k["lost"] + k["damaged"])
    s = r["stopped"]
    figure(
        "central server: stopped in the middle of a sync: unclear messages (traceback, no word of the server)",
        s["tries"],
        s["unclear"],
        extra=f"{s['interrupted']} sync(s) cut off; said: {s['message']!r}",
    )
    figure("  versions lost after the server came back and the next sync", s["tries"], s["lost"])
    a = r["attacks"]
    figure(
        "central server: a technician's rewrite, delete, impersonation and privilege attempts not refused",
        a["tried"],
        a["tried"] - a["refused"],
    )


# ---- 4. merge of damaged files from another laptop ------------------------------------------------


def run_imports_repeated(tmp, n):
    """The same readings imported again and again: a CSV file twice, its export (CSV and JSON) back into
    the same database, and into a second database and back: every reading is stored once."""
    from fieldpad.report.export import export_records, to_csv, to_json
    from fieldpad.storage.importer import import_bytes

    rng = random.Random(5)
    lines = ["site,board,taken_at,va,vb,vc,va_deg,vb_deg,vc_deg,ia,ib,ic"]
    for k in range(n):
        lines.append(
            f"Repeat Yard,DB-{k % 7},2026-12-01T{8 + k % 9:02d}:{k % 60:02d}:{k % 53:02d}Z,"
            f"{277 + rng.random():.2f},{277 - rng.random():.2f},{276 + rng.random():.2f},0,-120,120,"
            f"{100 + rng.random():.1f},{99 + rng.random():.1f},{98 + rng.random():.1f}"
        )
    data = ("\n".join(lines) + "\n").encode()
    folder = Path(tmp) / "repeat"
    folder.mkdir()
    a = open_db(folder / "a.db")
    b = open_db(folder / "b.db")
    tries, doubled = 0, 0
    try:
        first = import_bytes(a, data)
        stored = a.conn.execute("SELECT COUNT(*) FROM reading").fetchone()[0]
        for again in (
            lambda: import_bytes(a, data),
            lambda: import_bytes(a, to_csv(export_records(a)).encode()),
            lambda: import_bytes(a, to_json(export_records(a)).encode()),
            lambda: import_bytes(b, to_csv(export_records(a)).encode()),
            lambda: import_bytes(a, to_json(export_records(b)).encode()),
            lambda: import_bytes(b, data),
        ):
            tries += 1
            again()
            doubled += a.conn.execute("SELECT COUNT(*) FROM reading").fetchone()[0] - stored
            stored = a.conn.execute("SELECT COUNT(*) FROM reading").fetchone()[0]
        doubled += b.conn.execute("SELECT COUNT(*) FROM reading").fetchone()[0] - first.readings
    finally:
        a.close()
        b.close()
    figure(
        f"import: the same {n} readings imported again (file twice, exports back, via a second database): "
        "readings doubled",
        tries,
        doubled,
    )


def run_merge(tmp, n):
    c = run_merge_damage(tmp, n)
    figure(
        "merge: damaged incoming files tried (byte flips and bad values): main databases broken",
        c["tried"],
        c["broke"] + c["crashes"],
        extra=f"{c['flips']} with byte flips, {c['values']} with bad values; {c['refused']} refused with a "
        f"message, {c['merged']} merged (every row still passed the checks: damage in unused space, a file "
        f"SQLite could still read whole, or a value a save could store), {c['crashes']} crashes, "
        f"{c['broke']} broke the main database",
    )


# ---- 5-8. the rest, as pytest cases ----------------------------------------------------------

CASES = [
    ("damaged/foreign/newer files, size-limit full, hostile text, safe files", ["tests/test_robustness.py"]),
    (
        "real read-only and full file systems (tmpfs), backups and exports whole or not at all, missing databases, "
        "terminal-safe messages, export imports back",
        ["tests/test_nothing_lost.py"],
    ),
    (
        "app: drafts through Esc, Ctrl+Q, SIGHUP and a full disk; writes on a read-only database",
        ["tests/test_ui_nothing_lost.py"],
    ),
    (
        "crew: merge only reads the other file, refuses bad rows and itself, conflicts kept and flagged, "
        "three laptops merged in every order agree",
        ["tests/test_crew.py", "tests/test_crew_merge_property.py"],
    ),
]


def run_cases():
    for name, files in CASES:
        r = subprocess.run(
            [sys.executable, "-m", "pytest", "-o", "addopts=", "-q", "-rs", "-p", "no:cacheprovider", *files],
            capture_output=True,
            text=True,
            cwd=Path(__file__).parents[2],
        )
        counts = {
            k: int(m.group(1)) if (m := re.search(rf"(\d+) {k}", r.stdout)) else 0
            for k in ("passed", "failed", "skipped", "error")
        }
        skipped = [line for line in r.stdout.splitlines() if line.startswith("SKIPPED")]
        figure(
            f"{name} (test cases)",
            sum(counts.values()),
            counts["failed"] + counts["error"],
            extra=f"{counts['skipped']} skipped" + (f": {skipped[0][:150]}" if skipped else ""),
        )
        if counts["failed"] or counts["error"]:
            print(r.stdout[-3000:], file=sys.stderr)


def main():
    t0 = time.perf_counter()
    n = 2000 if QUICK else 10_000
    c = run_parse_fuzz(n)
    figure(
        "value parser, generated text",
        c["tried"],
        c["crashes"] + c["unnamed"],
        extra=f"{c['crashes']} crashes, {c['unnamed']} rejections without a reason",
    )
    with tempfile.TemporaryDirectory() as tmp:
        c = run_file_fuzz(n, tmp)
        figure(
            "compute and import, generated files (JSON, CSV, latin-1, UTF-16)",
            c["tried"],
            c["crashes"] + c["unnamed"],
            extra=f"{c['accepted']} accepted, {c['rejected']} rejected, {c['crashes']} crashes, "
            f"{c['unnamed']} rejections not naming the record, field and reason",
        )
        run_cli_cases(tmp)
        run_crash(tmp, 10 if QUICK else 50)
        run_second_open(tmp, 3 if QUICK else 10)
        run_concurrent(tmp, 8 if QUICK else 30)
        run_crew(tmp)

        run_merge(tmp, 120 if QUICK else 400)
        run_imports_repeated(tmp, 500 if QUICK else 5000)
    run_cases()
    print(
        f"robustness run took {time.perf_counter() - t0:.0f} s; figures that must be 0 and are not: {len(FAILED)}",
        flush=True,
    )
    return 1 if FAILED else 0


if __name__ == "__main__":
    sys.exit(main())
