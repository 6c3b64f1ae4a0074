"""Crash safety and concurrent writers, with real processes and a real file.

The robustness run (tests/robustness/run.py) does the same at larger counts.
"""
import os
import random
import signal
import subprocess
import sys
import time
from pathlib import Path

from fieldpad.storage import repo
from fieldpad.storage.db import check, open_db

WRITER = str(Path(__file__).parent / "robustness" / "writer.py")


def _setup(path):
    db = open_db(path)
    sid = repo.create_site(db, "Crash Yard")
    bid = repo.create_board(db, sid, "DB-1")
    db.close()
    return bid


def kill_test(path, board, kills, rng):
    """Start a writer, SIGKILL it at a random moment, repeat; return (reported, lost, integrity problems)."""
    reported = set()
    for _ in range(kills):
        p = subprocess.Popen([sys.executable, WRITER, str(path), board, "100000"], stdout=subprocess.PIPE,
                             text=True)
        time.sleep(rng.uniform(0.3, 1.2))
        p.send_signal(signal.SIGKILL)
        out, _ = p.communicate()
        reported |= {line for line in out.splitlines() if line and not line.startswith("error")}
    db = open_db(path)
    stored = {r["reading_id"] for r in db.query("SELECT reading_id FROM reading")}
    problems = check(db)
    db.close()
    return reported, reported - stored, problems


def test_sigkill_loses_no_committed_reading(tmp_path):
    path = tmp_path / "crash.db"
    board = _setup(path)
    reported, lost, problems = kill_test(path, board, kills=3, rng=random.Random(11))
    assert len(reported) > 0
    assert lost == set()
    assert problems == []


def test_two_writers_at_once(tmp_path):
    path = tmp_path / "busy.db"
    board = _setup(path)
    procs = [subprocess.Popen([sys.executable, WRITER, str(path), board, "150"], stdout=subprocess.PIPE, text=True)
             for _ in range(2)]
    outs = [p.communicate(timeout=120)[0] for p in procs]
    lines = [line for out in outs for line in out.splitlines()]
    errors = [line for line in lines if line.startswith("error")]
    assert errors == []
    db = open_db(path)
    assert db["reading"].count == 300 == len(set(lines))
    db.close()
