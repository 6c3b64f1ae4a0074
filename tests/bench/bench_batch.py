"""Benchmark of the batch commands (not part of the test run): compute, import and export, each beside its
baseline measured in the same run.  Every figure is a child process (the installed program, or a baseline
script) timed on the wall clock, with its peak memory (resident set) from the kernel's accounting of that
child (os.wait4).

* compute, CSV -> CSV, SMALL readings: against a plain per-reading Python script (csv + cmath: sequence
  components, unbalance, neutral and power per row; :func:`plain_script` below; target <= 0.1x), and
  against just reading the CSV into columns and writing a CSV of the result's shape with nothing computed
  (target <= 2x), both with the csv module and with fieldpad's own column reader and writer;
* compute, LARGE readings, CSV -> CSV and JSON -> JSON: peak memory (target <= 400 MB);
* import of LARGE readings: against a bare sqlite3 executemany of the same rows into the same schema
  (target <= 3x, <= 400 MB);
* export --format csv of LARGE readings with results and findings: against a bare sqlite3 + csv dump of the
  same reading rows (target <= 2x, memory bounded);
* then the core figures of bench_core.py.

Usage: python tests/bench/bench_batch.py [--quick] [--small N] [--large N] [--no-core]
       (default SMALL = 200,000, LARGE = 1,000,000; --quick: 20,000 and 100,000)
"""

from __future__ import annotations

import argparse
import os
import random
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
PY = sys.executable
NUMERIC = (
    "nominal_v",
    "va",
    "vb",
    "vc",
    "va_deg",
    "vb_deg",
    "vc_deg",
    "ia",
    "ib",
    "ic",
    "ia_deg",
    "ib_deg",
    "ic_deg",
    "i_n",
)


# ---- the baselines (run as child processes: `python bench_batch.py --run NAME ...`) ----------------------------


def plain_script(src, dst):
    """What a user would write: csv + cmath, one reading at a time (sequence components, VUF, neutral,
    power)."""
    import cmath
    import csv
    import math

    a = cmath.rect(1.0, 2 * math.pi / 3)
    a2 = a * a
    with open(src, newline="") as f, open(dst, "w", newline="") as g:
        w = csv.writer(g, lineterminator="\n")
        w.writerow(["v0", "v1", "v2", "vuf_pct", "i0", "i1", "i2", "iuf_pct", "i_n_calc", "p_w", "q_var", "s_va", "pf"])
        for r in csv.DictReader(f):
            v = [cmath.rect(float(r[p]), math.radians(float(r[p + "_deg"]))) for p in ("va", "vb", "vc")]
            i = [cmath.rect(float(r[p]), math.radians(float(r[p + "_deg"]))) for p in ("ia", "ib", "ic")]
            v0, v1, v2 = (v[0] + v[1] + v[2]) / 3, (v[0] + a * v[1] + a2 * v[2]) / 3, (v[0] + a2 * v[1] + a * v[2]) / 3
            i0, i1, i2 = (i[0] + i[1] + i[2]) / 3, (i[0] + a * i[1] + a2 * i[2]) / 3, (i[0] + a2 * i[1] + a * i[2]) / 3
            s = sum(x * y.conjugate() for x, y in zip(v, i))
            sa = sum(abs(x) * abs(y) for x, y in zip(v, i))
            w.writerow(
                [
                    abs(v0),
                    abs(v1),
                    abs(v2),
                    100 * abs(v2) / abs(v1),
                    abs(i0),
                    abs(i1),
                    abs(i2),
                    100 * abs(i2) / abs(i1) if abs(i1) else "",
                    abs(i[0] + i[1] + i[2]),
                    s.real,
                    s.imag,
                    sa,
                    s.real / sa if sa else "",
                ]
            )


def io_floor_csv_module(src, dst):
    """Only reading the CSV into columns (csv module, numpy floats) and writing a CSV of the result's shape
    (46 columns, csv module): nothing checked, nothing computed."""
    import csv

    import numpy as np

    from fieldpad.core.results import RESULT_FIELDS

    with open(src, newline="") as f:
        rd = csv.reader(f)
        next(rd)
        cols = [np.array([float(x) if x else np.nan for x in c]) for c in list(zip(*rd))[1:]]
    n = len(cols[0])
    out = [np.round(cols[k % len(cols)], 4).tolist() for k in range(len(RESULT_FIELDS))]
    with open(dst, "w", newline="") as g:
        w = csv.writer(g, lineterminator="\n")
        w.writerow(RESULT_FIELDS)
        w.writerows(zip(*out))
    del n


