"""Benchmark of ``fieldpad merge`` (not part of the test run).

Builds another laptop's database of N readings (default 100,000) over 500 boards, then prints, each beside
its baseline measured in the same run on the same files:
* the first merge into a new database (every incoming row checked, settings recomputed), beside a bare
  SQLite copy of the same tables (ATTACH read-only, INSERT OR IGNORE, nothing checked);
* the same file merged again (nothing new: integrity check and same-id comparison), beside the bare copy
  again.
No target: the figures say what the checks cost.

Usage: python tests/bench/bench_merge.py [N]
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).parent))
from bench_storage import build  # noqa: E402

from fieldpad.storage.access import read_only_uri  # noqa: E402
from fieldpad.storage.db import open_db  # noqa: E402
from fieldpad.storage.merge import merge_file  # noqa: E402

TABLES = ("site", "board", "round", "setting_version", "id_join", "reading", "version_parent")


def bare_copy(db, other: Path) -> None:
    conn = db.conn
    conn.execute("ATTACH DATABASE ? AS other", [read_only_uri(other, immutable=True)])
    try:
        conn.execute("BEGIN IMMEDIATE")
        for t in TABLES:
            conn.execute(f"INSERT OR IGNORE INTO main.{t} SELECT * FROM other.{t}")
        conn.execute("COMMIT")
    finally:
        conn.execute("DETACH DATABASE other")


def timed(fn) -> float:
    t = time.perf_counter()
    fn()
    return time.perf_counter() - t


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    with tempfile.TemporaryDirectory() as d:
        src = Path(d) / "other.db"
        build(src, n)
        checked, bare = open_db(Path(d) / "checked.db"), open_db(Path(d) / "bare.db")
        first = timed(lambda: merge_file(checked, src))
        first_bare = timed(lambda: bare_copy(bare, src))
        print(
            f"first merge of {n:,} readings: checked {first:.1f} s, bare SQLite copy {first_bare:.1f} s "
            f"({first / first_bare:.1f}x)"
        )
        again = timed(lambda: merge_file(checked, src))
        again_bare = timed(lambda: bare_copy(bare, src))
        print(
            f"the same file again (nothing new): checked {again:.2f} s, bare SQLite copy {again_bare:.2f} s "
            f"({again / again_bare:.1f}x)"
        )
        print(f"readings in each afterwards: checked {checked['reading'].count:,}, bare {bare['reading'].count:,}")


if __name__ == "__main__":
    main()
