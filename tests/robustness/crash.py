"""Kill a writer process at random moments and count what was lost (used by the tests and the run)."""

from __future__ import annotations

import signal
import subprocess
import sys
import time
from pathlib import Path

from fieldpad.storage import sites
from fieldpad.storage.db import check, open_db

WRITER = str(Path(__file__).parent / "writer.py")


def setup(path) -> str:
    db = open_db(path)
    sid = sites.create_site(db, "Crash Yard")
    bid = sites.create_board(db, sid, "DB-1")
    db.close()
    return bid


def kill_test(path, board, kills, rng):
    """Start a writer, SIGKILL it at a random moment, repeat.

    Returns (ids reported committed, ids lost, integrity problems).
    """
    reported = set()
    for _ in range(kills):
        p = subprocess.Popen([sys.executable, WRITER, str(path), board, "100000"], stdout=subprocess.PIPE, text=True)
        first = p.stdout.readline()  # the writer is in its saving loop: now kill it at a random moment
        time.sleep(rng.uniform(0.0, 0.8))
        p.send_signal(signal.SIGKILL)
        out, _ = p.communicate()
        reported |= {line for line in (first + out).splitlines() if line and not line.startswith("error")}
    db = open_db(path)
    stored = {r["reading_id"] for r in db.query("SELECT reading_id FROM reading")}
    problems = check(db)
    db.close()
    return reported, reported - stored, problems