def io_floor_fieldpad(src, dst):
    """The same with fieldpad's own column reader and writer (formats/columns.py, formats/writers.py):
    every cell converted, the result's shape written, nothing checked across fields, nothing computed."""
    import numpy as np

    from fieldpad.core.readings import FIELD_KIND
    from fieldpad.core.results import RESULT_FIELDS
    from fieldpad.formats.columns import _number_column, read_blocks
    from fieldpad.formats.writers import assemble, float_cells

    with open(src, "rb") as f, open(dst, "wb") as g:
        g.write((",".join(RESULT_FIELDS) + "\n").encode())
        for _kind, raw in read_blocks(f):
            cols = [_number_column(raw, name, FIELD_KIND[name])[0] for name in NUMERIC]
            parts = []
            for k in range(len(RESULT_FIELDS)):
                parts += [float_cells(np.asarray(cols[k % len(cols)])), b","]
            parts[-1] = b"\n"
            g.write(assemble(parts, raw.n))


def bare_insert(csv_path, db_path):
    """A bare sqlite3 executemany of the same rows into the same schema (rows prepared before the clock)."""
    import csv
    import json
    import sqlite3
    import uuid

    from fieldpad.storage.db import open_db
    from fieldpad.storage.importer import uuid7_many

    db = open_db(db_path)
    site = str(uuid.uuid4())
    now = "2026-12-01T00:00:00.000000Z"
    db.conn.execute("INSERT INTO site (id, name, created_at, updated_at) VALUES (?, 'Bench', ?, ?)", (site, now, now))
    with open(csv_path, newline="") as f:
        records = list(csv.DictReader(f))
    boards = {}
    for r in records:  # the same boards as the file's
        if r["board"] not in boards:
            boards[r["board"]] = b = uuid7_many(1)[0]
            db.conn.execute(
                "INSERT INTO board (id, site_id, name, created_at, updated_at) VALUES (?, ?, ?, ?, ?)",
                (b, site, r["board"], now, now),
            )
    db.conn.commit()
    rows = []
    ids = uuid7_many(len(records))  # the ids fieldpad gives (time-ordered UUIDv7: the index grows at its end)
    for rid, r in zip(ids, records):
        rows.append(
            (
                rid,
                rid,
                1,
                None,
                boards[r["board"]],
                None,
                r["taken_at"],
                r["technician"],
                None,
                None,
                0,
                None,
                now,
                r["technician"],
                json.dumps({k: r[k] for k in NUMERIC}),
                "wye",
                "ansi",
                *[float(r[k]) for k in NUMERIC],
                None,
                None,
                None,
                None,
                None,
                None,
            )
        )
    cols = (
        (
            "id",
            "reading_id",
            "version",
            "supersedes",
            "board_id",
            "round_id",
            "taken_at",
            "technician",
            "instrument",
            "note",
            "void",
            "reason",
            "recorded_at",
            "recorded_by",
            "inputs_json",
            "system",
            "standard",
        )
        + NUMERIC
        + ("vab", "vbc", "vca", "vab_deg", "vbc_deg", "vca_deg")
    )
    conn = sqlite3.connect(db_path, isolation_level=None)
    t = time.perf_counter()
    conn.execute("BEGIN IMMEDIATE")
    conn.executemany(f"INSERT INTO reading ({', '.join(cols)}) VALUES ({', '.join('?' * len(cols))})", rows)
    conn.execute("COMMIT")
    print(f"{time.perf_counter() - t:.4f}")


def bare_dump(db_path, dst):
    """A bare sqlite3 + csv dump of the stored reading rows (no analysis)."""
    import csv
    import sqlite3

    conn = sqlite3.connect(db_path)
    cur = conn.execute("SELECT * FROM reading")
    with open(dst, "w", newline="") as g:
        w = csv.writer(g)
        w.writerow([c[0] for c in cur.description])
        while True:
            rows = cur.fetchmany(10_000)
            if not rows:
                break
            w.writerows(rows)


RUNNABLE = {
    "plain": plain_script,
    "floor-csv": io_floor_csv_module,
    "floor-fieldpad": io_floor_fieldpad,
    "bare-insert": bare_insert,
    "bare-dump": bare_dump,
}


# ---- the data (a scenario of our own: a 480Y/277 V plant, readings a few percent off balance) ------------------


def write_inputs(path: Path, n: int, *, meta: bool, form: str = "csv", seed: int = 1):
    rng = random.Random(seed)
    with open(path, "w") as f:
        if form == "json":
            f.write("[")
        elif meta:
            f.write("site,board,taken_at,technician,system," + ",".join(NUMERIC) + "\n")
        else:
            f.write("system," + ",".join(NUMERIC) + "\n")
        for k in range(n):
            v = (f"{277 + rng.random() * 4 - 2:.2f}", f"{277 - rng.random() * 4:.2f}", f"{276 + rng.random() * 3:.2f}")
            d = ("0", f"{-120 + rng.random() * 2 - 1:.2f}", f"{120 + rng.random() * 2 - 1:.2f}")
            i = (f"{100 + rng.random() * 30:.1f}", f"{95 + rng.random() * 30:.1f}", f"{90 + rng.random() * 30:.1f}")
            di = (
                f"{-30 + rng.random() * 20 - 10:.1f}",
                f"{-150 + rng.random() * 20 - 10:.1f}",
                f"{90 + rng.random() * 20 - 10:.1f}",
            )
            vals = ("480",) + v + d + i + di + (f"{rng.random() * 40:.1f}",)
            if form == "json":
                rec = ",".join(f'"{name}":{x}' for name, x in zip(NUMERIC, vals))
                f.write(("," if k else "") + "\n{" + rec + "}")
                continue
            if meta:
                day, sec = divmod(k, 36_000)
                taken = (
                    f"2026-{1 + day // 28 % 12:02d}-{1 + day % 28:02d}T{8 + sec // 3600 % 10:02d}:"
                    f"{sec // 60 % 60:02d}:{sec % 60:02d}Z"
                )
                f.write(f"Bench Works,B{k % 500:03d},{taken},tech {k % 3},wye,")
            else:
                f.write("wye,")
            f.write(",".join(vals) + "\n")
        if form == "json":
            f.write("\n]\n")


# ---- running and measuring ----------------------------------------------------------------------------------


def child(args) -> str:
    """The standard output of a child process (which must succeed)."""
    p = subprocess.run(args, capture_output=True)
    if p.returncode:
        raise SystemExit(f"{' '.join(map(str, args[:5]))} failed ({p.returncode}): {p.stderr.decode()[-2000:]}")
    return p.stdout.decode()


def fp(*args):
    return [PY, "-m", "fieldpad", *map(str, args)]


def run_self(name, *args):
    return [PY, str(Path(__file__)), "--run", name, *map(str, args)]


def measure(args, stdout_path=None, repeat=1):
    """Best wall time of ``repeat`` runs and the peak memory of the first (each in a fresh child)."""
    best, peak = None, None
    for _ in range(repeat):
        if stdout_path:
            with open(stdout_path, "wb") as out:
                wall, mb = _waited(args, out)
        else:
            wall, mb = _waited(args, subprocess.DEVNULL)
        best = wall if best is None else min(best, wall)
        peak = mb if peak is None else peak
    return best, peak


def _waited(args, out):
    t = time.perf_counter()
    p = subprocess.Popen(args, stdout=out, stderr=subprocess.PIPE)
    err = p.stderr.read()
    _pid, status, usage = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t
    code = os.waitstatus_to_exitcode(status)
    if code:
        raise SystemExit(f"{' '.join(map(str, args[:5]))} failed ({code}): {err.decode()[-2000:]}")
    return wall, usage.ru_maxrss / 1024


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--small", type=int)
    ap.add_argument("--large", type=int)
    ap.add_argument("--no-core", action="store_true")
    ap.add_argument("--repeat", type=int, default=2)
    ap.add_argument("--run", nargs="+")
    a = ap.parse_args()
    if a.run:
        return RUNNABLE[a.run[0]](*a.run[1:])
    small = a.small or (20_000 if a.quick else 200_000)
    large = a.large or (100_000 if a.quick else 1_000_000)
    rep = a.repeat
    print(
        f"readings: small {small:,}, large {large:,}; CPUs: {len(os.sched_getaffinity(0))}; "
        f"load average {os.getloadavg()[0]:.1f}",
        flush=True,
    )
    with tempfile.TemporaryDirectory() as d:
        d = Path(d)
        src = d / "small.csv"
        write_inputs(src, small, meta=False)
        print(f"\n== compute, {small:,} readings, CSV -> CSV ({src.stat().st_size / 1e6:.0f} MB in)", flush=True)
        t_fp, m_fp = measure(fp("compute", "--format", "csv", src), d / "out.csv", rep)
        out_mb = (d / "out.csv").stat().st_size / 1e6
        t_plain, _ = measure(run_self("plain", src, d / "plain.csv"), None, 1)
        t_floor, _ = measure(run_self("floor-csv", src, d / "floor.csv"), None, rep)
        t_floor_fp, _ = measure(run_self("floor-fieldpad", src, d / "floor2.csv"), None, rep)
        print(f"fieldpad compute: {t_fp:.2f} s, peak {m_fp:.0f} MB, {out_mb:.0f} MB out")
        print(
            f"plain per-reading script (csv + cmath): {t_plain:.2f} s   -> ratio {t_fp / t_plain:.2f}x (target <= 0.1x)"
        )
        print(
            f"read into columns + write the result's shape, csv module: {t_floor:.2f} s   -> ratio "
            f"{t_fp / t_floor:.2f}x (target <= 2x)"
        )
        print(
            f"read into columns + write the result's shape, fieldpad's reader and writer: {t_floor_fp:.2f} s"
            f"   -> ratio {t_fp / t_floor_fp:.2f}x",
            flush=True,
        )
        t_json, m_json = measure(fp("compute", "--format", "json", src), d / "out.json", rep)
        print(
            f"fieldpad compute, CSV -> JSON: {t_json:.2f} s, peak {m_json:.0f} MB   -> JSON/CSV output "
            f"{t_json / t_fp:.2f}x (target <= 3x)",
            flush=True,
        )

        big = d / "large.csv"
        write_inputs(big, large, meta=False)
        print(f"\n== compute, {large:,} readings ({big.stat().st_size / 1e6:.0f} MB CSV)", flush=True)
        t, m = measure(fp("compute", "--format", "csv", big))
        print(f"CSV -> CSV: {t:.2f} s, peak {m:.0f} MB (target <= 400 MB)", flush=True)
        big.unlink()
        bigj = d / "large.json"
        write_inputs(bigj, large, meta=False, form="json")
        t, m = measure(fp("compute", "--format", "json", bigj))
        print(
            f"JSON -> JSON ({bigj.stat().st_size / 1e6:.0f} MB in): {t:.2f} s, peak {m:.0f} MB (target <= 400 MB)",
            flush=True,
        )
        bigj.unlink()

        imp = d / "import.csv"
        write_inputs(imp, large, meta=True)
        print(f"\n== import, {large:,} readings ({imp.stat().st_size / 1e6:.0f} MB CSV)", flush=True)
        t_imp, m_imp = measure(fp("import", imp, "--db", d / "fp.db"))
        bare_out = child(run_self("bare-insert", imp, d / "bare.db"))
        t_bare = float(bare_out.strip().splitlines()[-1])
        print(f"fieldpad import: {t_imp:.2f} s, peak {m_imp:.0f} MB (target <= 400 MB)")
        print(
            f"bare sqlite3 executemany of the same rows, same schema: {t_bare:.2f} s   -> ratio "
            f"{t_imp / t_bare:.2f}x (target <= 3x)",
            flush=True,
        )
        (d / "bare.db").unlink()
        imp.unlink()

        print(f"\n== export --format csv, {large:,} readings with results and findings", flush=True)
        t_exp, m_exp = measure(fp("export", "--db", d / "fp.db", "--format", "csv", "-o", d / "export.csv"))
        t_dump, _ = measure(run_self("bare-dump", d / "fp.db", d / "dump.csv"))
        print(
            f"fieldpad export: {t_exp:.2f} s, peak {m_exp:.0f} MB, {(d / 'export.csv').stat().st_size / 1e6:.0f} MB out"
        )
        print(
            f"bare sqlite3 + csv dump of the same reading rows: {t_dump:.2f} s   -> ratio "
            f"{t_exp / t_dump:.2f}x (target <= 2x)",
            flush=True,
        )
    if not a.no_core:
        print("\n== core (bench_core.py)", flush=True)
        subprocess.run([PY, str(HERE / "bench_core.py"), str(large)], check=True)


if __name__ == "__main__":
    sys.exit(main())
